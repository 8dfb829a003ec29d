package wfdb

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"tracelift/ecg"
)

// Limits that protect the reader from absurd headers.
const (
	maxSignals    = 4096
	maxHeaderSize = 1 << 20 // bytes
	defaultGain   = 200     // ADC units per mV when the header gives 0 or nothing
	defaultFs     = 250     // Hz when the record line gives none
)

// SignalSpec is one signal line of a header.
type SignalSpec struct {
	File            string  // signal file name, relative to the header's folder
	Format          int     // storage format: 16, 212, 8…
	SamplesPerFrame int     // 1 unless the header says otherwise
	Skew            int     // frames by which the signal is delayed
	ByteOffset      int64   // bytes to skip at the start of File
	Gain            float64 // ADC units per physical unit (never 0 after parsing)
	Uncalibrated    bool    // the header gave gain 0 or none; Gain is then 200
	Baseline        int     // ADC value of 0 physical units
	Units           string  // physical units, "mV" by default
	ADCRes          int     // ADC resolution in bits (0 when unknown)
	ADCZero         int     // ADC value at the middle of the input range
	InitVal         int     // first sample, as given in the header
	HasInitVal      bool    // the header gave an initial value
	Checksum        int     // 16-bit signed sum of all samples, as given
	HasChecksum     bool    // the header gave a checksum
	BlockSize       int     // block size in bytes (0 for ordinary files)
	Description     string  // signal description, usually the lead name
}

// Physical converts a digital sample to physical units (NaN for the
// format's invalid value).
func (s *SignalSpec) Physical(d int) float64 {
	if d == invalidValue(s.Format) {
		return math.NaN()
	}
	return float64(d-s.Baseline) / s.Gain
}

// Header is a parsed WFDB header.
type Header struct {
	Name        string
	Fs          float64 // sampling frequency, frames per second (Hz)
	CounterFreq float64 // counter frequency (Hz); equals Fs when not given
	BaseCounter float64
	NSamp       int64     // samples per signal; 0 when the header does not say
	BaseTime    string    // as written (HH:MM:SS), empty if absent
	BaseDate    string    // as written (DD/MM/YYYY), empty if absent
	Start       time.Time // BaseDate + BaseTime when both parse; zero otherwise
	Signals     []SignalSpec
	Comments    []string // comment lines without the leading '#'
	// Warnings lists checks that failed without stopping the reader, such
	// as initial-value or checksum mismatches found by ReadRecord.
	Warnings []string
}

// ReadHeader reads and parses a WFDB header file.
func ReadHeader(heaPath string) (*Header, error) {
	f, err := os.Open(heaPath)
	if err != nil {
		return nil, fmt.Errorf("wfdb: %w: %w", ecg.ErrUnreadable, err)
	}
	defer f.Close()
	h, err := ParseHeader(f)
	if err != nil {
		return nil, fmt.Errorf("wfdb: %s: %w", heaPath, err)
	}
	return h, nil
}

// ParseHeader parses header text. Errors wrap ecg.ErrUnreadable and name
// the offending line; callers add the file name.
func ParseHeader(r io.Reader) (*Header, error) {
	data, err := io.ReadAll(io.LimitReader(r, maxHeaderSize+1))
	if err != nil {
		return nil, fmt.Errorf("read header: %w: %w", ecg.ErrUnreadable, err)
	}
	if len(data) > maxHeaderSize {
		return nil, fmt.Errorf("header larger than %d bytes: %w", maxHeaderSize, ecg.ErrUnreadable)
	}
	sc := bufio.NewScanner(bytes.NewReader(data))
	sc.Buffer(make([]byte, 0, 4096), maxHeaderSize)
	h := &Header{}
	nsig := -1
	ln := 0
	for sc.Scan() {
		ln++
		line := strings.TrimRight(sc.Text(), "\r")
		t := strings.TrimSpace(line)
		if t == "" {
			continue
		}
		if t[0] == '#' {
			h.Comments = append(h.Comments, strings.TrimPrefix(t, "#"))
			continue
		}
		if nsig < 0 {
			if nsig, err = h.parseRecordLine(t); err != nil {
				return nil, fmt.Errorf("line %d: %w", ln, err)
			}
			continue
		}
		if len(h.Signals) >= nsig {
			// Info strings after the signal lines are not allowed unless
			// commented; tolerate them as comments.
			h.Comments = append(h.Comments, t)
			continue
		}
		s, err := parseSignalLine(t)
		if err != nil {
			return nil, fmt.Errorf("line %d: %w", ln, err)
		}
		h.Signals = append(h.Signals, s)
	}
	if nsig < 0 {
		return nil, fmt.Errorf("no record line: %w", ecg.ErrUnreadable)
	}
	if len(h.Signals) < nsig {
		return nil, fmt.Errorf("record line announces %d signals but %d signal lines follow: %w", nsig, len(h.Signals), ecg.ErrUnreadable)
	}
	return h, nil
}

func (h *Header) parseRecordLine(t string) (int, error) {
	f := strings.Fields(t)
	if len(f) < 2 {
		return 0, fmt.Errorf("record line %q needs a name and a signal count: %w", t, ecg.ErrUnreadable)
	}
	if strings.Contains(f[0], "/") {
		return 0, fmt.Errorf("multi-segment record %q is not supported: %w", f[0], ecg.ErrUnreadable)
	}
	h.Name = f[0]
	nsig, err := strconv.Atoi(f[1])
	if err != nil || nsig < 0 || nsig > maxSignals {
		return 0, fmt.Errorf("bad signal count %q: %w", f[1], ecg.ErrUnreadable)
	}
	h.Fs = defaultFs
	if len(f) > 2 {
		fs := f[2]
		cf := ""
		if i := strings.IndexByte(fs, '/'); i >= 0 {
			fs, cf = fs[:i], fs[i+1:]
		}
		v, err := strconv.ParseFloat(fs, 64)
		if err != nil || !(v > 0) || math.IsInf(v, 0) {
			return 0, fmt.Errorf("bad sampling frequency %q: %w", f[2], ecg.ErrUnreadable)
		}
		h.Fs = v
		if cf != "" {
			base := ""
			if i := strings.IndexByte(cf, '('); i >= 0 {
				if !strings.HasSuffix(cf, ")") {
					return 0, fmt.Errorf("bad counter frequency %q: %w", f[2], ecg.ErrUnreadable)
				}
				cf, base = cf[:i], cf[i+1:len(cf)-1]
			}
			c, err := strconv.ParseFloat(cf, 64)
			if err != nil || !(c > 0) || math.IsInf(c, 0) {
				return 0, fmt.Errorf("bad counter frequency %q: %w", f[2], ecg.ErrUnreadable)
			}
			h.CounterFreq = c
			if base != "" {
				b, err := strconv.ParseFloat(base, 64)
				if err != nil {
					return 0, fmt.Errorf("bad base counter %q: %w", f[2], ecg.ErrUnreadable)
				}
				h.BaseCounter = b
			}
		}
	}
	if h.CounterFreq == 0 {
		h.CounterFreq = h.Fs
	}
	if len(f) > 3 {
		n, err := strconv.ParseInt(f[3], 10, 64)
		if err != nil || n < 0 {
			return 0, fmt.Errorf("bad sample count %q: %w", f[3], ecg.ErrUnreadable)
		}
		h.NSamp = n
	}
	if len(f) > 4 {
		h.BaseTime = f[4]
	}
	if len(f) > 5 {
		h.BaseDate = f[5]
	}
	if h.BaseTime != "" && h.BaseDate != "" {
		if tm, err := time.Parse("15:04:05 02/01/2006", h.BaseTime+" "+h.BaseDate); err == nil {
			h.Start = tm
		} else if tm, err := time.Parse("15:04:05.999 02/01/2006", h.BaseTime+" "+h.BaseDate); err == nil {
			h.Start = tm
		}
	}
	return nsig, nil
}

// parseSignalLine parses
// "file format[xspf][:skew][+offset] gain[(baseline)][/units] adcres adczero initval checksum blocksize description".
func parseSignalLine(t string) (SignalSpec, error) {
	var s SignalSpec
	f := strings.Fields(t)
	if len(f) < 2 {
		return s, fmt.Errorf("signal line %q needs a file name and a format: %w", t, ecg.ErrUnreadable)
	}
	s.File = f[0]
	if s.File == "-" || strings.ContainsAny(s.File, `/\`) && filepath.IsAbs(s.File) {
		return s, fmt.Errorf("unsupported signal file %q: %w", s.File, ecg.ErrUnreadable)
	}
	if err := parseFormat(f[1], &s); err != nil {
		return s, err
	}
	s.Gain = 0
	s.Units = "mV"
	s.ADCRes = defaultADCRes(s.Format)
	baselineSet := false
	if len(f) > 2 {
		g := f[2]
		if i := strings.IndexByte(g, '/'); i >= 0 {
			s.Units = g[i+1:]
			g = g[:i]
		}
		if i := strings.IndexByte(g, '('); i >= 0 {
			if !strings.HasSuffix(g, ")") {
				return s, fmt.Errorf("bad gain %q: %w", f[2], ecg.ErrUnreadable)
			}
			b, err := strconv.Atoi(g[i+1 : len(g)-1])
			if err != nil {
				return s, fmt.Errorf("bad baseline in %q: %w", f[2], ecg.ErrUnreadable)
			}
			s.Baseline, baselineSet = b, true
			g = g[:i]
		}
		v, err := strconv.ParseFloat(g, 64)
		if err != nil || v < 0 || math.IsInf(v, 0) || math.IsNaN(v) {
			return s, fmt.Errorf("bad gain %q: %w", f[2], ecg.ErrUnreadable)
		}
		s.Gain = v
	}
	if s.Gain == 0 {
		s.Gain, s.Uncalibrated = defaultGain, true
	}
	ints := []*int{&s.ADCRes, &s.ADCZero, &s.InitVal, &s.Checksum, &s.BlockSize}
	names := []string{"ADC resolution", "ADC zero", "initial value", "checksum", "block size"}
	i := 3
	for k := 0; k < len(ints) && i < len(f); k, i = k+1, i+1 {
		v, err := strconv.Atoi(f[i])
		if err != nil {
			return s, fmt.Errorf("bad %s %q: %w", names[k], f[i], ecg.ErrUnreadable)
		}
		*ints[k] = v
		switch k {
		case 2:
			s.HasInitVal = true
		case 3:
			s.HasChecksum = true
		}
	}
	if s.ADCRes == 0 {
		s.ADCRes = defaultADCRes(s.Format)
	}
	if !baselineSet {
		s.Baseline = s.ADCZero
	}
	if i < len(f) {
		// The description is the rest of the line, spaces included.
		rest := t
		for k := 0; k < i; k++ {
			rest = strings.TrimLeft(rest, " \t")
			rest = rest[len(f[k]):]
		}
		s.Description = strings.TrimSpace(rest)
	}
	return s, nil
}

func parseFormat(t string, s *SignalSpec) error {
	s.SamplesPerFrame = 1
	body := t
	cut := func(sep byte) string {
		if i := strings.IndexByte(body, sep); i >= 0 {
			v := body[i+1:]
			body = body[:i]
			return v
		}
		return ""
	}
	off := cut('+')
	skew := cut(':')
	spf := cut('x')
	var err error
	if s.Format, err = strconv.Atoi(body); err != nil {
		return fmt.Errorf("bad format %q: %w", t, ecg.ErrUnreadable)
	}
	if spf != "" {
		if s.SamplesPerFrame, err = strconv.Atoi(spf); err != nil || s.SamplesPerFrame < 1 {
			return fmt.Errorf("bad samples per frame in %q: %w", t, ecg.ErrUnreadable)
		}
	}
	if skew != "" {
		if s.Skew, err = strconv.Atoi(skew); err != nil || s.Skew < 0 {
			return fmt.Errorf("bad skew in %q: %w", t, ecg.ErrUnreadable)
		}
	}
	if off != "" {
		if s.ByteOffset, err = strconv.ParseInt(off, 10, 64); err != nil || s.ByteOffset < 0 {
			return fmt.Errorf("bad byte offset in %q: %w", t, ecg.ErrUnreadable)
		}
	}
	if !supportedFormat(s.Format) {
		return fmt.Errorf("signal format %d is not supported (supported: 16, 212, 61, 80, 160, 24, 32): %w", s.Format, ecg.ErrUnreadable)
	}
	if s.SamplesPerFrame != 1 {
		return fmt.Errorf("%d samples per frame is not supported: %w", s.SamplesPerFrame, ecg.ErrUnreadable)
	}
	return nil
}

// Lead returns the ECG lead named by the signal's description, or
// ecg.LeadUnknown.
func (s *SignalSpec) Lead() ecg.Lead {
	l, err := ecg.ParseLead(s.Description)
	if err != nil {
		return ecg.LeadUnknown
	}
	return l
}
