package edf

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"tracelift/ecg"
)

// Limits for untrusted files.
const (
	maxSignals   = 1024
	maxFileBytes = 2 << 30
	maxSamples   = 1_000_000_000 // samples of one signal
)

// SignalHeader is one signal's header fields.
type SignalHeader struct {
	Label            string
	Transducer       string
	Dimension        string
	PhysMin          float64
	PhysMax          float64
	DigMin           int
	DigMax           int
	Prefilter        string
	SamplesPerRecord int
}

// IsAnnotations reports whether the signal is an EDF+ annotation signal.
func (s *SignalHeader) IsAnnotations() bool { return s.Label == "EDF Annotations" }

// Header is a parsed EDF/EDF+ header.
type Header struct {
	Version        string
	Patient        string // local patient identification (80 bytes, trimmed)
	Recording      string // local recording identification
	StartDate      string // dd.mm.yy as written
	StartTime      string // hh.mm.ss as written
	Start          time.Time
	HeaderBytes    int
	Reserved       string // "EDF+C", "EDF+D" or empty for plain EDF
	NumRecords     int
	RecordDuration float64 // s
	Signals        []SignalHeader
}

// Plus reports whether the file is EDF+.
func (h *Header) Plus() bool { return strings.HasPrefix(h.Reserved, "EDF+") }

// File is a decoded EDF/EDF+ file.
type File struct {
	Header Header
	// Physical holds each ordinary signal's samples in its physical unit
	// (NaN for digital values outside the declared range and, in EDF+D,
	// for time between records), indexed like Header.Signals (nil for
	// annotation signals).
	Physical    [][]float64
	Annotations []Annotation // time-keeping TALs excluded
}

func bad(format string, a ...any) error {
	return fmt.Errorf(format+": %w", append(a, ecg.ErrUnreadable)...)
}

// Decode parses a whole EDF or EDF+ file held in b. Errors wrap
// ecg.ErrUnreadable.
func Decode(b []byte) (*File, error) {
	if len(b) < 256 {
		return nil, bad("file is %d bytes, shorter than the 256-byte EDF header", len(b))
	}
	for i := 0; i < 256; i++ {
		if b[i] < 32 || b[i] > 126 {
			return nil, bad("header byte %d is not printable ASCII: not an EDF file", i)
		}
	}
	fld := func(off, n int) string { return strings.TrimSpace(string(b[off : off+n])) }
	var h Header
	h.Version = fld(0, 8)
	if h.Version != "0" {
		return nil, bad("version field %q is not \"0\": not an EDF file", h.Version)
	}
	h.Patient, h.Recording = fld(8, 80), fld(88, 80)
	h.StartDate, h.StartTime = fld(168, 8), fld(176, 8)
	if t, err := time.Parse("02.01.06 15.04.05", h.StartDate+" "+h.StartTime); err == nil {
		if t.Year() < 1985 || t.Year() > 2084 {
			t = t.AddDate(100*((1985-t.Year()+99)/100), 0, 0)
		}
		h.Start = t
	}
	var err error
	if h.HeaderBytes, err = strconv.Atoi(fld(184, 8)); err != nil {
		return nil, bad("bad header size %q", fld(184, 8))
	}
	h.Reserved = fld(192, 44)
	if h.NumRecords, err = strconv.Atoi(fld(236, 8)); err != nil {
		return nil, bad("bad number of data records %q", fld(236, 8))
	}
	if h.RecordDuration, err = strconv.ParseFloat(fld(244, 8), 64); err != nil || h.RecordDuration < 0 || math.IsInf(h.RecordDuration, 0) {
		return nil, bad("bad data-record duration %q", fld(244, 8))
	}
	ns, err := strconv.Atoi(fld(252, 4))
	if err != nil || ns < 1 || ns > maxSignals {
		return nil, bad("bad number of signals %q", fld(252, 4))
	}
	if h.HeaderBytes != 256*(ns+1) {
		return nil, bad("header size %d does not match %d signals (%d)", h.HeaderBytes, ns, 256*(ns+1))
	}
	if len(b) < h.HeaderBytes {
		return nil, bad("file is truncated inside the signal headers (%d of %d bytes)", len(b), h.HeaderBytes)
	}
	for i := 256; i < h.HeaderBytes; i++ {
		if b[i] < 32 || b[i] > 126 {
			return nil, bad("signal header byte %d is not printable ASCII", i)
		}
	}
	h.Signals = make([]SignalHeader, ns)
	off := 256
	next := func(n int) func(j int) string {
		base := off
		off += n * ns
		return func(j int) string { return fld(base+j*n, n) }
	}
	label, trans, dim := next(16), next(80), next(8)
	pmin, pmax, dmin, dmax := next(8), next(8), next(8), next(8)
	pre, spr := next(80), next(8)
	recBytes := 0
	for j := range h.Signals {
		s := &h.Signals[j]
		s.Label, s.Transducer, s.Dimension, s.Prefilter = label(j), trans(j), dim(j), pre(j)
		if s.PhysMin, err = strconv.ParseFloat(pmin(j), 64); err != nil {
			return nil, bad("signal %d: bad physical minimum %q", j+1, pmin(j))
		}
		if s.PhysMax, err = strconv.ParseFloat(pmax(j), 64); err != nil {
			return nil, bad("signal %d: bad physical maximum %q", j+1, pmax(j))
		}
		if s.DigMin, err = strconv.Atoi(dmin(j)); err != nil {
			return nil, bad("signal %d: bad digital minimum %q", j+1, dmin(j))
		}
		if s.DigMax, err = strconv.Atoi(dmax(j)); err != nil {
			return nil, bad("signal %d: bad digital maximum %q", j+1, dmax(j))
		}
		if s.SamplesPerRecord, err = strconv.Atoi(spr(j)); err != nil || s.SamplesPerRecord < 0 || s.SamplesPerRecord > maxFileBytes/2 {
			return nil, bad("signal %d: bad samples per record %q", j+1, spr(j))
		}
		if s.DigMax <= s.DigMin || s.DigMin < -32768 || s.DigMax > 32767 {
			return nil, bad("signal %d: digital range %d…%d is invalid", j+1, s.DigMin, s.DigMax)
		}
		if s.PhysMax == s.PhysMin || math.IsNaN(s.PhysMin) || math.IsNaN(s.PhysMax) || math.IsInf(s.PhysMin, 0) || math.IsInf(s.PhysMax, 0) {
			return nil, bad("signal %d: physical minimum equals maximum (%g)", j+1, s.PhysMin)
		}
		recBytes += 2 * s.SamplesPerRecord
	}
	data := b[h.HeaderBytes:]
	if recBytes == 0 {
		return nil, bad("data records hold no samples")
	}
	if h.NumRecords == -1 {
		h.NumRecords = len(data) / recBytes
	}
	if h.NumRecords < 0 {
		return nil, bad("negative number of data records %d", h.NumRecords)
	}
	if int64(len(data)) < int64(h.NumRecords)*int64(recBytes) {
		return nil, bad("file is truncated: %d data records of %d bytes announced, %d bytes present", h.NumRecords, recBytes, len(data))
	}
	f := &File{Header: h, Physical: make([][]float64, ns)}
	plusD := h.Reserved == "EDF+D"
	hasAnn := false
	for j := range h.Signals {
		hasAnn = hasAnn || h.Signals[j].IsAnnotations()
	}
	// Record start times: from each record's time-keeping TAL in EDF+,
	// else r × duration.
	starts := make([]float64, h.NumRecords)
	for r := range starts {
		starts[r] = float64(r) * h.RecordDuration
	}
	p := 0
	for r := 0; r < h.NumRecords; r++ {
		for j := range h.Signals {
			s := &h.Signals[j]
			n := 2 * s.SamplesPerRecord
			if s.IsAnnotations() && h.Plus() {
				anns, tk, err := parseTALs(data[p : p+n])
				if err != nil {
					return nil, bad("data record %d: annotations: %v", r, err)
				}
				if tk != nil && plusD {
					starts[r] = *tk
				}
				f.Annotations = append(f.Annotations, anns...)
			}
			p += n
		}
	}
	if plusD && !hasAnn {
		return nil, bad("EDF+D file without an annotation signal")
	}
	var span float64
	if h.NumRecords > 0 {
		span = starts[h.NumRecords-1] + h.RecordDuration
	}
	p = 0
	for j := range h.Signals {
		s := &h.Signals[j]
		if s.IsAnnotations() {
			continue
		}
		fs := float64(s.SamplesPerRecord) / h.RecordDuration
		n := h.NumRecords * s.SamplesPerRecord
		if plusD {
			// Gap filling may not blow a small file up without bound:
			// refuse spans more than 4 × the stored samples (+ 10^6).
			if !(fs > 0) || span < 0 || span*fs > float64(4*n+1_000_000) {
				return nil, bad("EDF+D records span %g s, far more than the %d samples stored", span, n)
			}
			n = int(math.Round(span * fs))
		}
		if n > maxSamples {
			return nil, bad("signal %d has %d samples: too many", j+1, n)
		}
		v := make([]float64, n)
		for k := range v {
			v[k] = math.NaN()
		}
		f.Physical[j] = v
	}
	for r := 0; r < h.NumRecords; r++ {
		for j := range h.Signals {
			s := &h.Signals[j]
			n := s.SamplesPerRecord
			if s.IsAnnotations() {
				p += 2 * n
				continue
			}
			scale := (s.PhysMax - s.PhysMin) / float64(s.DigMax-s.DigMin)
			o := r * n
			if plusD {
				o = int(math.Round(starts[r] * float64(n) / h.RecordDuration))
			}
			v := f.Physical[j]
			for k := 0; k < n; k++ {
				d := int(int16(uint16(data[p+2*k]) | uint16(data[p+2*k+1])<<8))
				if o+k < 0 || o+k >= len(v) {
					continue
				}
				if d < s.DigMin || d > s.DigMax {
					v[o+k] = math.NaN()
				} else {
					v[o+k] = s.PhysMin + float64(d-s.DigMin)*scale
				}
			}
			p += 2 * n
		}
	}
	return f, nil
}

// parseTALs decodes the TALs of one data record's annotation bytes. It
// returns the annotations and the record's time-keeping onset (the first
// TAL's onset when its first text is empty).
func parseTALs(b []byte) ([]Annotation, *float64, error) {
	var out []Annotation
	var tk *float64
	first := true
	for len(b) > 0 {
		if b[0] == 0 {
			b = b[1:]
			continue
		}
		end := bytes.IndexByte(b, 0)
		if end < 0 {
			return nil, nil, fmt.Errorf("TAL without its closing 0 byte")
		}
		tal := b[:end]
		b = b[end+1:]
		i := bytes.IndexByte(tal, 0x14)
		if i < 0 {
			return nil, nil, fmt.Errorf("TAL %q without 0x14 after its onset", tal)
		}
		ts := string(tal[:i])
		durS := ""
		if k := strings.IndexByte(ts, 0x15); k >= 0 {
			ts, durS = ts[:k], ts[k+1:]
		}
		if len(ts) < 2 || (ts[0] != '+' && ts[0] != '-') {
			return nil, nil, fmt.Errorf("TAL onset %q does not start with + or -", ts)
		}
		onset, err := strconv.ParseFloat(ts, 64)
		if err != nil || math.IsInf(onset, 0) {
			return nil, nil, fmt.Errorf("bad TAL onset %q", ts)
		}
		dur := 0.0
		if durS != "" {
			if dur, err = strconv.ParseFloat(durS, 64); err != nil || dur < 0 || math.IsInf(dur, 0) {
				return nil, nil, fmt.Errorf("bad TAL duration %q", durS)
			}
		}
		texts := strings.Split(string(tal[i+1:]), "\x14")
		if len(texts) > 0 && texts[len(texts)-1] == "" {
			texts = texts[:len(texts)-1]
		}
		if first && (len(texts) == 0 || texts[0] == "") {
			o := onset
			tk = &o
			if len(texts) > 0 {
				texts = texts[1:]
			}
		}
		first = false
		for _, t := range texts {
			if t != "" {
				out = append(out, Annotation{Onset: onset, Duration: dur, Text: t})
			}
		}
	}
	return out, tk, nil
}

// ReadFile reads an EDF or EDF+ file.
func ReadFile(path string) (*File, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, fmt.Errorf("edf: %w: %w", ecg.ErrUnreadable, err)
	}
	if st.Size() > maxFileBytes {
		return nil, fmt.Errorf("edf: %s: file larger than %d bytes: %w", path, int64(maxFileBytes), ecg.ErrUnreadable)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("edf: %w: %w", ecg.ErrUnreadable, err)
	}
	f, err := Decode(b)
	if err != nil {
		return nil, fmt.Errorf("edf: %s: %w", path, err)
	}
	return f, nil
}

// Read reads an EDF file from r (all of it; at most 2 GB).
func Read(r io.Reader) (*File, error) {
	b, err := io.ReadAll(io.LimitReader(r, maxFileBytes+1))
	if err != nil {
		return nil, fmt.Errorf("edf: %w: %w", ecg.ErrUnreadable, err)
	}
	if len(b) > maxFileBytes {
		return nil, fmt.Errorf("edf: input larger than %d bytes: %w", int64(maxFileBytes), ecg.ErrUnreadable)
	}
	f, err := Decode(b)
	if err != nil {
		return nil, fmt.Errorf("edf: %w", err)
	}
	return f, nil
}

// Record converts the file to an ecg.Record in mV: signals whose label
// names a lead (ecg.ParseLead; "ECG V1" → V1) in a voltage unit (mV, uV,
// µV, V) become the record's signals; beat and wave annotations written by
// Write become Record.Beats. Start times come from the header when they
// parse.
func (f *File) Record() ecg.Record {
	var rec ecg.Record
	rec.Meta.Acquired = f.Header.Start
	for j := range f.Header.Signals {
		s := &f.Header.Signals[j]
		if s.IsAnnotations() || f.Physical[j] == nil {
			continue
		}
		l, err := ecg.ParseLead(s.Label)
		if err != nil || rec.Signal(l) != nil {
			continue
		}
		scale, ok := voltScale(s.Dimension)
		if !ok {
			continue
		}
		v := f.Physical[j]
		if scale != 1 {
			for k := range v {
				v[k] *= scale
			}
		}
		rec.Set(ecg.Signal{Lead: l, SampleRate: float64(s.SamplesPerRecord) / f.Header.RecordDuration, Samples: v})
	}
	rec.Beats = Beats(f.Annotations)
	return rec
}

func voltScale(dim string) (float64, bool) {
	switch strings.TrimSpace(dim) {
	case "mV", "mv":
		return 1, true
	case "uV", "µV", "μV", "uv":
		return 1e-3, true
	case "V":
		return 1e3, true
	}
	return 0, false
}

// Beats rebuilds beats from the annotations Write produces: a one-letter
// text that is a beat class (N, V, A, Q and the other single-letter WFDB
// beat symbols) starts a beat at its onset; "P on/peak/off" attach to the
// next beat, "QRS on" to the next beat, "QRS off" and "T peak/end" to the
// previous one, each within 1.2 s.
func Beats(anns []Annotation) []ecg.Beat {
	var beats []ecg.Beat
	for _, a := range anns {
		if len(a.Text) == 1 && strings.ContainsRune("NLRaVFJASEj/QefnrB", rune(a.Text[0])) {
			beats = append(beats, ecg.NewBeat(ecg.BeatClass(a.Text[0]), a.Onset))
		}
	}
	sort.SliceStable(beats, func(i, j int) bool { return beats[i].R < beats[j].R })
	after := func(t float64) int { return sort.Search(len(beats), func(i int) bool { return beats[i].R >= t }) }
	const reach = 1.2
	for _, a := range anns {
		t := a.Onset
		var dst *float64
		switch a.Text {
		case TextPOn, TextPPeak, TextPOff, TextQRSOn:
			if k := after(t); k < len(beats) && beats[k].R-t <= reach {
				b := &beats[k]
				dst = map[string]*float64{TextPOn: &b.POn, TextPPeak: &b.PPeak, TextPOff: &b.POff, TextQRSOn: &b.QRSOn}[a.Text]
			}
		case TextQRSOff, TextTPeak, TextTEnd:
			if k := after(t+1e-9) - 1; k >= 0 && t-beats[k].R <= reach {
				b := &beats[k]
				dst = map[string]*float64{TextQRSOff: &b.QRSOff, TextTPeak: &b.TPeak, TextTEnd: &b.TEnd}[a.Text]
			}
		}
		if dst != nil {
			*dst = t
		}
	}
	return beats
}

// ReadRecord reads an EDF/EDF+ file into an ecg.Record (see File.Record).
func ReadRecord(path string) (ecg.Record, *File, error) {
	f, err := ReadFile(path)
	if err != nil {
		return ecg.Record{}, nil, err
	}
	rec := f.Record()
	rec.Meta.Source = filepath.Base(path)
	if len(rec.Signals) == 0 {
		return rec, f, fmt.Errorf("edf: %s: no signal is labelled with an ECG lead name in a voltage unit: %w", path, ecg.ErrNoECG)
	}
	return rec, f, nil
}
