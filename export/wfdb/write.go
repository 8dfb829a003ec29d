package wfdb

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"unicode/utf8"

	"tracelift/ecg"
	"tracelift/export/internal/frames"
	"tracelift/internal/atomicfile"
)

// Caution is written as a header comment of every record tracelift writes.
const Caution = "Digitised from a paper tracing; values can be wrong and are never a diagnosis. Verify against the original tracing; clinical decisions rest with qualified clinicians under local rules and licensed practice."

// WriteOptions controls WriteRecord. A nil *WriteOptions means defaults.
type WriteOptions struct {
	// Format is 16 (default) or 212.
	Format int
	// Gain, in ADC units per mV, applied to every signal. 0 chooses per
	// signal the largest of 1, 2 and 5 × 10^k that keeps the signal's range
	// inside the format's digital range (see ChooseGain).
	Gain float64
	// Leads fixes the signal order; nil writes the record's leads in
	// conventional order.
	Leads []ecg.Lead
	// Comments are extra header comment lines (without '#').
	Comments []string
}

// recordName accepts WFDB record names: letters, digits and underscores.
var recordName = regexp.MustCompile(`^[A-Za-z0-9_]+$`)

// digitalRange returns the usable digital range of a format, leaving out
// the invalid value.
func digitalRange(format int) (lo, hi int) {
	switch format {
	case 212:
		return -2047, 2047
	}
	return -32767, 32767
}

// ChooseGain returns a gain (ADC units per mV) and baseline for samples
// (mV, NaN ignored) in the given format: the largest gain of the form
// {1, 2, 5} × 10^k (0.001 ≤ gain ≤ 10^6) for which the samples, centred on
// the baseline, fit the format's range. The quantisation step is 1/gain mV,
// so the error of a written sample is at most 1/(2·gain) mV: 0.5 µV at
// 1000 adu/mV. In format 16 a ±16 mV signal gets 2000 adu/mV (0.25 µV);
// in format 212 a 4 mV span gets 1000 adu/mV (0.5 µV) and a 10 mV span
// 200 adu/mV (2.5 µV).
func ChooseGain(samples []float64, format int) (gain float64, baseline int) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range samples {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	dlo, dhi := digitalRange(format)
	if lo > hi {
		return 1000, 0
	}
	mid := (lo + hi) / 2
	for e := 6; e >= -3; e-- {
		for _, m := range []float64{5, 2, 1} {
			g := m * math.Pow(10, float64(e))
			b := -int(math.Round(mid * g))
			if float64(b)+math.Round(lo*g) >= float64(dlo) && float64(b)+math.Round(hi*g) <= float64(dhi) {
				return g, b
			}
		}
	}
	return 0.001, 0
}

// WriteRecord writes rec as WFDB record name in dir: name.hea and name.dat
// (and nothing else; use WriteAnnotationsFile for annotations). Every
// signal is put on one grid at the record's highest sample rate (see
// frames.Align); moments where a lead was not recorded are written as the
// format's invalid value. Both files are written atomically. It returns
// the header it wrote.
func WriteRecord(dir, name string, rec ecg.Record, opt *WriteOptions) (*Header, error) {
	var o WriteOptions
	if opt != nil {
		o = *opt
	}
	if o.Format == 0 {
		o.Format = 16
	}
	if o.Format != 16 && o.Format != 212 {
		return nil, fmt.Errorf("wfdb: write %s: format %d is not writable (16 or 212): %w", name, o.Format, ecg.ErrOutput)
	}
	if !recordName.MatchString(name) {
		return nil, fmt.Errorf("wfdb: write: record name %q must hold only letters, digits and '_': %w", name, ecg.ErrOutput)
	}
	g, err := frames.Align(&rec, o.Leads, 500)
	if err != nil {
		return nil, fmt.Errorf("wfdb: write %s: %w", name, err)
	}
	if len(g.Leads) == 0 {
		return nil, fmt.Errorf("wfdb: write %s: record has no signals: %w", name, ecg.ErrOutput)
	}
	h := &Header{Name: name, Fs: g.Fs, CounterFreq: g.Fs, NSamp: int64(g.N), Start: rec.Meta.Acquired}
	h.BaseTime, h.BaseDate = startTime(rec.Meta.Acquired)
	if rec.Meta.Source != "" {
		h.Comments = append(h.Comments, " source: "+oneLine(rec.Meta.Source))
	}
	h.Comments = append(h.Comments, " "+Caution)
	for _, c := range o.Comments {
		h.Comments = append(h.Comments, " "+oneLine(c))
	}
	dig := make([][]int, len(g.Leads))
	dlo, dhi := digitalRange(o.Format)
	inv := invalidValue(o.Format)
	for j, l := range g.Leads {
		gain, base := o.Gain, 0
		if gain == 0 {
			gain, base = ChooseGain(g.Cols[j], o.Format)
		}
		// ADC zero = baseline, so readers that ignore the bracketed
		// baseline (biosig, see the data README) still get the offset.
		s := SignalSpec{File: name + ".dat", Format: o.Format, SamplesPerFrame: 1, Gain: gain, Baseline: base, ADCZero: base,
			Units: "mV", ADCRes: defaultADCRes(o.Format), HasInitVal: true, HasChecksum: true, Description: l.String()}
		d := make([]int, g.N)
		var sum int16
		for k, v := range g.Cols[j] {
			if math.IsNaN(v) {
				d[k] = inv
			} else {
				x := math.Round(v*gain) + float64(base)
				if x < float64(dlo) || x > float64(dhi) {
					return nil, fmt.Errorf("wfdb: write %s: lead %v sample %d (%g mV) does not fit format %d at gain %g: %w", name, l, k, v, o.Format, gain, ecg.ErrOutput)
				}
				d[k] = int(x)
			}
			sum += int16(d[k])
		}
		if g.N > 0 {
			s.InitVal = d[0]
		}
		s.Checksum = int(sum)
		dig[j] = d
		h.Signals = append(h.Signals, s)
	}
	err = atomicfile.WriteAll(
		atomicfile.Part{Path: filepath.Join(dir, name+".dat"), Write: func(w io.Writer) error { return EncodeSignals(w, o.Format, dig) }},
		atomicfile.Part{Path: filepath.Join(dir, name+".hea"), Write: func(w io.Writer) error { return EncodeHeader(w, h) }},
	)
	if err != nil {
		return nil, fmt.Errorf("wfdb: %w", err)
	}
	return h, nil
}

func oneLine(s string) string { return strings.Join(strings.Fields(s), " ") }

// EncodeHeader writes h in header(5) syntax.
func EncodeHeader(w io.Writer, h *Header) error {
	var b bytes.Buffer
	fmt.Fprintf(&b, "%s %d %s %d", h.Name, len(h.Signals), strconv.FormatFloat(h.Fs, 'f', -1, 64), h.NSamp)
	if h.BaseTime != "" {
		fmt.Fprintf(&b, " %s", h.BaseTime)
		if h.BaseDate != "" {
			fmt.Fprintf(&b, " %s", h.BaseDate)
		}
	}
	b.WriteByte('\n')
	for _, s := range h.Signals {
		fmt.Fprintf(&b, "%s %d %s(%d)/%s %d %d %d %d %d %s\n", s.File, s.Format,
			strconv.FormatFloat(s.Gain, 'f', -1, 64), s.Baseline, s.Units, s.ADCRes, s.ADCZero,
			s.InitVal, s.Checksum, s.BlockSize, s.Description)
	}
	for _, c := range h.Comments {
		// header(5): lines of at most 255 characters.
		if len(c) > 254 {
			c = c[:254]
			for !utf8.ValidString(c) {
				c = c[:len(c)-1]
			}
		}
		fmt.Fprintf(&b, "#%s\n", c)
	}
	_, err := w.Write(b.Bytes())
	return err
}

// EncodeSignals writes digital samples (one slice per signal, equal
// lengths) interleaved frame by frame in format 16 or 212. Values must fit
// the format (12-bit two's complement for 212).
func EncodeSignals(w io.Writer, format int, dig [][]int) error {
	if len(dig) == 0 {
		return nil
	}
	n := len(dig[0])
	ns := len(dig)
	const chunkFrames = 4096
	buf := make([]byte, 0, chunkFrames*ns*2+3)
	var pending int // format 212: a sample waiting for its pair
	havePending := false
	for k0 := 0; k0 < n; k0 += chunkFrames {
		buf = buf[:0]
		for k := k0; k < min(n, k0+chunkFrames); k++ {
			for j := 0; j < ns; j++ {
				v := dig[j][k]
				switch format {
				case 16:
					buf = append(buf, byte(v), byte(v>>8))
				case 212:
					if !havePending {
						pending, havePending = v, true
						continue
					}
					buf = append(buf, byte(pending), byte((pending>>8)&0x0F)|byte((v>>8)&0x0F)<<4, byte(v))
					havePending = false
				default:
					return fmt.Errorf("wfdb: format %d is not writable: %w", format, ecg.ErrOutput)
				}
			}
		}
		if k0+chunkFrames >= n && havePending {
			buf = append(buf, byte(pending), byte((pending>>8)&0x0F))
		}
		if _, err := w.Write(buf); err != nil {
			return err
		}
	}
	return nil
}

// WriteAnnotationsFile writes annotations to path atomically.
func WriteAnnotationsFile(path string, anns []Annotation) error {
	err := atomicfile.WriteFile(path, func(w io.Writer) error { return EncodeAnnotations(w, anns) })
	if err != nil {
		return fmt.Errorf("wfdb: %w", err)
	}
	return nil
}
