package trace

import (
	"math"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/grid"
)

// sharedPage builds two rows of one 2 s panel each (10 px/mm, 25 mm/s,
// 10 mm/mV, so 1 px per sample at 250 Hz; 0 mV at y = 100 and 200, the
// half-way line at 150): the upper lead (V2) has small R waves (0.3 mV)
// at 0.4, 1.2 and 1.6 s; the lower (V3) R waves of 0.2 mV at 0.8 s and
// the same times. At the beats listed in took, the upper path instead
// runs down onto the lower row's R wave (0.8 mV below its line, where the
// lower path also is). vals are read from the paths.
func sharedPage(took ...float64) (grid.Calibration, []*Panel, [][]float64, []float64) {
	const fs, n = 250.0, 500
	cal := grid.Calibration{
		PxPerMMX: grid.Value{V: 10}, PxPerMMY: grid.Value{V: 10},
		SpeedMMPerS: grid.Value{V: 25}, GainMMPerMV: grid.Value{V: 10},
	}
	beats := []float64{0.4, 0.8, 1.2, 1.6}
	bump := func(t, at, h float64) float64 { return h * math.Exp(-0.5*math.Pow((t-at)/0.01, 2)) }
	up, lo := &Panel{Lead: ecg.LeadV2, Row: 0, T0: 0, T1: 2, ZeroY: 100}, &Panel{Lead: ecg.LeadV3, Row: 1, T0: 0, T1: 2, ZeroY: 200}
	for x := range n {
		t := float64(x) / fs
		yu, yl := 100.0, 200.0
		for _, b := range beats {
			yl -= 100 * bump(t, b, 0.2)
			captured := false
			for _, c := range took {
				captured = captured || c == b
			}
			if captured && math.Abs(t-b) < 0.02 {
				yu = yl // on the lower row's stroke
			} else {
				yu -= 100 * bump(t, b, 0.3)
			}
		}
		up.Path = append(up.Path, Point{float64(x), yu})
		lo.Path = append(lo.Path, Point{float64(x), yl})
	}
	var vals [][]float64
	for _, p := range []*Panel{up, lo} {
		v := make([]float64, n)
		for i, q := range p.Path {
			v[i] = (p.ZeroY - q.Y) / 100
		}
		vals = append(vals, v)
	}
	return cal, []*Panel{up, lo}, vals, []float64{0, 0}
}

// TestWithholdSharedOneBeat: the upper lead's path took the lower row's
// stroke at one beat of four; that stretch (past half-way to the lower
// row, on the ink the lower path runs on, unlike its other beats) is
// withheld, the rest of the lead and the lower lead are kept.
func TestWithholdSharedOneBeat(t *testing.T) {
	cal, panels, vals, xs := sharedPage(0.8)
	lower := append([]float64(nil), vals[1]...)
	warn := withholdShared(cal, 250, panels, vals, nil, xs, defaultSelfCheck)
	if len(warn) != 1 || !strings.Contains(warn[0], "V2") || !strings.Contains(warn[0], "row 2") {
		t.Fatalf("warnings %q, want one for V2 naming row 2", warn)
	}
	nan := 0
	for i, v := range vals[0] {
		if math.IsNaN(v) {
			nan++
			if ti := float64(i) / 250; math.Abs(ti-0.8) > 0.03 {
				t.Errorf("V2 withheld at %.3f s, away from the captured beat", ti)
			}
		}
	}
	if nan == 0 {
		t.Error("nothing withheld")
	}
	for i := range lower {
		if vals[1][i] != lower[i] {
			t.Fatalf("V3 changed at sample %d", i)
		}
	}
}

// TestWithholdSharedEveryBeatKept: the same excursion at every beat is
// what the lead itself shows beat to beat: nothing is withheld.
func TestWithholdSharedEveryBeatKept(t *testing.T) {
	cal, panels, vals, xs := sharedPage(0.4, 0.8, 1.2, 1.6)
	if warn := withholdShared(cal, 250, panels, vals, nil, xs, defaultSelfCheck); len(warn) != 0 {
		t.Errorf("warnings %q, want none", warn)
	}
}

// TestWithholdSharedNotShared: no beat taken: the paths never share ink
// past half-way, nothing is withheld.
func TestWithholdSharedNotShared(t *testing.T) {
	cal, panels, vals, xs := sharedPage()
	if warn := withholdShared(cal, 250, panels, vals, nil, xs, defaultSelfCheck); len(warn) != 0 {
		t.Errorf("warnings %q, want none", warn)
	}
}

// BenchmarkWithholdShared times withholdShared on two 2 s panels at
// 250 Hz with one captured beat (a 3 × 4 + 3 page has 15 panels of 2.5 or
// 10 s).
func BenchmarkWithholdShared(b *testing.B) {
	cal, panels, vals, xs := sharedPage(0.8)
	orig := append([]float64(nil), vals[0]...)
	b.ReportAllocs()
	for b.Loop() {
		copy(vals[0], orig)
		withholdShared(cal, 250, panels, vals, nil, xs, defaultSelfCheck)
	}
}
