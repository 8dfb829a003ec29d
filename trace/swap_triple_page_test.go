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

// TestTripleKeepsRightLeadNearZero: on the overlap 3x4+1 page of record
// 12, I read its S wave as a 0.7 mV R wave from another row; III, right
// and near 0 mV there, then pointed the other way from the value II and I
// predict for it, while I's own prediction lay near 0 mV. A reading near
// 0 mV points nowhere: III is kept (14.1 dB; withheld at every beat it
// scored 5.8 dB).
func TestTripleKeepsRightLeadNearZero(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises a page")
	}
	cs := scoreCaseWith(t, accuracy.Case{Condition: "overlap", Layout: "3x4+1", Seed: 12}, "", true)
	if cs.err != nil {
		t.Fatalf("digitise: %v", cs.err)
	}
	if v := cs.lenient.PerLead[ecg.LeadIII]; !(v >= 13) {
		t.Errorf("III: %.1f dB < 13 dB", v)
	}
	if cs.found != cs.printed {
		t.Errorf("found %d of %d leads", cs.found, cs.printed)
	}
}
