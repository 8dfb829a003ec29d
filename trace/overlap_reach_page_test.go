package trace_test

import (
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
)

// TestReachPastPage digitises the seeded overlap 3x4 page of seed 1
// (20 mm/mV, rows 2.95 mV apart, R waves of 3.7–3.9 mV in V4 and V5) and
// holds V4 and V5 to floors (PhysioNet/CinC Challenge 2024 SNR,
// standards.md §7, lenient variant) and every lead to its own name. With
// the search bands at 3 mV (before reachPast) V4 read 3.4 dB (its path
// took the stroke of V5 that rose past V5's band) and V5 13.5 dB; after,
// 13.5 and 15.3 dB (trace following alone, on the front end's cached
// maps).
func TestReachPastPage(t *testing.T) {
	if testing.Short() {
		t.Skip("renders a full page")
	}
	requireLeadFloors(t, accuracy.Case{Condition: "overlap", Layout: "3x4", Seed: 1}, map[ecg.Lead]float64{ecg.LeadV4: 12, ecg.LeadV5: 14.5})
}
