package trace_test

import (
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
)

// TestSelfCheckOverlapPage: on the eval's overlap 3 × 4 page of
// record 3 (20 mm/mV, amplitudes × 1.4–2, QRS strokes crossing rows),
// V2's path ran on V3's strokes below it at some beats (2.6 dB). The
// self-check withholds those stretches (another row's path on the same
// ink, past half-way to that row, not repeated at the lead's other
// beats): V2 reads 6.7 dB when measured, no lead is swapped
// (accuracy.SwappedWith) and all twelve are found.
func TestSelfCheckOverlapPage(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises a page")
	}
	// Floor below the measured value (6.7 dB), above the value without
	// the self-check (2.6 dB).
	requireLeadFloors(t, accuracy.Case{Condition: "overlap", Layout: "3x4", Seed: 3}, map[ecg.Lead]float64{ecg.LeadV2: 5})
}
