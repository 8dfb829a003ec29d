package wfdb

import (
	"bytes"
	"encoding/json"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/internal/biosig"
	"tracelift/internal/refdata"
	"tracelift/internal/testrecord"
)

// testRecord builds a seeded 12-lead record at 500 Hz (invented data)
// with a 3 × 4-style gap pattern: the chest leads are NaN outside their
// 2.5 s window.
func testRecord(seed uint64, seconds float64) ecg.Record {
	rec := testrecord.Build(testrecord.Spec{Seed: seed, Seconds: seconds, Amp: 1.2, Omega: 2 * math.Pi * 1.1, Noise: 0.05, Offset: -0.3,
		Gap: testrecord.ChestWindow, Meta: ecg.Metadata{Source: "demo-clinic page.png"}})
	rec.Beats = []ecg.Beat{ecg.NewBeat(ecg.BeatNormal, 0.5), ecg.NewBeat(ecg.BeatVentricular, 1.4), ecg.NewBeat(ecg.BeatAtrial, 2.2)}
	rec.Beats[0].QRSOn, rec.Beats[0].QRSOff, rec.Beats[0].POn, rec.Beats[0].PPeak, rec.Beats[0].POff = 0.45, 0.55, 0.3, 0.34, 0.38
	rec.Beats[0].TPeak, rec.Beats[0].TEnd = 0.8, 0.9
	return rec
}

// Round trip write → read for formats 16 and 212: every sample is back
// within half a quantisation step (1/(2·gain) mV), NaN stays NaN, and the
// header's checksum/initial value verify.
func TestWriteReadRoundTrip(t *testing.T) {
	for _, format := range []int{16, 212} {
		rec := testRecord(7, 10)
		dir := t.TempDir()
		h, err := WriteRecord(dir, "demo_1", rec, &WriteOptions{Format: format})
		if err != nil {
			t.Fatal(err)
		}
		back, h2, err := ReadRecord(filepath.Join(dir, "demo_1.hea"))
		if err != nil {
			t.Fatal(err)
		}
		if len(h2.Warnings) != 0 {
			t.Errorf("format %d: warnings %v", format, h2.Warnings)
		}
		worst := 0.0
		for j, s := range rec.Signals {
			b := back.Signal(s.Lead)
			if b == nil || len(b.Samples) != len(s.Samples) {
				t.Fatalf("format %d lead %v missing or wrong length", format, s.Lead)
			}
			step := 1 / h.Signals[j].Gain
			for k, v := range s.Samples {
				if math.IsNaN(v) != math.IsNaN(b.Samples[k]) {
					t.Fatalf("format %d lead %v sample %d: NaN mismatch %g vs %g", format, s.Lead, k, v, b.Samples[k])
				}
				if !math.IsNaN(v) {
					e := math.Abs(v - b.Samples[k])
					if e > step/2+1e-12 {
						t.Fatalf("format %d lead %v sample %d: error %g > step/2 %g", format, s.Lead, k, e, step/2)
					}
					worst = math.Max(worst, e)
				}
			}
		}
		t.Logf("format %d: gain %g adu/mV, worst error %.3f µV", format, h.Signals[0].Gain, worst*1000)
		if format == 16 && worst > 0.0005 {
			t.Errorf("format 16 error %g mV exceeds 0.5 µV", worst)
		}
	}
}

// ChooseGain: a ±1.5 mV signal in format 16 fits 20,000 adu/mV
// (30,000 ≤ 32,767), in format 212 1000 adu/mV (1500 ≤ 2047).
func TestChooseGain(t *testing.T) {
	cases := []struct {
		lo, hi float64
		format int
		gain   float64
	}{
		{-1.5, 1.5, 16, 20000},
		{-1.5, 1.5, 212, 1000},
		{-5, 5, 212, 200},
		{-30, 30, 16, 1000},
		{4, 6, 16, 20000}, // offset signal: the baseline centres it (±1 mV)
	}
	for _, c := range cases {
		g, b := ChooseGain([]float64{c.lo, math.NaN(), c.hi}, c.format)
		lo, hi := digitalRange(c.format)
		if g != c.gain {
			t.Errorf("%v: gain %g, want %g", c, g, c.gain)
		}
		if d := math.Round(c.lo*g) + float64(b); d < float64(lo) {
			t.Errorf("%v: min maps to %g", c, d)
		}
		if d := math.Round(c.hi*g) + float64(b); d > float64(hi) {
			t.Errorf("%v: max maps to %g", c, d)
		}
	}
}

// The standard's byte example (standards.md §5.2, from annot(5)): a
// normal beat 100 samples after the previous one is the word 0x0464
// (bytes 64 04), and the file ends with 00 00.
func TestEncodeAnnotationsBytes(t *testing.T) {
	var b bytes.Buffer
	if err := EncodeAnnotations(&b, []Annotation{{Sample: 100, Code: CodeNormal}}); err != nil {
		t.Fatal(err)
	}
	if got := b.Bytes(); !bytes.Equal(got, []byte{0x64, 0x04, 0, 0}) {
		t.Errorf("bytes % x", got)
	}
}

func TestAnnotationRoundTrip(t *testing.T) {
	in := []Annotation{
		{Sample: 18, Code: CodeRhythm, Aux: "(N"},
		{Sample: 77, Code: CodeNormal},
		{Sample: 5000, Code: CodePVC, Chan: 1, Num: 3}, // step > 1023 needs SKIP
		{Sample: 5000, Code: CodeWaveOn, Sub: 2, Chan: 1},
		{Sample: 90_000_000, Code: CodeAPC, Aux: "odd"},
	}
	out := reencode(t, in, 250)
	if len(out) != len(in) {
		t.Fatalf("%d annotations back, want %d", len(out), len(in))
	}
	for i := range in {
		w := in[i]
		w.Symbol = Symbol(w.Code)
		w.Time = float64(w.Sample) / 250
		if out[i] != w {
			t.Errorf("annotation %d: %+v, want %+v", i, out[i], w)
		}
	}
}

// reencode encodes anns as an annotation file and decodes it again at fs
// Hz.
func reencode(t *testing.T, anns []Annotation, fs float64) []Annotation {
	t.Helper()
	var b bytes.Buffer
	if err := EncodeAnnotations(&b, anns); err != nil {
		t.Fatal(err)
	}
	out, err := DecodeAnnotations(&b, fs)
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// 100.atr decoded, encoded again and decoded gives the same annotations.
func TestReencodeMITDBAnnotations(t *testing.T) {
	dir := refdata.Dir(t, "mitdb")
	a := readAnnotations(t, filepath.Join(dir, "100.atr"), 360)
	a2 := reencode(t, a, 360)
	if len(a2) != len(a) {
		t.Fatalf("%d vs %d", len(a2), len(a))
	}
	for i := range a {
		if a[i] != a2[i] {
			t.Fatalf("annotation %d: %+v vs %+v", i, a2[i], a[i])
		}
	}
}

// Beats from LUDB 1.ii: the QRS boundaries of the first beats equal the
// README triples (onset 644, offset 682; P (1250, 1278, 1302) belongs to
// the QRS at 1342; T (776, 843, 878) to the QRS at 662).
func TestBeatsFromLUDBDelineation(t *testing.T) {
	dir := refdata.Dir(t, "ludb")
	anns := readAnnotations(t, filepath.Join(dir, "1.ii"), 500)
	beats := Beats(anns, 500)
	if len(beats) != 6 {
		t.Fatalf("%d beats, want 6 (README: 6 QRS in lead ii)", len(beats))
	}
	b0, b1 := beats[0], beats[1]
	eq := func(got float64, samp int) bool { return math.Abs(got-float64(samp)/500) < 1e-12 }
	if !eq(b0.R, 662) || !eq(b0.QRSOn, 644) || !eq(b0.QRSOff, 682) || !eq(b0.TPeak, 843) || !eq(b0.TEnd, 878) || !math.IsNaN(b0.POn) {
		t.Errorf("beat 0: %+v", b0)
	}
	if !eq(b1.POn, 1250) || !eq(b1.PPeak, 1278) || !eq(b1.POff, 1302) || !eq(b1.QRSOn, 1324) {
		t.Errorf("beat 1: %+v", b1)
	}
}

// Wave annotations written from beats read back as the same beats.
func TestWaveAnnotationsRoundTrip(t *testing.T) {
	rec := testRecord(1, 3)
	anns := WaveAnnotations(rec.Beats, 500, 0)
	beats := Beats(reencode(t, anns, 500), 500)
	if len(beats) != len(rec.Beats) {
		t.Fatalf("%d beats", len(beats))
	}
	same := func(a, b float64) bool { return (math.IsNaN(a) && math.IsNaN(b)) || math.Abs(a-b) < 1e-9 }
	for i, w := range rec.Beats {
		g := beats[i]
		if g.Class != w.Class || !same(g.R, w.R) || !same(g.POn, w.POn) || !same(g.PPeak, w.PPeak) || !same(g.POff, w.POff) ||
			!same(g.QRSOn, w.QRSOn) || !same(g.QRSOff, w.QRSOff) || !same(g.TPeak, w.TPeak) || !same(g.TEnd, w.TEnd) {
			t.Errorf("beat %d: %+v, want %+v", i, g, w)
		}
	}
}

// An independent reader: biosig's save2gdf (Debian biosig-tools) reads
// the format-212 record we write and reports the same channel count,
// rate, length and scaling (1/gain mV per unit). standards.md §5.6: it
// crashes on long 12-channel format-16 records, so 212 is used here.
func TestBiosigReadsFormat212(t *testing.T) {
	biosig.Tool(t)
	rec := testRecord(3, 10)
	dir := t.TempDir()
	h, err := WriteRecord(dir, "demo_2", rec, &WriteOptions{Format: 212})
	if err != nil {
		t.Fatal(err)
	}
	js := biosig.JSON(t, dir, "demo_2.hea")
	var doc struct {
		NumberOfChannels int
		NumberOfSamples  int
		Samplingrate     float64
		CHANNEL          []struct {
			Label   string
			Scaling float64 `json:"scaling"`
			Offset  float64 `json:"offset"`
		}
	}
	if err := json.Unmarshal(js, &doc); err != nil {
		t.Fatalf("save2gdf JSON: %v\n%s", err, js)
	}
	if doc.NumberOfChannels != 12 || doc.NumberOfSamples != 5000 || doc.Samplingrate != 500 {
		t.Errorf("biosig: %d channels, %d samples, %g Hz", doc.NumberOfChannels, doc.NumberOfSamples, doc.Samplingrate)
	}
	for j, c := range doc.CHANNEL {
		if !strings.EqualFold(c.Label, h.Signals[j].Description) {
			t.Errorf("channel %d label %q, want %q", j, c.Label, h.Signals[j].Description)
		}
		if math.Abs(c.Scaling-1/h.Signals[j].Gain) > 1e-6/h.Signals[j].Gain {
			t.Errorf("channel %d scaling %g, want %g", j, c.Scaling, 1/h.Signals[j].Gain)
		}
	}
	// Values: save2gdf -CSV prints one row per frame, one column per
	// signal, in mV. Every recorded sample must agree within half a
	// quantisation step plus biosig's printing precision.
	lines := biosig.CSV(t, dir, "demo_2.hea", "demo_2.csv")
	if len(lines) != 5001 {
		t.Fatalf("biosig CSV has %d lines, want 5001", len(lines))
	}
	checked := 0
	for k, line := range lines[1:] {
		f := strings.Split(line, ",")
		for j, s := range rec.Signals {
			v := s.Samples[k]
			if math.IsNaN(v) {
				continue
			}
			got, err := strconv.ParseFloat(strings.TrimSpace(f[j]), 64)
			if err != nil {
				t.Fatalf("row %d col %d: %v", k, j, err)
			}
			if math.Abs(got-v) > 0.5/h.Signals[j].Gain+1e-4 {
				t.Fatalf("row %d lead %v: biosig %g, written %g", k, s.Lead, got, v)
			}
			checked++
		}
	}
	t.Logf("biosig agreed on %d samples", checked)
}

// biosig reads our .atr file as the events of the record: same count,
// same types (1 normal, 5 PVC, 8 APC) and positions; the data README
// documents that biosig puts every WFDB annotation one sample early
// (POS·fs = sample − 1), which we allow for.
func TestBiosigReadsAnnotations(t *testing.T) {
	biosig.Tool(t)
	rec := testRecord(5, 10)
	rec.Beats = nil
	classes := []ecg.BeatClass{ecg.BeatNormal, ecg.BeatVentricular, ecg.BeatAtrial, ecg.BeatNormal, ecg.BeatUnknown}
	for i, c := range classes {
		rec.Beats = append(rec.Beats, ecg.NewBeat(c, 0.8+1.7*float64(i)))
	}
	dir := t.TempDir()
	h, err := WriteRecord(dir, "ann", rec, &WriteOptions{Format: 212})
	if err != nil {
		t.Fatal(err)
	}
	anns := BeatAnnotations(rec.Beats, h.Fs, 0)
	if err := WriteAnnotationsFile(filepath.Join(dir, "ann.atr"), anns); err != nil {
		t.Fatal(err)
	}
	out := biosig.JSON(t, dir, "ann.hea")
	var doc struct {
		EVENT []struct {
			TYP string
			POS float64
		}
	}
	if err := json.Unmarshal(out, &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.EVENT) != len(anns) {
		t.Fatalf("biosig found %d events, want %d", len(doc.EVENT), len(anns))
	}
	for i, e := range doc.EVENT {
		typ, _ := strconv.ParseInt(strings.TrimPrefix(e.TYP, "0x"), 16, 32)
		if int(typ) != anns[i].Code || math.Abs(e.POS*h.Fs-float64(anns[i].Sample-1)) > 1e-6 {
			t.Errorf("event %d: type %s at %g s, want code %d at sample %d (−1)", i, e.TYP, e.POS, anns[i].Code, anns[i].Sample)
		}
	}
}

// Header lines stay within the 255 characters of header(5), even for a
// long source name.
func TestHeaderLineLength(t *testing.T) {
	rec := testRecord(2, 1)
	rec.Meta.Source = strings.Repeat("Lakeside Demo Clinic scan ", 20) + ".png"
	var b bytes.Buffer
	h, err := WriteRecord(t.TempDir(), "long", rec, nil)
	if err != nil {
		t.Fatal(err)
	}
	EncodeHeader(&b, h)
	for i, line := range strings.Split(b.String(), "\n") {
		if len(line) > 255 {
			t.Errorf("line %d has %d characters", i+1, len(line))
		}
	}
}

// QT Database delineation "(p)(N)t)": sel100.q1c's first beat, from the
// data README's worked facts: PR = (150316 − 150272) × 4 ms = 176 ms,
// QRS = (150334 − 150316) × 4 ms = 72 ms, QT = (150419 − 150316) × 4 ms
// = 412 ms; 30 beats in all.
func TestBeatsFromQTDBq1c(t *testing.T) {
	dir := refdata.Dir(t, "qtdb")
	anns := readAnnotations(t, filepath.Join(dir, "sel100.q1c"), 250)
	if len(anns) != 240 {
		t.Errorf("%d marks, want 240", len(anns))
	}
	beats := Beats(anns, 250)
	if len(beats) != 30 {
		t.Fatalf("%d beats, want 30", len(beats))
	}
	b := beats[0]
	ms := func(a, z float64) float64 { return math.Round((z - a) * 1000) }
	if pr, qrs, qt := ms(b.POn, b.QRSOn), ms(b.QRSOn, b.QRSOff), ms(b.QRSOn, b.TEnd); pr != 176 || qrs != 72 || qt != 412 {
		t.Errorf("first beat PR %g QRS %g QT %g ms, want 176 72 412", pr, qrs, qt)
	}
	if math.Abs(b.R*250-150330) > 1e-6 || math.Abs(b.TPeak*250-150394) > 1e-6 {
		t.Errorf("first beat R %g T peak %g (samples)", b.R*250, b.TPeak*250)
	}
}
