package trace_test

import (
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
	"tracelift/imageproc"
)

// TestBuriedLevelOverlapPages: on the eval's overlap 12 × 1 pages (20
// mm/mV, amplitudes × 1.4–2, every row's QRS merged with its neighbours'
// into one mass of ink) aVL's path kept its 0 mV level through its own
// R wave (1.5 mV, leaving the row's band) at every beat, and so did V4's
// on record 3: read flat, the leads correlated better with V2's truth
// than with their own (accuracy.SwappedWith). The level read inside the
// mass is withheld (swap_buried.go), and those leads are no longer
// swapped; every lead is still found.
func TestBuriedLevelOverlapPages(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises two pages")
	}
	// Record 1: no lead swapped; aVL 0.2 dB before (its R waves read as
	// 0 mV), 0.9 dB when measured.
	requireLeadFloors(t, accuracy.Case{Condition: "overlap", Layout: "12x1", Seed: 1}, map[ecg.Lead]float64{ecg.LeadAVL: 0.5})
	// Record 3: aVL and V4 swapped with V2 before; aVR, which took aVL's
	// upstroke, is left to the heart-vector check (swap_dissent.go,
	// TestDissentOverlapPages), so the page is checked lead by lead.
	c := accuracy.Case{Condition: "overlap", Layout: "12x1", Seed: 3}
	full, page, err := accuracy.RenderCase(c)
	if err != nil {
		t.Fatalf("render: %v", err)
	}
	var po *imageproc.Options
	if dx, dy, ok := page.Truth.Resolution(); ok {
		po = &imageproc.Options{DPIX: dx, DPIY: dy}
	}
	res, _, err := digitiseWith(page.Image, po)
	if err != nil {
		t.Fatalf("digitise: %v", err)
	}
	for _, l := range []ecg.Lead{ecg.LeadAVL, ecg.LeadV4} {
		est := res.Record.Signal(l)
		if est == nil {
			t.Errorf("%v not found", l)
			continue
		}
		if w := accuracy.SwappedWith(&full, est); w != ecg.LeadUnknown {
			t.Errorf("%v matches %v's truth better than its own", l, w)
		}
	}
	if n := len(res.Record.Signals); n != 12 {
		t.Errorf("%d leads found, want 12", n)
	}
}
