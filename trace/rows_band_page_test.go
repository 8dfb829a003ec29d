package trace_test

import (
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
)

// TestRowBandPages: a row whose stretch of ink, read within 3 mm of its
// line, starts right after its pulse is not read again in the wider band
// (pulseBandMM). The pen-marked rhythm page of seed 8 read that way moved
// its row's end 2.5 mm onto a pen mark: the record became 10.1 s long and
// lead II fell from 13.7 to 9.2 dB (PhysioNet/CinC Challenge 2024 SNR,
// standards.md §7, lenient variant).
func TestRowBandPages(t *testing.T) {
	if testing.Short() {
		t.Skip("renders a full page")
	}
	requireLeadFloors(t, accuracy.Case{Condition: "penmarks", Layout: "rhythm", Seed: 8}, map[ecg.Lead]float64{ecg.LeadII: 13})
}
