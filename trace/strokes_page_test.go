package trace_test

import (
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
)

// TestUntangleCrossingPages digitises seeded overlap pages (20 mm/mV,
// complexes × 1.4–2: deep S waves of one row cross tall R waves of the
// next) through the whole front end and holds the leads whose complexes
// cross a neighbouring row's to floors (PhysioNet/CinC Challenge 2024 SNR,
// standards.md §7, lenient variant) and every lead to its own name. Before
// untangleCrossings the 3x4+3 page returned V1 at −3.1 dB and V5 at 0.2 dB
// with aVL and V5 swapped (they matched V2's and V3's truth better than
// their own); the 6x2 page returned aVR at 3.1 dB and aVL swapped (V2).
// Measured after: 3x4+3 V1 6.5, V5 5.0 dB, no swap; 6x2 aVR 8.9 dB, aVL
// 3.1 dB, no swap.
func TestUntangleCrossingPages(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, tc := range []struct {
		c      accuracy.Case
		floors map[ecg.Lead]float64
	}{
		{accuracy.Case{Condition: "overlap", Layout: "3x4+3", Seed: 1}, map[ecg.Lead]float64{ecg.LeadV1: 5, ecg.LeadV5: 3.5}},
		{accuracy.Case{Condition: "overlap", Layout: "6x2", Seed: 1}, map[ecg.Lead]float64{ecg.LeadAVR: 7}},
	} {
		t.Run(tc.c.Name(), func(t *testing.T) { requireLeadFloors(t, tc.c, tc.floors) })
	}
}
