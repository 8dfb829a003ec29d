package trace_test

import (
	"sort"
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
	"tracelift/trace"
)

// TestCrossedTellsTangledLeads: a lead's quality and its crossed flag
// (confidence.go) say where other rows' strokes touch its trace. On a
// clean page no lead is crossed and every quality stays near 1; on the
// eval's overlapping pages (20 mm/mV, amplitudes × 1.4–2) the crossed
// leads are the ones read badly: their median SNR lies well below the
// others', and the quality ranks the leads by SNR (Spearman ρ; before the
// crossed share counted, every quality there was 0.99–1.00 and ρ over the
// 21 overlap pages 0.29, after 0.72).
func TestCrossedTellsTangledLeads(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises four pages")
	}
	clean := scoreCaseWith(t, accuracy.Case{Condition: "clean", Layout: "3x4+1", Seed: 1}, "", true)
	for l, c := range clean.crossed {
		if c >= trace.CrossedFlagShare || clean.quality[l] < 0.9 {
			t.Errorf("clean page: %v crossed %.2f, quality %.2f", l, c, clean.quality[l])
		}
	}
	var crossedSNR, clearSNR, q, snr []float64
	for _, c := range []accuracy.Case{
		{Condition: "overlap", Layout: "12x1", Seed: 1},
		{Condition: "overlap", Layout: "6x2", Seed: 1},
		{Condition: "overlap", Layout: "3x4+1", Seed: 3},
	} {
		cs := scoreCaseWith(t, c, "", true)
		for _, l := range ecg.Standard12 {
			v, ok := cs.lenient.PerLead[l]
			if !ok {
				continue
			}
			if cs.crossed[l] >= trace.CrossedFlagShare {
				crossedSNR = append(crossedSNR, v)
			} else {
				clearSNR = append(clearSNR, v)
			}
			q, snr = append(q, cs.quality[l]), append(snr, v)
		}
	}
	mc, mk := median(crossedSNR), median(clearSNR)
	rho := spearman(q, snr)
	t.Logf("crossed: %d leads, median %.1f dB; clear: %d leads, median %.1f dB; Spearman ρ(quality, SNR) %.2f", len(crossedSNR), mc, len(clearSNR), mk, rho)
	if len(crossedSNR) < 5 || len(clearSNR) < 5 || !(mk-mc > 6) {
		t.Errorf("crossed leads (%d, median %.1f dB) not told from clear ones (%d, median %.1f dB)", len(crossedSNR), mc, len(clearSNR), mk)
	}
	if !(rho > 0.5) {
		t.Errorf("quality ranks the leads by SNR with ρ %.2f", rho)
	}
}

func median(v []float64) float64 {
	if len(v) == 0 {
		return 0
	}
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	if n := len(s); n%2 == 1 {
		return s[n/2]
	} else {
		return (s[n/2-1] + s[n/2]) / 2
	}
}

// spearman is Spearman's rank correlation (ties broken by order).
func spearman(x, y []float64) float64 {
	rank := func(v []float64) []float64 {
		idx := make([]int, len(v))
		for i := range idx {
			idx[i] = i
		}
		sort.SliceStable(idx, func(a, b int) bool { return v[idx[a]] < v[idx[b]] })
		r := make([]float64, len(v))
		for k, i := range idx {
			r[i] = float64(k)
		}
		return r
	}
	rx, ry := rank(x), rank(y)
	n := float64(len(x))
	var sd float64
	for i := range rx {
		d := rx[i] - ry[i]
		sd += d * d
	}
	return 1 - 6*sd/(n*(n*n-1))
}
