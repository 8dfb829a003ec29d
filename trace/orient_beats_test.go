package trace

import (
	"image"
	"math"
	"testing"
)

// beatsPage draws two rows of a lead with invented beats, 0.8 s apart: a
// QRS complex of qrs mV (an R wave, or an S wave when negative), a P wave
// of 0.1 mV 0.16 s before it and a T wave of t mV 0.28 s after it (the
// order of the waves is common practice; standards.md §3), at 10 px/mm,
// 25 mm/s and 10 mm/mV, rows 30 mm apart.
func beatsPage(qrs, t float64) (*image.Gray, []rowInfo) {
	const fs, n = 500.0, 2500
	v := make([]float64, n)
	for k := range v {
		tt := float64(k) / fs
		for r := 0.5; r < 5; r += 0.8 {
			v[k] += qrs*math.Exp(-0.5*math.Pow((tt-r)/0.012, 2)) +
				0.1*math.Exp(-0.5*math.Pow((tt-r+0.16)/0.03, 2)) +
				t*math.Exp(-0.5*math.Pow((tt-r-0.28)/0.05, 2))
		}
	}
	ink := image.NewGray(image.Rect(0, 0, 1300, 900))
	var rows []rowInfo
	for _, zero := range []float64{300, 600} {
		paintTrace(ink, v, zero, 20, fs, nil)
		rows = append(rows, rowInfo{baseY: zero, zeroY: math.NaN(), x0: 20, x1: 1270})
	}
	return ink, rows
}

// TestBeatAsymmetry: the T wave follows the QRS complex, so an upright
// page scores well above asymmetryTurn and the same page turned over
// (time and sign reversed) well below −asymmetryTurn, whichever way the
// complexes and T waves point: the front end's ink balance is fooled by
// complexes that point down, the order of the waves is not.
func TestBeatAsymmetry(t *testing.T) {
	cal := testCal10()
	for _, tc := range []struct {
		name   string
		qrs, t float64
	}{
		{"upright R, upright T", 1.5, 0.3},
		{"deep S, inverted T", -1.5, -0.3},
		{"deep S, upright T", -1.5, 0.25},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ink, rows := beatsPage(tc.qrs, tc.t)
			s, n := beatAsymmetry(ink, rows, cal)
			if n < 10 || s/float64(n) < 2*asymmetryTurn {
				t.Errorf("upright: %d complexes, mean %.2f; want ≥ 10 and ≥ %.2f", n, s/float64(max(n, 1)), 2*asymmetryTurn)
			}
			rot := rotate180(ink)
			var rr []rowInfo
			for i := len(rows) - 1; i >= 0; i-- {
				r := rows[i]
				r.baseY = float64(ink.Rect.Dy()-1) - r.baseY
				r.x0, r.x1 = ink.Rect.Dx()-r.x1, ink.Rect.Dx()-r.x0
				rr = append(rr, r)
			}
			s, n = beatAsymmetry(rot, rr, cal)
			if n < 10 || s/float64(n) > -2*asymmetryTurn {
				t.Errorf("turned over: %d complexes, mean %.2f; want ≥ 10 and ≤ %.2f", n, s/float64(max(n, 1)), -2*asymmetryTurn)
			}
		})
	}
	t.Run("P waves only", func(t *testing.T) {
		ink, rows := beatsPage(0, 0)
		if _, n := beatAsymmetry(ink, rows, cal); n >= asymmetryMinBeats {
			t.Errorf("%d complexes on a trace of P waves", n)
		}
	})
}
