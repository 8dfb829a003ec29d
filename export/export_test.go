package export

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/export/aecg"
	"tracelift/export/edf"
	"tracelift/export/wfdb"
	"tracelift/internal/biosig"
	"tracelift/internal/refdata"
	"tracelift/internal/testrecord"
	"tracelift/measure"
)

// demoRecord: invented limb and chest leads at 500 Hz; chest leads only
// between 2.5 and 5 s; an extra lead V4R.
func demoRecord(seed uint64, seconds float64) ecg.Record {
	return testrecord.Build(testrecord.Spec{Seed: seed, Seconds: seconds, Amp: 1.1, Omega: 2 * math.Pi * 1.2, Noise: 0.03,
		Leads: append(append([]ecg.Lead{}, ecg.Standard12...), ecg.LeadV4R),
		Gap:   testrecord.ChestWindow, Meta: ecg.Metadata{Source: "demo.png"}})
}

func TestCSVLayout(t *testing.T) {
	rec := ecg.Record{}
	rec.Set(ecg.Signal{Lead: ecg.LeadII, SampleRate: 250, Samples: []float64{0.12344, -0.00001, math.NaN()}})
	rec.Set(ecg.Signal{Lead: ecg.LeadV3R, SampleRate: 250, Samples: []float64{1, 2, 3}})
	var b bytes.Buffer
	if err := WriteCSV(&b, rec); err != nil {
		t.Fatal(err)
	}
	want := "time_s,I,II,III,aVR,aVL,aVF,V1,V2,V3,V4,V5,V6,V3R\n" +
		"0.000000,,0.1234,,,,,,,,,,,1.0000\n" +
		"0.004000,,0.0000,,,,,,,,,,,2.0000\n" +
		"0.008000,,,,,,,,,,,,,3.0000\n"
	if b.String() != want {
		t.Errorf("got\n%q\nwant\n%q", b.String(), want)
	}
}

// Round trip: values back within the 4-decimal rounding (0.05 µV), NaN as
// NaN, time grid and start kept.
func TestCSVRoundTrip(t *testing.T) {
	rec := demoRecord(1, 6)
	for i := range rec.Signals {
		rec.Signals[i].Start = 1.5 // a record that does not start at 0
	}
	var b bytes.Buffer
	if err := WriteCSV(&b, rec); err != nil {
		t.Fatal(err)
	}
	back, err := ReadCSV(&b, nil)
	if err != nil {
		t.Fatal(err)
	}
	worst := 0.0
	for _, s := range rec.Signals {
		g := back.Signal(s.Lead)
		if g == nil || len(g.Samples) != len(s.Samples) || g.SampleRate != 500 || math.Abs(g.Start-1.5) > 1e-9 {
			t.Fatalf("lead %v shape wrong: %+v", s.Lead, g)
		}
		for k, v := range s.Samples {
			if math.IsNaN(v) != math.IsNaN(g.Samples[k]) {
				t.Fatalf("%v[%d] NaN mismatch", s.Lead, k)
			}
			if !math.IsNaN(v) {
				worst = math.Max(worst, math.Abs(v-g.Samples[k]))
			}
		}
	}
	t.Logf("CSV worst error %.3f µV", worst*1000)
	if worst > 0.00005+1e-12 {
		t.Errorf("CSV error %g mV above 0.05 µV", worst)
	}
}

func TestReadCSVVariants(t *testing.T) {
	cases := []struct {
		name, text string
		opt        *CSVOptions
		lead       ecg.Lead
		fs         float64
		vals       []float64
	}{
		{"semicolon decimal comma", "time;I;aVR\n0,000;0,5;1\n0,002;;2\n", nil, ecg.LeadI, 500, []float64{0.5, math.NaN()}},
		{"no time column", "II,V1\n0.1,1\n0.2,2\n0.3,3\n", &CSVOptions{SampleRate: 250}, ecg.LeadII, 250, []float64{0.1, 0.2, 0.3}},
		{"units in header", "\"I [uV]\",\"V2 (mV)\"\n100,1\n-50,2\n", &CSVOptions{SampleRate: 100}, ecg.LeadI, 100, []float64{0.1, -0.05}},
		{"time in ms, tabs", "time_ms\tV5\n0\t1\n4\t2\n8\tNaN\n", nil, ecg.LeadV5, 250, []float64{1, 2, math.NaN()}},
		{"comments and quoted", "# demo\n\"time_s\",\"MLII\"\n0,1\n0.01,2\n", nil, ecg.LeadII, 100, []float64{1, 2}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rec, err := ReadCSV(strings.NewReader(c.text), c.opt)
			if err != nil {
				t.Fatal(err)
			}
			s := rec.Signal(c.lead)
			if s == nil || s.SampleRate != c.fs || len(s.Samples) != len(c.vals) {
				t.Fatalf("lead %v: %+v", c.lead, s)
			}
			for k, v := range c.vals {
				if math.IsNaN(v) != math.IsNaN(s.Samples[k]) || (!math.IsNaN(v) && math.Abs(v-s.Samples[k]) > 1e-12) {
					t.Errorf("sample %d = %g, want %g", k, s.Samples[k], v)
				}
			}
		})
	}
}

func TestReadCSVErrors(t *testing.T) {
	cases := map[string]string{
		"empty":           "",
		"no lead":         "time_s,foo\n0,1\n",
		"no rate":         "I,II\n1,2\n",
		"bad number":      "time_s,I\n0,1\n0.002,abc\n",
		"non-uniform":     "time_s,I\n0,1\n0.002,2\n0.010,3\n",
		"decreasing time": "time_s,I\n0,1\n-0.002,2\n-0.004,3\n",
		"bad unit":        "time_s,I [furlong]\n0,1\n0.1,2\n",
		"one row":         "time_s,I\n0,1\n",
	}
	for name, text := range cases {
		t.Run(name, func(t *testing.T) {
			_, err := ReadCSV(strings.NewReader(text), nil)
			if !errors.Is(err, ecg.ErrUnreadable) {
				t.Errorf("err = %v, want ErrUnreadable", err)
			}
		})
	}
	if _, err := ReadCSV(strings.NewReader("time_s,I\n0,\n0.1,\n"), nil); !errors.Is(err, ecg.ErrNoECG) {
		t.Errorf("all-empty lead: err = %v, want ErrNoECG", err)
	}
}

// An independent path: our EDF+ file → biosig's save2gdf -CSV (Debian
// biosig-tools) → our CSV reader, with its "I [mV]" headers and no time
// column, gives the original samples back within the EDF step.
func TestReadBiosigCSV(t *testing.T) {
	biosig.Tool(t)
	rec := demoRecord(2, 4)
	rec.Signals = rec.Signals[:6] // limb leads, no gaps
	dir := t.TempDir()
	if err := edf.WriteFile(filepath.Join(dir, "d.edf"), rec, nil); err != nil {
		t.Fatal(err)
	}
	biosig.Run(t, dir, "-CSV", "d.edf", "d.csv")
	back, err := ReadCSVFile(filepath.Join(dir, "d.csv"), &CSVOptions{SampleRate: 500})
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range rec.Signals {
		g := back.Signal(s.Lead)
		if g == nil || len(g.Samples) != len(s.Samples) {
			t.Fatalf("lead %v missing or wrong length (%v)", s.Lead, back.Leads())
		}
		for k := range s.Samples {
			if math.Abs(g.Samples[k]-s.Samples[k]) > 0.0005+1e-4 {
				t.Fatalf("%v[%d]: %g vs %g", s.Lead, k, g.Samples[k], s.Samples[k])
			}
		}
	}
}

// The JSON report: version 1, caution, calibration values with origins,
// NaN written as null, the measure report embedded under "measurements"
// with its own keys, and a read-back that refuses other versions.
func TestReportJSON(t *testing.T) {
	rec := demoRecord(3, 10)
	r := NewReport(rec)
	r.Generator = "tracelift test"
	r.Calibration = &Calibration{
		PxPerMMX:    Value{Value: 11.81, Origin: "grid"},
		PxPerMMY:    Value{Value: 11.80, Origin: "grid"},
		SpeedMMPerS: Value{Value: 25, Origin: "default"},
		GainMMPerMV: Value{Value: 10, Origin: "pulse"},
		RotationDeg: Value{Value: measure.NaN(), Origin: "default"},
	}
	r.Measurements = &measure.Report{HeartRateBPM: 72, PRMS: measure.NaN(), QTcMS: map[string]float64{"bazett": 410}}
	var b bytes.Buffer
	if err := WriteJSON(&b, r); err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b.Bytes(), &m); err != nil {
		t.Fatal(err)
	}
	if m["version"] != 1.0 || m["caution"] != Caution {
		t.Errorf("version %v caution %v", m["version"], m["caution"])
	}
	cal := m["calibration"].(map[string]any)
	if v := cal["gain_mm_mv"].(map[string]any); v["value"] != 10.0 || v["origin"] != "pulse" {
		t.Errorf("gain %v", v)
	}
	if v := cal["rotation_deg"].(map[string]any); v["value"] != nil {
		t.Errorf("NaN rotation written as %v, want null", v["value"])
	}
	meas := m["measurements"].(map[string]any)
	if meas["heart_rate_bpm"] != 72.0 || meas["pr_ms"] != nil || meas["qtc_ms"].(map[string]any)["bazett"] != 410.0 {
		t.Errorf("measurements %v", meas)
	}
	leads := m["leads"].([]any)
	if len(leads) != 13 {
		t.Fatalf("%d leads", len(leads))
	}
	v1 := leads[6].(map[string]any)
	if v1["lead"] != "V1" || math.Abs(v1["start_s"].(float64)-2.5) > 1e-9 || math.Abs(v1["covered_s"].(float64)-2.5) > 1e-9 {
		t.Errorf("V1 entry %v", v1)
	}
	back, err := ReadJSON(bytes.NewReader(b.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	if back.Calibration.PxPerMMX.Value != 11.81 || back.Measurements.HeartRateBPM != 72 {
		t.Errorf("read back %+v", back)
	}
	bad := strings.Replace(b.String(), `"version": 1`, `"version": 2`, 1)
	if _, err := ReadJSON(strings.NewReader(bad)); !errors.Is(err, ecg.ErrUnreadable) {
		t.Errorf("version 2: err = %v", err)
	}
}

// Self-check residual on a real 12-lead record: PTB s0010_re limb leads
// obey III = II − I etc. within 1 µV at every sample (data README, ptbdb
// worked facts), so the residual must be below 1 µV.
func TestReportSelfCheckPTB(t *testing.T) {
	dir := refdata.Dir(t, "ptbdb")
	rec, _, err := wfdb.ReadRecord(filepath.Join(dir, "s0010_re.hea"))
	if err != nil {
		t.Fatal(err)
	}
	for i := range rec.Signals { // 5 s keeps the check quick
		rec.Signals[i].Samples = rec.Signals[i].Samples[:5000]
	}
	r := NewReport(rec)
	if !r.SelfCheck.ResidualUV.Valid() || r.SelfCheck.ResidualUV > 1 || r.SelfCheck.Seconds < 4.99 {
		t.Errorf("self-check %+v", r.SelfCheck)
	}
	// A 50 µV error added to lead III must show up.
	iii := rec.Signal(ecg.LeadIII)
	for k := range iii.Samples {
		iii.Samples[k] += 0.05
	}
	r = NewReport(rec)
	if r.SelfCheck.ResidualUV < 10 || r.SelfCheck.PerLeadUV["III"] < r.SelfCheck.PerLeadUV["aVR"] {
		t.Errorf("offset III not detected: %+v", r.SelfCheck)
	}
}

func TestReadRecordDispatch(t *testing.T) {
	rec := demoRecord(4, 3)
	dir := t.TempDir()
	p := func(n string) string { return filepath.Join(dir, n) }
	if err := WriteCSVFile(p("a.csv"), rec); err != nil {
		t.Fatal(err)
	}
	if err := edf.WriteFile(p("b.edf"), rec, nil); err != nil {
		t.Fatal(err)
	}
	if _, err := wfdb.WriteRecord(dir, "c", rec, nil); err != nil {
		t.Fatal(err)
	}
	if err := wfdb.WriteAnnotationsFile(p("c.atr"), []wfdb.Annotation{{Sample: 250, Code: wfdb.CodeNormal}}); err != nil {
		t.Fatal(err)
	}
	if err := aecg.WriteFile(p("d.xml"), rec, nil); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(p("b.edf"))
	os.WriteFile(p("noext"), b, 0o644)
	os.WriteFile(p("junk.bin"), []byte{0, 1, 2, 3, 0xff}, 0o644)
	os.WriteFile(p("empty"), nil, 0o644)
	for _, name := range []string{"a.csv", "b.edf", "c.hea", "c.dat", "noext", "d.xml"} {
		got, err := ReadRecord(p(name))
		if err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		if len(got.Signals) != 13 || got.Signal(ecg.LeadV4R) == nil {
			t.Errorf("%s: leads %v", name, got.Leads())
		}
		if v := got.Signal(ecg.LeadII).Samples[100]; math.Abs(v-rec.Signal(ecg.LeadII).Samples[100]) > 0.0005+1e-9 { // coarsest step: aECG 1 µV digits
			t.Errorf("%s: II[100] = %g", name, v)
		}
	}
	if got, _ := ReadRecord(p("c.hea")); len(got.Beats) != 1 || got.Beats[0].R != 0.5 {
		t.Errorf("WFDB beats from c.atr: %+v", got.Beats)
	}
	for _, name := range []string{"junk.bin", "empty", "missing.csv"} {
		_, err := ReadRecord(p(name))
		if !errors.Is(err, ecg.ErrUnreadable) || !strings.Contains(err.Error(), name) {
			t.Errorf("%s: err = %v", name, err)
		}
	}
}
