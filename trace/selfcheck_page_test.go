package trace_test

import (
	"context"
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
	"tracelift/imageproc/decode"
	"tracelift/pipeline"
	"tracelift/trace"
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
	c := accuracy.Case{Condition: "overlap", Layout: "3x4", Seed: 3}
	full, page, err := accuracy.RenderCase(c)
	if err != nil {
		t.Fatal(err)
	}
	res, err := pipeline.Run(context.Background(), decode.Page{Image: page.Image, Index: 1}, pipeline.Config{})
	if err != nil {
		t.Fatal(err)
	}
	printed := accuracy.PrintedRecord(&page.Truth)
	sn := trace.SNR(printed, res.Trace.Record, trace.Lenient)
	found := 0
	for i := range res.Trace.Record.Signals {
		e := &res.Trace.Record.Signals[i]
		if _, _, ok := e.ValidSpan(); ok {
			found++
		}
		if w := accuracy.SwappedWith(&full, e); w != ecg.LeadUnknown {
			t.Errorf("lead %v matches %v better than itself (%.1f dB)", e.Lead, w, sn.PerLead[e.Lead])
		}
	}
	if found != 12 {
		t.Errorf("%d leads found, want 12", found)
	}
	// Floor below the measured value (6.7 dB), above the value without
	// the self-check (2.6 dB).
	for l, floor := range map[ecg.Lead]float64{ecg.LeadV2: 5} {
		if got := sn.PerLead[l]; got < floor {
			t.Errorf("lead %v: %.1f dB, want ≥ %.0f", l, got, floor)
		}
	}
}
