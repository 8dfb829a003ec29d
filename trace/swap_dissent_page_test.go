package trace_test

import (
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
)

// TestDissentOverlapPages: on the eval's overlap 12 × 1 pages (20 mm/mV,
// amplitudes × 1.4–2) aVR and aVL of record 2 read other rows' strokes at
// every beat, upside down, and aVL matched V2's truth better than its
// own; on record 3 aVR read aVL's R wave for its own QS and matched aVF's
// truth (accuracy.SwappedWith). The limb leads that agree on one heart
// vector show those QRS stretches pointing the wrong way, and they are
// re-read at the value those leads predict where it lies on the lead's
// ink, and withheld elsewhere (swap_dissent.go): no lead is swapped,
// every lead is found, and the leads score above their former −2.5 /
// −1.5 dB (record 2) and −2.2 dB (record 3); withheld only, they scored
// 0.5 / 0.2 and 0.1 dB, re-read 1.7 / 1.3 and 1.5 dB. Record 3's aVR
// reads 1.0 dB since the pulses' edges are located to a fraction of a
// pixel (the page's time base moved by 0.1 ms): its floor of 0.5 dB still
// lies 2.7 dB above the swapped reading.
func TestDissentOverlapPages(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises two pages")
	}
	requireLeadFloors(t, accuracy.Case{Condition: "overlap", Layout: "12x1", Seed: 2}, map[ecg.Lead]float64{ecg.LeadAVL: 1.2, ecg.LeadAVR: 0.8})
	requireLeadFloors(t, accuracy.Case{Condition: "overlap", Layout: "12x1", Seed: 3}, map[ecg.Lead]float64{ecg.LeadAVR: 0.5})
}
