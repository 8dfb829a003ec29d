package trace_test

import (
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
)

// TestStrokeTravelPages digitises seeded overlap pages (20 mm/mV,
// complexes × 1.4–2) whose deep S waves go down through the next row's
// tall R waves, and holds those leads to floors (PhysioNet/CinC Challenge
// 2024 SNR, standards.md §7, lenient variant) and every lead to its own
// name. Before the path finder rewarded a pen's travel in the direction it
// was going (strokeTravel), the path turned back at the other row's apex:
// 3x4+1 seed 3 aVR 8.2 dB, 6x2 seed 3 aVR 8.9 dB and aVL 7.9 dB.
// Measured after: 13.4, 12.9 and 11.6 dB (on trace following alone, with
// the front end's maps cached; the corpus's 3x4+3 seed 3 aVR also went
// from 1.0 to 8.6 dB, but that page still returns aVF swapped).
func TestStrokeTravelPages(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, tc := range []struct {
		c      accuracy.Case
		floors map[ecg.Lead]float64
	}{
		{accuracy.Case{Condition: "overlap", Layout: "3x4+1", Seed: 3}, map[ecg.Lead]float64{ecg.LeadAVR: 12}},
		{accuracy.Case{Condition: "overlap", Layout: "6x2", Seed: 3}, map[ecg.Lead]float64{ecg.LeadAVR: 11.5, ecg.LeadAVL: 10.5}},
	} {
		t.Run(tc.c.Name(), func(t *testing.T) { requireLeadFloors(t, tc.c, tc.floors) })
	}
}
