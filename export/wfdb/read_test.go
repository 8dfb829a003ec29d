package wfdb

import (
	"bufio"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/internal/refdata"
)

// Every header in the shared reference data parses, its signal files read
// in full, and the header's initial values and checksums agree with the
// data (the data README states that all of them pass both checks).
func TestReadAllReferenceRecords(t *testing.T) {
	for _, set := range []string{"mitdb", "ptbdb", "ludb", "qtdb"} {
		dir := refdata.Dir(t, set)
		heas, _ := filepath.Glob(filepath.Join(dir, "*.hea"))
		if len(heas) == 0 {
			t.Fatalf("%s: no headers found in %s", set, dir)
		}
		for _, p := range heas {
			rec, h, err := ReadRecord(p)
			if err != nil {
				t.Errorf("%s: %v", p, err)
				continue
			}
			if len(h.Warnings) != 0 {
				t.Errorf("%s: unexpected warnings %v", p, h.Warnings)
			}
			for _, s := range rec.Signals {
				if int64(len(s.Samples)) != h.NSamp {
					t.Errorf("%s lead %v: %d samples, header says %d", p, s.Lead, len(s.Samples), h.NSamp)
				}
			}
		}
	}
}

// Worked facts of MIT-BIH record 100 (shared data README, mitdb section):
// a leading comment line, a blank line and mixed CRLF/LF line endings;
// sample 0 is MLII = 995, V5 = 1011 → −0.145 and −0.065 mV; checksums
// −22131 and 20052; 650,000 samples at 360 Hz.
func TestMITDB100(t *testing.T) {
	dir := refdata.Dir(t, "mitdb")
	rec, h, err := ReadRecord(filepath.Join(dir, "100.hea"))
	if err != nil {
		t.Fatal(err)
	}
	if h.Fs != 360 || h.NSamp != 650000 || len(h.Signals) != 2 {
		t.Fatalf("header: fs %g nsamp %d nsig %d", h.Fs, h.NSamp, len(h.Signals))
	}
	if h.Signals[0].Checksum != -22131 || h.Signals[1].Checksum != 20052 {
		t.Errorf("checksums %d %d", h.Signals[0].Checksum, h.Signals[1].Checksum)
	}
	if len(h.Comments) < 1 || !strings.Contains(h.Comments[0], "unnecessary comment") {
		t.Errorf("leading comment not kept: %q", h.Comments)
	}
	ii, v5 := rec.Signal(ecg.LeadII), rec.Signal(ecg.LeadV5)
	if ii == nil || v5 == nil {
		t.Fatalf("leads %v, want II (from MLII) and V5", rec.Leads())
	}
	if math.Abs(ii.Samples[0]-(-0.145)) > 1e-12 || math.Abs(v5.Samples[0]-(-0.065)) > 1e-12 {
		t.Errorf("sample 0: %g %g, want -0.145 -0.065", ii.Samples[0], v5.Samples[0])
	}
	if ii.SampleRate != 360 || len(ii.Samples) != 650000 {
		t.Errorf("II: %g Hz, %d samples", ii.SampleRate, len(ii.Samples))
	}
}

// PTB s0010_re: 15 signals in two files (.dat and .xyz), CRLF header.
// Sample 0 values in mV from the data README (ptbdb worked facts), and the
// limb-lead identities within 1 µV at every sample (2 digital units at
// 2000 adu/mV; README: "Lead arithmetic holds to within 2 digital units").
func TestPTBLeadArithmetic(t *testing.T) {
	dir := refdata.Dir(t, "ptbdb")
	rec, h, err := ReadRecord(filepath.Join(dir, "s0010_re.hea"))
	if err != nil {
		t.Fatal(err)
	}
	if len(h.Signals) != 15 || len(rec.Signals) != 15 {
		t.Fatalf("%d header signals, %d record signals; want 15 and 15", len(h.Signals), len(rec.Signals))
	}
	want := map[ecg.Lead]float64{
		ecg.LeadI: -0.2445, ecg.LeadII: -0.2290, ecg.LeadIII: 0.0155, ecg.LeadAVR: 0.2370,
		ecg.LeadAVL: -0.1300, ecg.LeadAVF: -0.1070, ecg.LeadV1: -0.0440, ecg.LeadV2: -0.1205,
		ecg.LeadV3: -0.0560, ecg.LeadV4: 0.1060, ecg.LeadV5: 0.1965, ecg.LeadV6: 0.1950,
	}
	for l, v := range want {
		if got := rec.Signal(l).Samples[0]; math.Abs(got-v) > 1e-9 {
			t.Errorf("%v sample 0 = %g mV, want %g", l, got, v)
		}
	}
	for _, l := range []ecg.Lead{ecg.LeadX, ecg.LeadY, ecg.LeadZ} {
		if rec.Signal(l) == nil {
			t.Errorf("Frank lead %v from the .xyz file missing", l)
		}
	}
	d, err := ecg.DeriveLimb(*rec.Signal(ecg.LeadI), *rec.Signal(ecg.LeadII))
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range d {
		rs := rec.Signal(s.Lead)
		worst := 0.0
		for k := range s.Samples {
			worst = math.Max(worst, math.Abs(s.Samples[k]-rs.Samples[k]))
		}
		if worst > 0.001+1e-9 {
			t.Errorf("%v: derived vs recorded differ by %.4f mV, want ≤ 1 µV", s.Lead, worst)
		}
	}
	ii := rec.Signal(ecg.LeadII)
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range ii.Samples {
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	// README: "Lead ii spans −0.6845 to +0.5505 mV over the record."
	if math.Abs(lo+0.6845) > 1e-9 || math.Abs(hi-0.5505) > 1e-9 {
		t.Errorf("II range %g..%g, want -0.6845..0.5505", lo, hi)
	}
}

// QTDB sel100 and sel102: fs/counterfreq "250/360" and an explicit
// baseline 200(0) that wins over adczero 1024 (README: sel100 MLII sample
// 0: 945 → 4.725 mV; sel102 V2 sample 0: 1262 → 6.31 mV).
func TestQTDBBaselineAndCounterFreq(t *testing.T) {
	dir := refdata.Dir(t, "qtdb")
	rec, h, err := ReadRecord(filepath.Join(dir, "sel100.hea"))
	if err != nil {
		t.Fatal(err)
	}
	if h.Fs != 250 || h.CounterFreq != 360 || h.Signals[0].Baseline != 0 || h.Signals[0].ADCZero != 1024 {
		t.Errorf("sel100 header: fs %g counter %g baseline %d adczero %d", h.Fs, h.CounterFreq, h.Signals[0].Baseline, h.Signals[0].ADCZero)
	}
	if v := rec.Signal(ecg.LeadII).Samples[0]; math.Abs(v-4.725) > 1e-12 {
		t.Errorf("sel100 MLII sample 0 = %g, want 4.725", v)
	}
	rec, _, err = ReadRecord(filepath.Join(dir, "sel102.hea"))
	if err != nil {
		t.Fatal(err)
	}
	if v := rec.Signal(ecg.LeadV2).Samples[0]; math.Abs(v-6.31) > 1e-12 {
		t.Errorf("sel102 V2 sample 0 = %g, want 6.31", v)
	}
	// sel30's signals are "ECG1"/"ECG2": not lead names, so they stay in
	// the header and in ReadSignals but out of the Record.
	rec, h, err = ReadRecord(filepath.Join(dir, "sel30.hea"))
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Signals) != 0 || len(h.Signals) != 2 || h.NSamp != 224993 {
		t.Errorf("sel30: %d record signals, %d header signals, %d samples", len(rec.Signals), len(h.Signals), h.NSamp)
	}
	_, phys, err := ReadSignals(filepath.Join(dir, "sel30.hea"))
	if err != nil || len(phys) != 2 || len(phys[0]) != 224993 {
		t.Fatalf("sel30 ReadSignals: %v", err)
	}
	// sel30 header: initial value 13 at gain 200, adczero 0 → 0.065 mV.
	if math.Abs(phys[0][0]-0.065) > 1e-12 {
		t.Errorf("sel30 ECG1 sample 0 = %g, want 0.065", phys[0][0])
	}
}

// LUDB record 1: gain(baseline)/units per lead; README: lead i initial
// value −120, checksum −32198, gain 1716 and baseline 6.
func TestLUDB1Header(t *testing.T) {
	dir := refdata.Dir(t, "ludb")
	rec, h, err := ReadRecord(filepath.Join(dir, "1.hea"))
	if err != nil {
		t.Fatal(err)
	}
	s := h.Signals[0]
	if s.Gain != 1716 || s.Baseline != 6 || s.Units != "mV" || s.InitVal != -120 || s.Checksum != -32198 {
		t.Errorf("1.hea lead i: %+v", s)
	}
	if len(rec.Signals) != 12 {
		t.Fatalf("%d leads", len(rec.Signals))
	}
	if v := rec.Signal(ecg.LeadI).Samples[0]; math.Abs(v-(-126.0/1716)) > 1e-12 {
		t.Errorf("lead I sample 0 = %g, want (−120−6)/1716", v)
	}
}

// 100.atr against the WFDB reference tool's text dump
// (mitdb/reference/100.atr.rdann.txt, rdann -r 100 -a atr): every line's
// sample, symbol, sub, chan, num and aux must match; counts from the data
// README: 2,274 annotations, 2,239 N, 33 A, 1 V, 1 '+' with aux "(N".
func TestMITDBAnnotationsMatchRdann(t *testing.T) {
	dir := refdata.Dir(t, "mitdb")
	anns := readAnnotations(t, filepath.Join(dir, "100.atr"), 360)
	if len(anns) != 2274 {
		t.Fatalf("%d annotations, want 2274", len(anns))
	}
	count := map[string]int{}
	for _, a := range anns {
		count[a.Symbol]++
	}
	if count["N"] != 2239 || count["A"] != 33 || count["V"] != 1 || count["+"] != 1 {
		t.Errorf("counts %v", count)
	}
	if anns[0].Symbol != "+" || anns[0].Aux != "(N" || anns[0].Sample != 18 {
		t.Errorf("first annotation %+v", anns[0])
	}
	f, err := os.Open(filepath.Join(dir, "reference", "100.atr.rdann.txt"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	k := 0
	for sc.Scan() {
		line := strings.TrimRight(sc.Text(), "\r")
		aux := ""
		if i := strings.IndexByte(line, '\t'); i >= 0 {
			aux = line[i+1:]
			line = line[:i]
		}
		fs := strings.Fields(line)
		if len(fs) < 6 {
			t.Fatalf("reference line %d malformed: %q", k+1, line)
		}
		if k >= len(anns) {
			t.Fatalf("reference has more lines than the decoder's %d annotations", len(anns))
		}
		a := anns[k]
		samp, _ := strconv.ParseInt(fs[1], 10, 64)
		sub, _ := strconv.Atoi(fs[3])
		chn, _ := strconv.Atoi(fs[4])
		num, _ := strconv.Atoi(fs[5])
		if a.Sample != samp || a.Symbol != fs[2] || a.Sub != sub || a.Chan != chn || a.Num != num || a.Aux != aux {
			t.Fatalf("line %d: got %+v, reference %q aux %q", k+1, a, line, aux)
		}
		k++
	}
	if k != len(anns) {
		t.Errorf("reference has %d lines, decoder %d annotations", k, len(anns))
	}
}

// sel100.atr: 1,134 annotations (1,115 N, 19 A); each beat equals the
// matching 100.atr beat at (t₁₀₀ − 151,201) × 250/360 within ±1 sample
// (data README, qtdb and mitdb sections).
func TestQTDBSel100Beats(t *testing.T) {
	q := refdata.Dir(t, "qtdb")
	m := refdata.Dir(t, "mitdb")
	sel := readAnnotations(t, filepath.Join(q, "sel100.atr"), 250)
	if len(sel) != 1134 {
		t.Fatalf("sel100.atr: %d annotations, want 1134", len(sel))
	}
	cnt := map[string]int{}
	for _, a := range sel {
		cnt[a.Symbol]++
	}
	if cnt["N"] != 1115 || cnt["A"] != 19 {
		t.Errorf("sel100.atr counts %v", cnt)
	}
	full := readAnnotations(t, filepath.Join(m, "100.atr"), 360)
	j := 0
	for _, a := range sel {
		for j < len(full) && (full[j].Symbol == "+" || float64(full[j].Sample-151201)*250/360 < float64(a.Sample)-1.5) {
			j++
		}
		if j >= len(full) {
			t.Fatalf("no 100.atr beat for sel100 beat at %d", a.Sample)
		}
		want := float64(full[j].Sample-151201) * 250 / 360
		if math.Abs(want-float64(a.Sample)) > 1 || full[j].Symbol != a.Symbol {
			t.Fatalf("sel100 beat %s@%d vs 100.atr %s@%d (→ %.1f)", a.Symbol, a.Sample, full[j].Symbol, full[j].Sample, want)
		}
		j++
	}
}

// LUDB 1.ii: 48 marks, (onset, peak, offset) triples listed in the data
// README (ludb worked facts).
func TestLUDB1iiDelineation(t *testing.T) {
	dir := refdata.Dir(t, "ludb")
	anns := readAnnotations(t, filepath.Join(dir, "1.ii"), 500)
	if len(anns) != 48 {
		t.Fatalf("%d marks, want 48", len(anns))
	}
	want := [][4]any{
		{"N", 644, 662, 682}, {"t", 776, 843, 878}, {"p", 1250, 1278, 1302}, {"N", 1324, 1342, 1374},
		{"t", 1458, 1524, 1572}, {"p", 1911, 1935, 1955}, {"N", 1979, 2000, 2028}, {"t", 2120, 2176, 2224},
		{"p", 2546, 2578, 2599}, {"N", 2624, 2642, 2668}, {"t", 2765, 2824, 2871}, {"p", 3223, 3247, 3270},
		{"N", 3286, 3314, 3347}, {"t", 3434, 3491, 3539}, {"p", 3879, 3903, 3926}, {"N", 3950, 3969, 3996},
	}
	for k, w := range want {
		on, pk, off := anns[3*k], anns[3*k+1], anns[3*k+2]
		if on.Symbol != "(" || off.Symbol != ")" || pk.Symbol != w[0].(string) ||
			on.Sample != int64(w[1].(int)) || pk.Sample != int64(w[2].(int)) || off.Sample != int64(w[3].(int)) {
			t.Errorf("wave %d: got %s%d %s%d %s%d, want %v", k, on.Symbol, on.Sample, pk.Symbol, pk.Sample, off.Symbol, off.Sample, w)
		}
	}
	if math.Abs(anns[0].Time-1.288) > 1e-12 {
		t.Errorf("first QRS onset at %g s, want 1.288", anns[0].Time)
	}
}

func TestHeaderErrors(t *testing.T) {
	cases := []struct{ name, text string }{
		{"empty", ""},
		{"only comments", "# nothing\n"},
		{"bad nsig", "r x 250\n"},
		{"missing signal line", "r 2 250 10\nr.dat 16 200 16 0 0 0 0 I\n"},
		{"bad format", "r 1 250 10\nr.dat abc 200\n"},
		{"unsupported format", "r 1 250 10\nr.dat 311 200\n"},
		{"bad gain", "r 1 250 10\nr.dat 16 2x0(0)/mV\n"},
		{"bad baseline", "r 1 250 10\nr.dat 16 200(a)/mV\n"},
		{"bad fs", "r 1 -5 10\nr.dat 16\n"},
		{"multi-segment", "r/3 1 250 10\n"},
		{"bad adczero", "r 1 250 10\nr.dat 16 200 16 zz\n"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseHeader(strings.NewReader(c.text))
			if !errors.Is(err, ecg.ErrUnreadable) {
				t.Errorf("err = %v, want ErrUnreadable", err)
			}
		})
	}
}

// Defaults when fields are missing (header(5)): fs 250, gain 200 marked
// uncalibrated, units mV, baseline = adczero.
func TestHeaderDefaults(t *testing.T) {
	h, err := ParseHeader(strings.NewReader("rec 2\nrec.dat 16\nrec.dat 16 0 12 7 1 2 0 V1 lead\n"))
	if err != nil {
		t.Fatal(err)
	}
	if h.Fs != 250 || h.NSamp != 0 {
		t.Errorf("fs %g nsamp %d", h.Fs, h.NSamp)
	}
	a, b := h.Signals[0], h.Signals[1]
	if a.Gain != 200 || !a.Uncalibrated || a.Units != "mV" || a.HasChecksum || a.HasInitVal {
		t.Errorf("signal 0: %+v", a)
	}
	if b.Gain != 200 || !b.Uncalibrated || b.Baseline != 7 || b.ADCRes != 12 || b.InitVal != 1 || b.Checksum != 2 || b.Description != "V1 lead" {
		t.Errorf("signal 1: %+v", b)
	}
}

func TestTruncatedSignalFile(t *testing.T) {
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "r.hea"), []byte("r 2 500 100\nr.dat 16 200 16 0 0 0 0 I\nr.dat 16 200 16 0 0 0 0 II\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "r.dat"), make([]byte, 399), 0o644)
	_, _, err := ReadRecord(filepath.Join(dir, "r.hea"))
	if !errors.Is(err, ecg.ErrUnreadable) || !strings.Contains(err.Error(), "truncated") || !strings.Contains(err.Error(), "r.hea") {
		t.Errorf("err = %v", err)
	}
	os.Remove(filepath.Join(dir, "r.dat"))
	_, _, err = ReadRecord(filepath.Join(dir, "r.hea"))
	if !errors.Is(err, ecg.ErrUnreadable) {
		t.Errorf("missing .dat: err = %v", err)
	}
}

// A corrupted sample makes the checksum check fail with a warning (the
// data are still returned).
func TestChecksumMismatchWarns(t *testing.T) {
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "r.hea"), []byte("r 1 500 3\nr.dat 16 200 16 0 5 12 0 I\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "r.dat"), []byte{5, 0, 3, 0, 5, 0}, 0o644) // sum 13, header says 12
	rec, h, err := ReadRecord(filepath.Join(dir, "r.hea"))
	if err != nil {
		t.Fatal(err)
	}
	if len(h.Warnings) != 1 || !strings.Contains(h.Warnings[0], "checksum") || len(rec.Meta.Notes) != 1 {
		t.Errorf("warnings %v notes %v", h.Warnings, rec.Meta.Notes)
	}
}

// Per-format facts of the signal-file formats (PhysioNet signal(5) and
// header(5) manual pages; the invalid-sample values are the table of the
// WFDB Python package, WFDB_INVALID_SAMPLE for format 16; from memory):
// bits a sample, the ADC resolution a header implies when it gives none,
// and the digital value that marks a missing sample (the most negative
// value of the stored width).
func TestFormatFacts(t *testing.T) {
	for _, c := range []struct{ format, bits, adcRes, invalid int }{
		{16, 16, 16, -32768}, {61, 16, 16, -32768}, {160, 16, 16, -32768},
		{80, 8, 8, -128}, {212, 12, 12, -2048}, {24, 24, 24, -8388608}, {32, 32, 32, math.MinInt32},
	} {
		if b, r, v := bitsPerSample(c.format), defaultADCRes(c.format), invalidValue(c.format); b != c.bits || r != c.adcRes || v != c.invalid {
			t.Errorf("format %d: %d bits, ADC resolution %d, invalid %d; want %d, %d, %d", c.format, b, r, v, c.bits, c.adcRes, c.invalid)
		}
	}
}

// readAnnotations reads the annotation file at path (record at fs Hz),
// failing t when it cannot.
func readAnnotations(t *testing.T, path string, fs float64) []Annotation {
	t.Helper()
	anns, err := ReadAnnotations(path, fs)
	if err != nil {
		t.Fatal(err)
	}
	return anns
}
