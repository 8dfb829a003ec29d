package edf

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"

	"tracelift/ecg"
	"tracelift/export/internal/frames"
	"tracelift/internal/atomicfile"
)

// Patient fills the EDF+ local patient identification. Empty fields are
// written as "X" (unknown).
type Patient struct {
	Code      string    // hospital administration code
	Sex       string    // "F" or "M"
	BirthDate time.Time // zero = unknown
	Name      string
}

// Recording fills the EDF+ local recording identification. Empty fields
// are written as "X".
type Recording struct {
	AdminCode  string // hospital administration code of the investigation
	Technician string
	Equipment  string
}

// Options controls Write. A nil *Options means defaults: anonymous
// patient and recording fields ("X X X X", "Startdate X X X X", start
// 01.01.85 00.00.00), beats and wave boundaries written as annotations.
// Setting Recording or Identify also writes the record's acquisition time
// (Meta.Acquired) as the start date and time.
type Options struct {
	Patient   *Patient   // nil: "X X X X"
	Recording *Recording // nil: "Startdate X X X X" (the start date is still given when known)
	// Identify copies the record's own metadata (Meta.PatientID, Sex,
	// BirthDate, PatientName, Institution, Device) into the patient and
	// recording fields when Patient or Recording is nil. Off by default:
	// files are anonymous unless asked otherwise.
	Identify bool
	// NoBeats leaves the beat and wave-boundary annotations out.
	NoBeats bool
	// Leads fixes the signal order; nil writes the record's leads in
	// conventional order.
	Leads []ecg.Lead
}

// maxRecordBytes is the EDF+ recommendation for one data record.
const maxRecordBytes = 61440

// NaNDigital is the digital value written for a sample that was not
// recorded; it is one below the declared digital minimum.
const NaNDigital = -32768

const (
	digMin = -32767
	digMax = 32767
)

// Annotation is one annotation of an EDF+ file (one TAL may hold several
// texts; each becomes its own Annotation).
type Annotation struct {
	Onset    float64 // s from the file start
	Duration float64 // s; 0 when not given
	Text     string
}

// Beat annotation texts for wave boundaries.
const (
	TextPOn    = "P on"
	TextPPeak  = "P peak"
	TextPOff   = "P off"
	TextQRSOn  = "QRS on"
	TextQRSOff = "QRS off"
	TextTPeak  = "T peak"
	TextTEnd   = "T end"
	gapPrefix  = "no signal "
)

// BeatAnnotations converts beats to annotations relative to a file that
// starts at t0 (s on the record's time base).
func BeatAnnotations(beats []ecg.Beat, t0 float64) []Annotation {
	var out []Annotation
	add := func(t float64, text string) {
		if !math.IsNaN(t) && t >= t0 {
			out = append(out, Annotation{Onset: t - t0, Text: text})
		}
	}
	for _, b := range beats {
		c := b.Class
		if c == 0 {
			c = ecg.BeatUnknown
		}
		add(b.POn, TextPOn)
		add(b.PPeak, TextPPeak)
		add(b.POff, TextPOff)
		add(b.QRSOn, TextQRSOn)
		add(b.R, string(rune(c)))
		add(b.QRSOff, TextQRSOff)
		add(b.TPeak, TextTPeak)
		add(b.TEnd, TextTEnd)
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Onset < out[j].Onset })
	return out
}

// Write writes rec as an EDF+C file.
func Write(w io.Writer, rec ecg.Record, opt *Options) error {
	var o Options
	if opt != nil {
		o = *opt
	}
	g, err := frames.Align(&rec, o.Leads, 500)
	if err != nil {
		return fmt.Errorf("edf: %w", err)
	}
	if len(g.Leads) == 0 || g.N == 0 {
		return fmt.Errorf("edf: record has no samples: %w", ecg.ErrOutput)
	}
	ns := len(g.Leads)
	dur, spr, err := recordDuration(g.Fs, ns)
	if err != nil {
		return err
	}
	nrec := (g.N + spr - 1) / spr
	// Annotations: beats and waves, then the gaps of each lead.
	var anns []Annotation
	if !o.NoBeats {
		anns = BeatAnnotations(rec.Beats, g.T0)
	}
	for j, l := range g.Leads {
		anns = append(anns, gapAnnotations(g.Cols[j], g.Fs, l.String())...)
	}
	sort.SliceStable(anns, func(i, j int) bool { return anns[i].Onset < anns[j].Onset })
	tals := make([][]byte, nrec)
	for r := range tals {
		tals[r] = timekeepingTAL(float64(r) * dur)
	}
	for _, a := range anns {
		r := min(max(int(math.Floor(a.Onset/dur+1e-9)), 0), nrec-1)
		tals[r] = appendTAL(tals[r], a)
	}
	annBytes := 0
	for _, t := range tals {
		annBytes = max(annBytes, len(t))
	}
	annSpr := (annBytes + 1) / 2
	// Header.
	var h bytes.Buffer
	// The start date and time identify a recording; they are kept only
	// when the caller asks for identification.
	var start time.Time
	if o.Recording != nil || o.Identify {
		start = rec.Meta.Acquired
	}
	field := func(s string, n int) { h.WriteString(pad(s, n)) }
	field("0", 8)
	field(patientField(o, rec.Meta), 80)
	field(recordingField(o, rec.Meta, start), 80)
	if start.IsZero() {
		field("01.01.85", 8)
		field("00.00.00", 8)
	} else {
		yy := start.Year() % 100
		if start.Year() < 1985 || start.Year() > 2084 {
			yy = 85 // outside EDF's two-digit window: leave the real date in the recording field
		}
		field(fmt.Sprintf("%02d.%02d.%02d", start.Day(), int(start.Month()), yy), 8)
		field(start.Format("15.04.05"), 8)
	}
	field(strconv.Itoa(256*(ns+2)), 8)
	field("EDF+C", 44)
	field(strconv.Itoa(nrec), 8)
	field(num(dur), 8)
	field(strconv.Itoa(ns+1), 4)
	pmax := make([]float64, ns)
	for j := range g.Leads {
		pmax[j] = physRange(g.Cols[j])
	}
	sig := func(f func(j int) string, ann string, n int) {
		for j := 0; j < ns; j++ {
			field(f(j), n)
		}
		field(ann, n)
	}
	sig(func(j int) string { return "ECG " + g.Leads[j].String() }, "EDF Annotations", 16)
	sig(func(int) string { return "" }, "", 80)
	sig(func(int) string { return "mV" }, "", 8)
	sig(func(j int) string { return num(-pmax[j]) }, "-1", 8)
	sig(func(j int) string { return num(pmax[j]) }, "1", 8)
	sig(func(int) string { return strconv.Itoa(digMin) }, "-32768", 8)
	sig(func(int) string { return strconv.Itoa(digMax) }, "32767", 8)
	pre := prefilter(rec.Meta.Filter)
	sig(func(int) string { return pre }, "", 80)
	sig(func(int) string { return strconv.Itoa(spr) }, strconv.Itoa(annSpr), 8)
	sig(func(int) string { return "" }, "", 32)
	if h.Len() != 256*(ns+2) {
		panic(fmt.Sprintf("edf: header is %d bytes, want %d", h.Len(), 256*(ns+2)))
	}
	if _, err := w.Write(h.Bytes()); err != nil {
		return fmt.Errorf("edf: %w: %w", ecg.ErrOutput, err)
	}
	// Data records.
	buf := make([]byte, 0, (ns*spr+annSpr)*2)
	for r := 0; r < nrec; r++ {
		buf = buf[:0]
		for j := 0; j < ns; j++ {
			scale := float64(digMax) / pmax[j]
			col := g.Cols[j]
			for k := r * spr; k < (r+1)*spr; k++ {
				d := NaNDigital
				if k < g.N && !math.IsNaN(col[k]) {
					d = int(math.Round(col[k] * scale))
					d = min(max(d, digMin), digMax)
				}
				buf = append(buf, byte(d), byte(d>>8))
			}
		}
		t := tals[r]
		buf = append(buf, t...)
		for i := len(t); i < 2*annSpr; i++ {
			buf = append(buf, 0)
		}
		if _, err := w.Write(buf); err != nil {
			return fmt.Errorf("edf: %w: %w", ecg.ErrOutput, err)
		}
	}
	return nil
}

// WriteFile writes rec to path as EDF+C, atomically.
func WriteFile(path string, rec ecg.Record, opt *Options) error {
	if err := atomicfile.WriteFile(path, func(w io.Writer) error { return Write(w, rec, opt) }); err != nil {
		return fmt.Errorf("edf: %w", err)
	}
	return nil
}

// recordDuration picks the data-record duration: 1 s if fs is a whole
// number and the record fits 61,440 bytes, else the longest of 0.5, 0.25,
// 0.2, 0.1, 0.05, 0.04, 0.02, 0.01 s that gives a whole number of samples
// and fits; longer durations (2, 4, 5, 10 s) for rates that are whole
// only over them.
func recordDuration(fs float64, ns int) (float64, int, error) {
	for _, d := range []float64{1, 0.5, 0.25, 0.2, 0.1, 0.05, 0.04, 0.02, 0.01, 2, 4, 5, 10} {
		x := fs * d
		if math.Abs(x-math.Round(x)) > 1e-9*x || x < 1 {
			continue
		}
		spr := int(math.Round(x))
		if ns*spr*2 <= maxRecordBytes-256 {
			return d, spr, nil
		}
	}
	return 0, 0, fmt.Errorf("edf: sample rate %g Hz gives no whole number of samples per data record: %w", fs, ecg.ErrOutput)
}

// physRange returns the symmetric physical bound P (mV) for a column.
func physRange(col []float64) float64 {
	m := 0.0
	for _, v := range col {
		if !math.IsNaN(v) {
			m = math.Max(m, math.Abs(v))
		}
	}
	for e := -3; e <= 6; e++ {
		for _, c := range []float64{1, 2, 5} {
			p := c * math.Pow(10, float64(e))
			if p >= m {
				return p
			}
		}
	}
	return 5e6
}

// gapAnnotations lists the runs of NaN in col as "no signal <lead>"
// annotations with durations. A lead with no value at all gets one
// annotation over the whole record.
func gapAnnotations(col []float64, fs float64, lead string) []Annotation {
	var out []Annotation
	for k := 0; k < len(col); {
		if !math.IsNaN(col[k]) {
			k++
			continue
		}
		e := k
		for e < len(col) && math.IsNaN(col[e]) {
			e++
		}
		out = append(out, Annotation{Onset: float64(k) / fs, Duration: float64(e-k) / fs, Text: gapPrefix + lead})
		k = e
	}
	return out
}

func timekeepingTAL(t float64) []byte {
	return append([]byte("+"+num(t)), 0x14, 0x14, 0)
}

func appendTAL(b []byte, a Annotation) []byte {
	b = append(b, '+')
	b = append(b, num(a.Onset)...)
	if a.Duration > 0 {
		b = append(b, 0x15)
		b = append(b, num(a.Duration)...)
	}
	b = append(b, 0x14)
	b = append(b, strings.Map(func(r rune) rune {
		if r < 0x20 {
			return ' '
		}
		return r
	}, a.Text)...)
	return append(b, 0x14, 0)
}

// num formats a number in at most 8 characters (EDF numeric fields):
// shortest decimal form, rounded to µs precision first.
func num(v float64) string {
	v = math.Round(v*1e6) / 1e6
	s := strconv.FormatFloat(v, 'f', -1, 64)
	if len(s) > 8 {
		for p := 6; p >= 0 && len(s) > 8; p-- {
			s = strconv.FormatFloat(v, 'f', p, 64)
		}
	}
	return s
}

// pad left-justifies s in an n-byte field of printable ASCII, replacing
// other bytes with '_' and cutting what does not fit.
func pad(s string, n int) string {
	b := make([]byte, 0, n)
	for i := 0; i < len(s) && len(b) < n; i++ {
		c := s[i]
		if c < 32 || c > 126 {
			c = '_'
		}
		b = append(b, c)
	}
	for len(b) < n {
		b = append(b, ' ')
	}
	return string(b)
}

// sub makes an EDF+ subfield: spaces become '_', empty becomes "X".
func sub(s string) string {
	s = strings.TrimSpace(s)
	if s == "" {
		return "X"
	}
	return strings.Join(strings.Fields(s), "_")
}

func edfDate(t time.Time) string {
	if t.IsZero() {
		return "X"
	}
	return strings.ToUpper(t.Format("02-Jan-2006"))
}

func patientField(o Options, m ecg.Metadata) string {
	p := o.Patient
	if p == nil && o.Identify {
		p = &Patient{Code: m.PatientID, Sex: m.Sex, BirthDate: m.BirthDate, Name: m.PatientName}
	}
	if p == nil {
		return "X X X X"
	}
	sex := "X"
	if s := strings.ToUpper(strings.TrimSpace(p.Sex)); s == "F" || s == "M" {
		sex = s
	}
	return strings.Join([]string{sub(p.Code), sex, edfDate(p.BirthDate), sub(p.Name)}, " ")
}

func recordingField(o Options, m ecg.Metadata, start time.Time) string {
	r := o.Recording
	if r == nil && o.Identify {
		r = &Recording{Equipment: m.Device, AdminCode: m.Institution}
	}
	if r == nil {
		r = &Recording{}
	}
	return strings.Join([]string{"Startdate", edfDate(start), sub(r.AdminCode), sub(r.Technician), sub(r.Equipment)}, " ")
}

// bandRE matches a printed band such as "0.05–150 Hz" or "0.5-40Hz".
var bandRE = regexp.MustCompile(`^\s*([0-9]*\.?[0-9]+)\s*(?:–|-|to)\s*([0-9]*\.?[0-9]+)\s*Hz\s*$`)

// prefilter turns a printed filter setting into EDF's prefiltering text:
// a band "0.05–150 Hz" becomes "HP:0.05Hz LP:150Hz" (the EDF convention);
// anything else is kept as printed; empty stays empty.
func prefilter(s string) string {
	if m := bandRE.FindStringSubmatch(s); m != nil {
		return "HP:" + m[1] + "Hz LP:" + m[2] + "Hz"
	}
	return strings.TrimSpace(strings.ReplaceAll(s, "–", "-"))
}
