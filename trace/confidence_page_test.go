package trace_test

import (
	"sort"
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
	"tracelift/trace"
)

// TestCrossedTellsTangledLeads: a lead's quality and its crossed flag
// (confidence.go) say where other rows' strokes meet its trace. On a
// clean page no lead is crossed and every quality stays near 1. On the
// eval's overlapping pages (20 mm/mV, amplitudes × 1.4–2) the leads left
// unflagged are read well and every badly read lead is flagged: before
// the crossed share counted, every quality there was 0.99–1.00 and no
// lead was flagged (over the 21 overlap pages: 136 of 219 leads flagged,
// median 7.5 dB, catching 78 of the 83 leads below 10 dB; the other 83
// leads median 18.3 dB).
func TestCrossedTellsTangledLeads(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises five pages")
	}
	clean := scoreCaseWith(t, accuracy.Case{Condition: "clean", Layout: "3x4+1", Seed: 1}, "", true)
	for l, c := range clean.crossed {
		if c >= trace.CrossedFlagShare || clean.quality[l] < 0.9 {
			t.Errorf("clean page: %v crossed %.2f, quality %.2f", l, c, clean.quality[l])
		}
	}
	var crossedSNR, clearSNR []float64
	for _, c := range []accuracy.Case{
		{Condition: "overlap", Layout: "3x4", Seed: 1},
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
				continue
			}
			clearSNR = append(clearSNR, v)
			if v < 5 {
				t.Errorf("%s: %v read at %.1f dB is not flagged (crossed %.2f)", c.Name(), l, v, cs.crossed[l])
			}
		}
	}
	mc, mk := median(crossedSNR), median(clearSNR)
	t.Logf("crossed: %d leads, median %.1f dB; clear: %d leads, median %.1f dB", len(crossedSNR), mc, len(clearSNR), mk)
	if len(clearSNR) < 4 || !(mk > 15) || !(mk-mc > 6) {
		t.Errorf("crossed leads (%d, median %.1f dB) not told from clear ones (%d, median %.1f dB)", len(crossedSNR), mc, len(clearSNR), mk)
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
