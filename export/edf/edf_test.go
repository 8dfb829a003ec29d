package edf

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"tracelift/ecg"
	"tracelift/internal/biosig"
	"tracelift/internal/testrecord"
)

// demoRecord is an invented 12-lead record at 500 Hz: limb leads over the
// whole span, chest leads only over 2.5–5 s (a 3 × 4 page pattern), and
// three beats with fiducials.
func demoRecord(seed uint64, seconds float64) ecg.Record {
	rec := testrecord.Build(testrecord.Spec{Seed: seed, Seconds: seconds, Amp: 1.7, Omega: 2 * math.Pi * 1.3, Noise: 0.02,
		Gap: testrecord.ChestWindow,
		Meta: ecg.Metadata{Source: "demo.png", PatientID: "MRN 0042", PatientName: "Ada Example",
			Sex: "F", BirthDate: time.Date(1951, 8, 2, 0, 0, 0, 0, time.UTC), Acquired: time.Date(2024, 3, 9, 14, 5, 7, 0, time.UTC),
			Institution: "Lakeside Demo Clinic", Device: "paper scan"}})
	b := ecg.NewBeat(ecg.BeatNormal, 0.6)
	b.POn, b.PPeak, b.POff, b.QRSOn, b.QRSOff, b.TPeak, b.TEnd = 0.42, 0.46, 0.5, 0.56, 0.65, 0.85, 0.95
	rec.Beats = []ecg.Beat{b, ecg.NewBeat(ecg.BeatVentricular, 1.5), ecg.NewBeat(ecg.BeatAtrial, 2.3)}
	return rec
}

func encode(t *testing.T, rec ecg.Record, o *Options) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := Write(&b, rec, o); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// Write → Decode gives every sample back within half a quantisation step
// (P/32767/2 mV, ≤ 0.5 µV here), NaN gaps as NaN, and the beats.
func TestRoundTrip(t *testing.T) {
	rec := demoRecord(1, 10)
	f, err := Decode(encode(t, rec, nil))
	if err != nil {
		t.Fatal(err)
	}
	back := f.Record()
	worst := 0.0
	for _, s := range rec.Signals {
		b := back.Signal(s.Lead)
		if b == nil || len(b.Samples) != len(s.Samples) || b.SampleRate != 500 {
			t.Fatalf("lead %v missing or wrong shape", s.Lead)
		}
		for k, v := range s.Samples {
			if math.IsNaN(v) != math.IsNaN(b.Samples[k]) {
				t.Fatalf("%v[%d]: NaN mismatch %g vs %g", s.Lead, k, v, b.Samples[k])
			}
			if !math.IsNaN(v) {
				worst = math.Max(worst, math.Abs(v-b.Samples[k]))
			}
		}
	}
	t.Logf("worst round-trip error %.3f µV", worst*1000)
	if worst > 0.0005 {
		t.Errorf("round-trip error %g mV exceeds 0.5 µV", worst)
	}
	if len(back.Beats) != 3 {
		t.Fatalf("%d beats back", len(back.Beats))
	}
	w := rec.Beats[0]
	g := back.Beats[0]
	for _, p := range [][2]float64{{w.R, g.R}, {w.POn, g.POn}, {w.PPeak, g.PPeak}, {w.POff, g.POff}, {w.QRSOn, g.QRSOn}, {w.QRSOff, g.QRSOff}, {w.TPeak, g.TPeak}, {w.TEnd, g.TEnd}} {
		if math.Abs(p[0]-p[1]) > 1e-9 {
			t.Errorf("beat 0 fiducial %g read back as %g", p[0], p[1])
		}
	}
	if back.Beats[1].Class != ecg.BeatVentricular || back.Beats[2].Class != ecg.BeatAtrial {
		t.Errorf("classes %c %c", back.Beats[1].Class, back.Beats[2].Class)
	}
	gaps := 0
	for _, a := range f.Annotations {
		if strings.HasPrefix(a.Text, "no signal V") {
			gaps++
			if a.Duration <= 0 {
				t.Errorf("gap annotation without duration: %+v", a)
			}
		}
	}
	if gaps != 12 { // 6 chest leads × (before 2.5 s, after 5 s)
		t.Errorf("%d gap annotations, want 12", gaps)
	}
}

// Header fields at the offsets and widths of the EDF specification
// (Kemp et al. 1992; EDF+ Kemp & Olivan 2003; standards.md §5.1 table).
func TestHeaderLayout(t *testing.T) {
	rec := demoRecord(2, 3)
	b := encode(t, rec, nil)
	f := func(off, n int) string { return string(b[off : off+n]) }
	ns := 13
	want := []struct {
		off, n int
		val    string
	}{
		{0, 8, "0       "},
		{8, 80, pad("X X X X", 80)},
		{88, 80, pad("Startdate X X X X", 80)},
		{168, 8, "01.01.85"},
		{176, 8, "00.00.00"},
		{184, 8, pad(strconv.Itoa(256*(ns+1)), 8)},
		{192, 44, pad("EDF+C", 44)},
		{236, 8, pad("3", 8)},
		{244, 8, pad("1", 8)},
		{252, 4, pad("13", 4)},
		{256, 16, pad("ECG I", 16)},
		{256 + 12*16, 16, pad("EDF Annotations", 16)},
	}
	for _, w := range want {
		if got := f(w.off, w.n); got != w.val {
			t.Errorf("offset %d: %q, want %q", w.off, got, w.val)
		}
	}
	// Per-signal fields are stored field by field: labels (16), transducer
	// (80), dimension (8), physical min (8), max (8), digital min (8),
	// max (8), prefiltering (80), samples per record (8), reserved (32).
	o := 256 + ns*16 + ns*80
	if got := f(o, 8); got != pad("mV", 8) {
		t.Errorf("dimension %q", got)
	}
	o += ns * 8
	if got := f(o, 8); got != pad("-2", 8) { // |I| ≤ 1.7 + noise < 2 mV
		t.Errorf("physical minimum %q", got)
	}
	o += ns * 8
	o += ns * 8
	if got := f(o, 8); got != pad("-32767", 8) {
		t.Errorf("digital minimum %q", got)
	}
	if got := f(o+12*8, 8); got != pad("-32768", 8) {
		t.Errorf("annotation digital minimum %q", got)
	}
	o += ns*8 + ns*8 + ns*80
	if got := f(o, 8); got != pad("500", 8) {
		t.Errorf("samples per record %q", got)
	}
	// First data record: the annotation signal starts with the time-keeping
	// TAL "+0" 0x14 0x14 0x00.
	annSpr, _ := strconv.Atoi(strings.TrimSpace(f(o+12*8, 8)))
	recBytes := 12*500*2 + annSpr*2
	if len(b) != 256*(ns+1)+3*recBytes {
		t.Fatalf("file is %d bytes, want %d", len(b), 256*(ns+1)+3*recBytes)
	}
	ann := b[256*(ns+1)+12*500*2:]
	if !bytes.HasPrefix(ann, []byte("+0\x14\x14\x00")) {
		t.Errorf("first TAL % x", ann[:8])
	}
	// Second record starts "+1" (standards.md: a record 3 s after the
	// start begins 2B 33 14 14 00; here 1 s: 2B 31 14 14 00).
	ann2 := b[256*(ns+1)+recBytes+12*500*2:]
	if !bytes.HasPrefix(ann2, []byte{0x2B, 0x31, 0x14, 0x14, 0x00}) {
		t.Errorf("second record TAL % x", ann2[:8])
	}
	for i := 0; i < 256*(ns+1); i++ {
		if b[i] < 32 || b[i] > 126 {
			t.Fatalf("header byte %d = %d is not printable ASCII", i, b[i])
		}
	}
}

// With identification requested, the EDF+ subfields follow the
// specification: "code sex dd-MMM-yyyy name" with spaces as '_', and
// "Startdate dd-MMM-yyyy admincode technician equipment".
func TestIdentification(t *testing.T) {
	rec := demoRecord(3, 1)
	b := encode(t, rec, &Options{Identify: true})
	if got := strings.TrimSpace(string(b[8:88])); got != "MRN_0042 F 02-AUG-1951 Ada_Example" {
		t.Errorf("patient %q", got)
	}
	if got := strings.TrimSpace(string(b[88:168])); got != "Startdate 09-MAR-2024 Lakeside_Demo_Clinic X paper_scan" {
		t.Errorf("recording %q", got)
	}
	if got := string(b[168:184]); got != "09.03.2414.05.07" {
		t.Errorf("start %q", got)
	}
	f, err := Decode(b)
	if err != nil {
		t.Fatal(err)
	}
	if !f.Header.Start.Equal(rec.Meta.Acquired) {
		t.Errorf("start read back %v", f.Header.Start)
	}
	b = encode(t, rec, &Options{Patient: &Patient{Code: "P-7"}, Recording: &Recording{Technician: "J Doe"}})
	if got := strings.TrimSpace(string(b[8:88])); got != "P-7 X X X" {
		t.Errorf("patient %q", got)
	}
	if got := strings.TrimSpace(string(b[88:168])); got != "Startdate 09-MAR-2024 X J_Doe X" {
		t.Errorf("recording %q", got)
	}
}

// A 1000 Hz, 15-lead record would need 30,000 bytes per 1 s record (fits);
// 12 leads at 5000 Hz need 120,000 bytes, so the record shrinks to 0.5 s
// or less to stay within 61,440 bytes.
func TestRecordDuration(t *testing.T) {
	cases := []struct {
		fs  float64
		ns  int
		dur float64
		spr int
	}{
		{500, 12, 1, 500},
		{360, 2, 1, 360},
		{5000, 12, 0.5, 2500},
		{250.5, 2, 2, 501},
	}
	for _, c := range cases {
		d, spr, err := recordDuration(c.fs, c.ns)
		if err != nil || d != c.dur || spr != c.spr {
			t.Errorf("%g Hz × %d: %g s, %d samples, %v; want %g s, %d", c.fs, c.ns, d, spr, err, c.dur, c.spr)
		}
	}
}

func TestDecodeErrors(t *testing.T) {
	good := encode(t, demoRecord(4, 2), nil)
	cases := map[string][]byte{
		"empty":            nil,
		"short":            good[:100],
		"truncated header": good[:300],
		"truncated data":   good[:len(good)-10],
		"not edf":          append([]byte("PK\x03\x04"), good[4:]...),
		"bad signal count": append(append(append([]byte{}, good[:252]...), []byte("abcd")...), good[256:]...),
	}
	for name, b := range cases {
		t.Run(name, func(t *testing.T) {
			_, err := Decode(b)
			if !errors.Is(err, ecg.ErrUnreadable) {
				t.Errorf("err = %v, want ErrUnreadable", err)
			}
		})
	}
}

func TestWriteFileAtomic(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.edf")
	if err := WriteFile(p, ecg.Record{}, nil); !errors.Is(err, ecg.ErrOutput) {
		t.Errorf("empty record: err = %v", err)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 0 {
		t.Errorf("files left behind: %v", ents)
	}
	if err := WriteFile(p, demoRecord(5, 1), nil); err != nil {
		t.Fatal(err)
	}
	rec, _, err := ReadRecord(p)
	if err != nil || len(rec.Signals) != 12 {
		t.Fatalf("read back: %v, %d leads", err, len(rec.Signals))
	}
}

// biosig's save2gdf (Debian biosig-tools 2.5) as an independent reader:
// standards.md §5.6 notes that it reads 12-lead EDF+C values and TAL
// onset/duration/text back exactly. Compare every recorded sample of its
// CSV export and the beat events of its JSON dump.
func TestBiosigReadsEDF(t *testing.T) {
	biosig.Tool(t)
	rec := demoRecord(6, 10)
	dir := t.TempDir()
	if err := WriteFile(filepath.Join(dir, "demo.edf"), rec, nil); err != nil {
		t.Fatal(err)
	}
	out := biosig.JSON(t, dir, "demo.edf")
	var doc struct {
		NumberOfChannels int
		Samplingrate     float64
		NumberOfSamples  int
		EVENT            []struct {
			TYP         any
			POS         float64
			DUR         float64
			Description string
		}
	}
	if err := json.Unmarshal(out, &doc); err != nil {
		t.Fatalf("JSON: %v", err)
	}
	// biosig counts the EDF Annotations signal as a 13th channel.
	if doc.NumberOfChannels != 13 || doc.Samplingrate != 500 || doc.NumberOfSamples != 5000 {
		t.Errorf("biosig: %d channels at %g Hz, %d samples", doc.NumberOfChannels, doc.Samplingrate, doc.NumberOfSamples)
	}
	found := map[string]float64{}
	for _, e := range doc.EVENT {
		found[e.Description] = e.POS
	}
	for text, at := range map[string]float64{"N": 0.6, "V": 1.5, "A": 2.3, TextQRSOn: 0.56, TextTEnd: 0.95} {
		if pos, ok := found[text]; !ok || math.Abs(pos-at) > 1e-6 {
			t.Errorf("biosig event %q at %v (found %v), want %g s", text, pos, ok, at)
		}
	}
	lines := biosig.CSV(t, dir, "demo.edf", "demo.csv")
	if len(lines) < 5001 {
		t.Fatalf("biosig CSV: %d lines", len(lines))
	}
	checked, nanAsNaN := 0, 0
	for k, line := range lines[len(lines)-5000:] {
		f := strings.Split(strings.TrimSpace(line), ",")
		for j, s := range rec.Signals {
			got, err := strconv.ParseFloat(strings.TrimSpace(f[j]), 64)
			if math.IsNaN(s.Samples[k]) {
				if err != nil || math.IsNaN(got) {
					nanAsNaN++
				} else if k == 0 && j == 6 {
					t.Logf("biosig reads a gap sample of %v as %q", s.Lead, f[j])
				}
				continue
			}
			if err != nil {
				t.Fatalf("row %d col %d %q: %v", k, j, f[j], err)
			}
			if math.Abs(got-s.Samples[k]) > 0.0005+1e-4 {
				t.Fatalf("row %d lead %v: biosig %g, written %g", k, s.Lead, got, s.Samples[k])
			}
			checked++
		}
	}
	t.Logf("biosig agreed on %d samples; %d of 22500 gap samples read as NaN by biosig (the rest as values below the physical minimum)", checked, nanAsNaN)
}

func TestPrefilter(t *testing.T) {
	for in, want := range map[string]string{
		"0.05–150 Hz": "HP:0.05Hz LP:150Hz",
		"0.5-40Hz":    "HP:0.5Hz LP:40Hz",
		"":            "",
		"notch 50 Hz": "notch 50 Hz",
	} {
		if got := prefilter(in); got != want {
			t.Errorf("prefilter(%q) = %q, want %q", in, got, want)
		}
	}
}

// EDF+D: records are placed at their time-keeping TAL; the time between
// records reads as NaN. Built from our EDF+C file by switching the
// reserved field to EDF+D and moving the third record's TAL from +2 to +4.
func TestReadEDFPlusD(t *testing.T) {
	rec := demoRecord(8, 3)
	rec.Signals = rec.Signals[:2]
	rec.Beats = nil
	b := encode(t, rec, nil)
	copy(b[192:], "EDF+D")
	ns := 3
	annSpr, _ := strconv.Atoi(strings.TrimSpace(string(b[256+ns*(16+80+8+8+8+8+8+80)+2*8 : 256+ns*(16+80+8+8+8+8+8+80)+3*8])))
	recBytes := 2*500*2 + 2*annSpr
	third := 256*(ns+1) + 2*recBytes + 2*500*2
	if !bytes.HasPrefix(b[third:], []byte("+2\x14\x14")) {
		t.Fatalf("third record TAL % x", b[third:third+6])
	}
	b[third+1] = '4'
	f, err := Decode(b)
	if err != nil {
		t.Fatal(err)
	}
	back := f.Record()
	s := back.Signal(rec.Signals[0].Lead)
	if len(s.Samples) != 2500 {
		t.Fatalf("%d samples, want 2500 (5 s)", len(s.Samples))
	}
	orig := rec.Signals[0].Samples
	for k := 0; k < 2500; k++ {
		var want float64
		switch {
		case k < 1000:
			want = orig[k]
		case k < 2000:
			want = math.NaN()
		default:
			want = orig[k-1000]
		}
		if math.IsNaN(want) != math.IsNaN(s.Samples[k]) || (!math.IsNaN(want) && math.Abs(want-s.Samples[k]) > 0.0005) {
			t.Fatalf("sample %d: %g, want %g", k, s.Samples[k], want)
		}
	}
}
