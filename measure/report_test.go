package measure

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"

	"tracelift/synth"
)

// TestQTc checks the four QTc formulas against the worked examples of
// standards.md §2.2 (Bazett 1920, Fridericia 1920, Sagie et al. 1992
// "Framingham", Hodges et al. 1983), to 0.1 ms.
func TestQTc(t *testing.T) {
	rows := []struct {
		qt, hr             float64
		baz, fri, fra, hod float64
	}{
		{400, 60, 400.0, 400.0, 400.0, 400.0},
		{380, 75, 424.9, 409.3, 410.8, 406.2},
		{360, 90, 440.9, 412.1, 411.3, 412.5},
		{320, 120, 452.5, 403.2, 397.0, 425.0},
		{440, 50, 401.7, 414.1, 409.2, 422.5},
	}
	for _, r := range rows {
		rr := 60000 / r.hr
		for _, c := range []struct {
			f    string
			want float64
		}{{"bazett", r.baz}, {"fridericia", r.fri}, {"framingham", r.fra}, {"hodges", r.hod}} {
			got := QTc(c.f, r.qt, rr)
			if math.Abs(got-c.want) > 0.051 {
				t.Errorf("QTc %s(QT %.0f, HR %.0f) = %.2f, want %.1f", c.f, r.qt, r.hr, got, c.want)
			}
		}
	}
	if !math.IsNaN(QTc("bazett", 400, 0)) || !math.IsNaN(QTc("nope", 400, 1000)) {
		t.Error("QTc: want NaN for RR 0 or an unknown formula")
	}
}

// TestFrontalAxis checks θ = atan2(2·aVF, √3·I) on the worked examples of
// standards.md §2.3 and on the hexaxial lead directions (I 0°, aVF +90°,
// II +60° with I = cos 60°, aVF = (√3/2) sin 60°).
func TestFrontalAxis(t *testing.T) {
	cases := []struct{ i, avf, want float64 }{
		{0.8, 0.5, 35.8},
		{0.6, -0.4, -37.6},
		{1, 0, 0},
		{0, 1, 90},
		{math.Cos(math.Pi / 3), math.Sqrt(3) / 2 * math.Sin(math.Pi/3), 60},
		{-1, 0, 180},
	}
	for _, c := range cases {
		if got := FrontalAxis(c.i, c.avf); math.Abs(got-c.want) > 0.05 {
			t.Errorf("FrontalAxis(%g, %g) = %.2f°, want %.1f°", c.i, c.avf, got, c.want)
		}
	}
	if !math.IsNaN(FrontalAxis(0, 0)) {
		t.Error("FrontalAxis(0, 0): want NaN")
	}
}

// TestHeartRate: HR = 60 000 / RR[ms] (standards.md §2.1); 1500 / RR[mm]
// at 25 mm/s gives the same (20 mm = 800 ms → 75 bpm).
func TestHeartRate(t *testing.T) {
	for _, c := range []struct{ rr, hr float64 }{{1000, 60}, {800, 75}, {500, 120}, {1200, 50}} {
		if got := HeartRate(c.rr); math.Abs(got-c.hr) > 1e-9 {
			t.Errorf("HeartRate(%g) = %g, want %g", c.rr, got, c.hr)
		}
	}
	if !math.IsNaN(HeartRate(0)) {
		t.Error("HeartRate(0): want NaN")
	}
}

// TestReportJSONAndSummary checks that a report marshals without NaN
// (null instead), carries the caution, round-trips, and that the summary
// names every interval and QTc formula.
func TestReportJSONAndSummary(t *testing.T) {
	p := synth.Default()
	rec, err := synth.Generate(p, 21)
	if err != nil {
		t.Fatal(err)
	}
	rec.Beats = nil
	rep, err := Measure(rec, &Options{Sex: "F"})
	if err != nil {
		t.Fatal(err)
	}
	rep.PMS = NaN() // force a null
	b, err := json.Marshal(rep)
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	for _, k := range []string{`"heart_rate_bpm":`, `"p_ms":null`, `"qtc_ms":{`, `"bazett":`, `"fridericia":`, `"framingham":`, `"hodges":`,
		`"axes":{"p_deg":`, `"qrs_deg":`, `"leads":[{"lead":"I"`, `"st_j60_mv":`, `"sokolow_lyon_mv":`, `"cornell_mv":`, `"beats":[{"r_s":`, `"class":"N"`, `"caution":"These are measurements`} {
		if !strings.Contains(s, k) {
			t.Errorf("JSON lacks %s", k)
		}
	}
	if strings.Contains(s, "NaN") {
		t.Error("JSON contains NaN")
	}
	var back Report
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	if back.PMS.Valid() || back.QRSMS != rep.QRSMS || len(back.Leads) != 12 {
		t.Errorf("round trip: P %v QRS %v/%v leads %d", back.PMS, back.QRSMS, rep.QRSMS, len(back.Leads))
	}
	eb := rep.ECGBeats()
	if len(eb) != len(rep.Beats) || len(eb) < 10 {
		t.Fatalf("ECGBeats: %d beats, report %d", len(eb), len(rep.Beats))
	}
	for i, b := range eb {
		if b.R != rep.Beats[i].RS || !(b.QRSOn < b.R && b.R < b.QRSOff) || string(rune(b.Class)) != rep.Beats[i].Class {
			t.Errorf("ECGBeats[%d] = %+v, report beat %+v", i, b, rep.Beats[i])
		}
	}
	var buf bytes.Buffer
	if err := rep.WriteSummary(&buf); err != nil {
		t.Fatal(err)
	}
	out := buf.String()
	for _, k := range []string{"Heart rate", "PR", "QRS", "QT", "bazett", "fridericia", "framingham", "hodges", "Axes", "Caution: These are measurements"} {
		if !strings.Contains(out, k) {
			t.Errorf("summary lacks %q:\n%s", k, out)
		}
	}
	t.Logf("summary:\n%s", out)
}
