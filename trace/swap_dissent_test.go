package trace

import (
	"image"
	"math"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/grid"
)

// dissentLeads returns the six limb leads (ecg.LimbLeads order) of an
// invented 10 s record at 500 Hz, 75 beats/min: per beat an R wave of
// 1.6 mV in I and 1.1 mV in II (frontal axis about 40°), an S wave after
// it and a T wave, with slow waves between; III, aVR, aVL and aVF are
// derived by Einthoven's and Goldberger's laws (standards.md §1.3), the
// same relations the check relies on, so the record is consistent by
// construction. It also returns the centres of the R waves, s.
func dissentLeads() ([6][]float64, []float64) {
	const fs, n = 500.0, 5000
	var beats []float64
	for r := 0.4; r < 9.8; r += 0.8 {
		beats = append(beats, r)
	}
	g := func(tt, c, w float64) float64 { return math.Exp(-0.5 * math.Pow((tt-c)/w, 2)) }
	lI, lII := make([]float64, n), make([]float64, n)
	for k := range n {
		tt := float64(k) / fs
		lI[k], lII[k] = 0.05*math.Sin(2*math.Pi*0.3*tt), 0.04*math.Cos(2*math.Pi*0.2*tt)
		for _, r := range beats {
			lI[k] += 1.6*g(tt, r, 0.010) - 0.2*g(tt, r+0.03, 0.008) + 0.25*g(tt, r+0.25, 0.04)
			lII[k] += 1.1*g(tt, r+0.004, 0.010) - 0.3*g(tt, r+0.035, 0.008) + 0.3*g(tt, r+0.26, 0.04)
		}
	}
	var out [6][]float64
	for j, l := range ecg.LimbLeads {
		a, b, _ := ecg.FrontalCoefficients(l)
		out[j] = make([]float64, n)
		for k := range n {
			out[j][k] = a*lI[k] + b*lII[k]
		}
	}
	return out, beats
}

// dissentPanels puts the leads on six panels of one 12 × 1-like page at
// 20 mm/mV (the gain of the eval's overlap pages).
func dissentPanels(leads [6][]float64) (grid.Calibration, []*Panel, [][]float64) {
	cal := grid.Calibration{
		PxPerMMX: grid.Value{V: 10}, PxPerMMY: grid.Value{V: 10},
		SpeedMMPerS: grid.Value{V: 25}, GainMMPerMV: grid.Value{V: 20},
	}
	var panels []*Panel
	var vals [][]float64
	for j, l := range ecg.LimbLeads {
		panels = append(panels, &Panel{Lead: l, Row: j, T0: 0, T1: 10, Quality: 1})
		vals = append(vals, append([]float64(nil), leads[j]...))
	}
	return cal, panels, vals
}

// qrsError returns the RMS difference between a and b over ±30 ms of the
// beats (NaN samples of a counted as 0 mV, as the eval scores a withheld
// sample), and how many samples of a there are NaN.
func qrsError(a, b []float64, beats []float64) (rms float64, nan int) {
	s, m := 0.0, 0
	for _, r := range beats {
		for k := int((r - 0.03) * 500); k <= int((r+0.03)*500); k++ {
			x := a[k]
			if math.IsNaN(x) {
				x = 0
				nan++
			}
			s += (x - b[k]) * (x - b[k])
			m++
		}
	}
	return math.Sqrt(s / float64(m)), nan
}

// TestWithholdDissentTwoBrokenTogether: the case the consensus of
// guideLimb misses (overlap 12x1 seed 2): aVR and aVL read other rows'
// strokes at every beat, aVR a 0.45 mV R wave for its −1.35 mV QS and
// aVL −0.55 mV for its +1.05 mV R, and with aVF the two still satisfy
// aVR + aVL + aVF ≈ 0, so a pair of them fits the third. I, II, III and
// aVF agree on the true vector; the two broken leads' QRS stretches are
// withheld at every beat and nothing else is touched.
func TestWithholdDissentTwoBrokenTogether(t *testing.T) {
	truth, beats := dissentLeads()
	cal, panels, vals := dissentPanels(truth)
	const iR, iL = 3, 4 // aVR, aVL in ecg.LimbLeads
	for k := range vals[iR] {
		// The broken readings: another row's strokes in the QRS, scaled
		// from the true vector so that they keep their timing.
		vals[iR][k] = -truth[iR][k] / 3
		vals[iL][k] = -truth[iL][k] / 2
	}
	// Outside the QRS the readings are the truth.
	for k := range vals[iR] {
		inQRS := false
		for _, r := range beats {
			inQRS = inQRS || math.Abs(float64(k)/500-r) < 0.045
		}
		if !inQRS {
			vals[iR][k], vals[iL][k] = truth[iR][k], truth[iL][k]
		}
	}
	before := [2]float64{}
	before[0], _ = qrsError(vals[iR], truth[iR], beats)
	before[1], _ = qrsError(vals[iL], truth[iL], beats)
	warns := withholdDissent(nil, cal, 500, panels, vals, nil, nil, defaultDissent)
	for j, l := range ecg.LimbLeads {
		e, nan := qrsError(vals[j], truth[j], beats)
		switch j {
		case iR, iL:
			b := before[0]
			if j == iL {
				b = before[1]
			}
			// Withheld, the QRS error is the truth's own size there:
			// 3/4 of the broken aVR's (read −1/3 of the truth) and 2/3
			// of aVL's (−1/2) when the whole QRS is withheld.
			if nan < 6*len(beats) || e > 0.8*b {
				t.Errorf("%v: %d samples withheld, QRS error %.3f mV (%.3f before)", l, nan, e, b)
			}
		default:
			if nan > 0 || e > 1e-9 {
				t.Errorf("%v: agreeing lead changed: %d withheld, error %.3f mV", l, nan, e)
			}
		}
	}
	if len(warns) != 2 || !strings.Contains(warns[0], "aVR") || !strings.Contains(warns[1], "aVL") {
		t.Errorf("warnings %q, want one for aVR and one for aVL", warns)
	}
}

// TestWithholdDissentKeeps: what the check must leave alone. Consistent
// leads; leads whose apexes were clipped (a reading larger than the
// others predict, the same way, may be right); a lead off at one beat
// only; and three leads alone (one identity cannot tell which is wrong).
func TestWithholdDissentKeeps(t *testing.T) {
	truth, beats := dissentLeads()
	cases := []struct {
		name  string
		leads []int // the panels kept (indices into ecg.LimbLeads)
		edit  func(vals [][]float64)
	}{
		{"consistent", []int{0, 1, 2, 3, 4, 5}, func([][]float64) {}},
		{"apexes clipped", []int{0, 1, 2, 3, 4, 5}, func(vals [][]float64) {
			// Every lead but aVR loses what lies beyond ±0.5 mV (a band
			// edge); aVR read in full (−1.35 mV) is larger than the
			// clipped leads predict, the same way.
			for _, j := range []int{0, 1, 2, 4, 5} {
				for k, v := range vals[j] {
					vals[j][k] = math.Max(-0.5, math.Min(v, 0.5))
				}
			}
		}},
		{"one beat off", []int{0, 1, 2, 3, 4, 5}, func(vals [][]float64) {
			r := beats[3]
			for k := int((r - 0.02) * 500); k <= int((r+0.02)*500); k++ {
				vals[3][k] = -vals[3][k]
			}
		}},
		{"three beats of twelve", []int{0, 1, 2, 3, 4, 5}, func(vals [][]float64) {
			// aVR and aVL read upside down together (as in
			// TestWithholdDissentTwoBrokenTogether) at three beats only,
			// and no lead dissents elsewhere: not a path on another row's
			// stroke, which would take it at every beat.
			for _, b := range []int{2, 5, 8} {
				r := beats[b]
				for k := int((r - 0.045) * 500); k <= int((r+0.045)*500); k++ {
					vals[3][k], vals[4][k] = -truth[3][k]/3, -truth[4][k]/2
				}
			}
		}},
		{"three leads", []int{3, 4, 5}, func(vals [][]float64) {
			for k := range vals[5] {
				vals[5][k] = -2 * vals[5][k]
			}
		}},
	}
	for _, c := range cases {
		cal, panels, vals := dissentPanels(truth)
		c.edit(vals)
		var ps []*Panel
		var vs [][]float64
		for _, j := range c.leads {
			ps = append(ps, panels[j])
			vs = append(vs, vals[j])
		}
		requireUntouched(t, c.name, ps, vs, func() []string {
			return withholdDissent(nil, cal, 500, ps, vs, nil, nil, defaultDissent)
		})
	}
}

// TestDissenters checks the per-sample fit on single columns of values.
func TestDissenters(t *testing.T) {
	coef := limbCoefficients()
	lead := func(hI, hII float64) [6]float64 {
		var v [6]float64
		for k := range v {
			v[k] = coef[k][0]*hI + coef[k][1]*hII
		}
		return v
	}
	nan := math.NaN()
	cases := []struct {
		name string
		v    [6]float64
		want uint8
	}{
		{"consistent", lead(1.6, 1.1), 0},
		// aVR read upside down (+0.7 for −1.35).
		{"aVR reversed", func() [6]float64 { v := lead(1.6, 1.1); v[3] = 0.7; return v }(), 1 << 3},
		// Reversed, but aVL absent: four agreeing leads of five.
		{"aVR reversed, aVL absent", func() [6]float64 { v := lead(1.6, 1.1); v[3], v[4] = 0.7, nan; return v }(), 1 << 3},
		// aVR larger the same way: not a dissent.
		{"aVR larger", func() [6]float64 { v := lead(1.6, 1.1); v[3] = -2.5; return v }(), 0},
		// Small predictions (near 0 mV): nothing to point against.
		{"near zero", func() [6]float64 { v := lead(0.05, 0.04); v[3] = 0.3; return v }(), 0},
		// Half the leads for a wrong vector: aVL and aVF read upside down
		// agree with III, against I, II (clipped) and aVR (overlap 12x1
		// seed 4, where I was withheld at every beat although right).
		{"half", [6]float64{1.38, 1.16, 0.44, -0.24, -0.93, -0.13}, 0},
		// Three present: no majority.
		{"three", [6]float64{nan, nan, nan, -1.35, 0.5, -0.3}, 0},
		// aVR and aVL reversed together, consistent with aVF between
		// them, against I, II and III: four against three.
		{"two together", func() [6]float64 { v := lead(1.6, 1.1); v[3], v[4] = 0.45, -0.7; return v }(), 1<<3 | 1<<4},
	}
	tol, off, minPred := 0.3, 0.5, 0.15
	for _, c := range cases {
		var out [6]float64
		if got := dissenters(&c.v, &coef, tol, off, minPred, &out); got != c.want {
			t.Errorf("%s: dissenters %06b, want %06b", c.name, got, c.want)
		}
	}
}

// BenchmarkWithholdDissent: the check on six simultaneous 10 s limb
// leads at 500 Hz, two of them broken at every beat (the work on a
// 12 × 1 page).
func BenchmarkWithholdDissent(b *testing.B) {
	truth, _ := dissentLeads()
	cal, panels, vals := dissentPanels(truth)
	for k := range vals[3] {
		vals[3][k], vals[4][k] = -truth[3][k]/3, -truth[4][k]/2
	}
	work := make([][]float64, len(vals))
	b.ReportAllocs()
	for b.Loop() {
		for j := range vals {
			work[j] = append(work[j][:0], vals[j]...)
		}
		withholdDissent(nil, cal, 500, panels, work, nil, nil, defaultDissent)
	}
}

// TestRereadDissentOnInk: as TestWithholdDissentTwoBrokenTogether, with
// the true traces printed on an ink map (10 px/mm, 25 mm/s, 20 mm/mV,
// rows 40 mm apart): where the value the agreeing leads predict for aVR
// and aVL lies on their own ink, the dissent stretches are re-read at it
// instead of withheld, and the QRS error falls well below the withheld
// stretches' (their truth's own size).
func TestRereadDissentOnInk(t *testing.T) {
	truth, beats := dissentLeads()
	const x0, pxPerS, pxPerMV = 20.0, 250.0, 200.0
	ink := image.NewGray(image.Rect(0, 0, 2540, 2700))
	read := func(withInk bool) ([][]float64, []string) {
		cal, panels, vals := dissentPanels(truth)
		xs := make([]float64, len(panels))
		for j, pn := range panels {
			pn.ZeroY = 350 + 400*float64(j)
			pn.Bounds = image.Rect(0, int(pn.ZeroY)-350, 2540, int(pn.ZeroY)+350)
			xs[j] = x0
		}
		for k := range vals[3] {
			if inQRS(k, beats) {
				vals[3][k], vals[4][k] = -truth[3][k]/3, -truth[4][k]/2
			}
		}
		if !withInk {
			return vals, withholdDissent(nil, cal, 500, panels, vals, nil, nil, defaultDissent)
		}
		return vals, withholdDissent(ink, cal, 500, panels, vals, nil, xs, defaultDissent)
	}
	for j := range truth {
		zero := 350 + 400*float64(j)
		v := truth[j]
		for k := 0; k+1 < len(v); k++ {
			x := int(math.Round(x0 + float64(k)/500*pxPerS))
			y0, y1 := zero-v[k]*pxPerMV, zero-v[k+1]*pxPerMV
			for y := int(math.Min(y0, y1)) - 1; y <= int(math.Max(y0, y1))+1; y++ {
				ink.Pix[y*ink.Stride+x] = 255
			}
		}
	}
	held, _ := read(false)
	got, warns := read(true)
	for _, j := range []int{3, 4} {
		eHeld, _ := qrsError(held[j], truth[j], beats)
		// A stretch whose padded ends the fit leaves (there the best
		// vector is another) stays withheld: most are re-read.
		e, nan := qrsError(got[j], truth[j], beats)
		if e > 0.5*eHeld {
			t.Errorf("%v: %d samples withheld, QRS error %.3f mV re-read (%.3f withheld)", ecg.LimbLeads[j], nan, e, eHeld)
		}
	}
	w := strings.Join(warns, "\n")
	if !strings.Contains(w, "lead aVR: ") || !strings.Contains(w, "lead aVL: ") || strings.Count(w, "re-read") != 2 {
		t.Errorf("warnings %q, want aVR and aVL re-read", warns)
	}
}

// requireUntouched runs check, which may change vals (one row of samples
// per panel), and fails the test if it warned or changed any.
func requireUntouched(t *testing.T, name string, panels []*Panel, vals [][]float64, check func() []string) {
	t.Helper()
	ref := make([][]float64, len(vals))
	for j := range vals {
		ref[j] = append([]float64(nil), vals[j]...)
	}
	if w := check(); len(w) != 0 {
		t.Errorf("%s: warnings %q", name, w)
	}
	for j := range vals {
		if !sameSamples(vals[j], ref[j]) {
			t.Errorf("%s: %v changed", name, panels[j].Lead)
		}
	}
}
