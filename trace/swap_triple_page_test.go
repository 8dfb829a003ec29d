package trace_test

import (
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
)

// TestTripleOverlapPage: on the eval's overlap 3x4+3 page of record 3 (20
// mm/mV, amplitudes × 1.4–2) aVF's path left its own 0.45 mV R wave for
// the merged strokes of the rhythm strips below (II and V5) and read −1
// to −2 mV at every beat; II was withheld there (a level kept through
// the mass), which left aVR, aVL and aVF alone in the second column, and
// aVF matched aVR's truth better than its own (accuracy.SwappedWith,
// −7.4 dB). The identity aVR + aVL + aVF = 0 is broken; aVF is the lead
// whose predicted value lies on its ink and points the other way
// (swap_triple.go): withheld, no lead is swapped and every lead is found.
func TestTripleOverlapPage(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises a page")
	}
	requireLeadFloors(t, accuracy.Case{Condition: "overlap", Layout: "3x4+3", Seed: 3}, map[ecg.Lead]float64{ecg.LeadAVF: 0.5, ecg.LeadAVR: 8, ecg.LeadAVL: 5.5})
}
