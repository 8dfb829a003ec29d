package trace_test

import (
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
)

// TestRuledLineGreyPage: on the eval's grey 3x4+3 page of record 3 the
// structural split leaves the major vertical grid lines between the
// grid's top border and the top row's trace in the ink map, and the top
// row's paths climbed one at every QRS (aVR 2.1 dB, I 4.8 dB, V4 7.4 dB).
// With one-column spikes that no pen could draw kept at the trace's level
// (lineNotStroke) they read 13.1, 17.3 and 16.1 dB (eval, seed 1 corpus);
// the floors sit below those.
func TestRuledLineGreyPage(t *testing.T) {
	if testing.Short() {
		t.Skip("renders a full page")
	}
	requireLeadFloors(t, accuracy.Case{Condition: "gray", Layout: "3x4+3", Seed: 3},
		map[ecg.Lead]float64{ecg.LeadAVR: 11, ecg.LeadI: 15, ecg.LeadV4: 14})
}
