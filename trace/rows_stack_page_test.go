package trace_test

import (
	"testing"

	"tracelift/accuracy"
)

// TestStackKeepsEdgeRows: on the eval's overlap 12 × 1 page of record 9
// (20 mm/mV, the pulses overlapping into two lines down the page) two
// tangles of complexes between rows read as pulses 2.4 and 6.3 mm tall,
// set the row pitch, and rows I, V5 and V6, whose pulse tops the stacked
// reading did not find, were dropped: 10 rows, read as a rhythm strip of
// one lead (1 of 12 leads found). Pulses off the page's height are taken
// back (dropOddPulses) and rows continuing the stack at its pitch are
// kept (stackRows); on record 5 the header line above the stack, read
// only loosely, stays out.
func TestStackKeepsEdgeRows(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises two pages")
	}
	for _, seed := range []uint64{9, 5} {
		cs := scoreCase(t, accuracy.Case{Condition: "overlap", Layout: "12x1", Seed: seed}, "")
		if cs.err != nil {
			t.Fatalf("seed %d: %v", seed, cs.err)
		}
		if cs.layout != "12x1" || cs.found != 12 {
			t.Errorf("seed %d: layout %q, %d of %d leads found", seed, cs.layout, cs.found, cs.printed)
		}
	}
}

// TestSingleRowTurned: on the eval's overlap rhythm pages of records 5
// and 9 (one row at 20 mm/mV whose R waves run up off the sheet) the
// front end read the page upside down and no pulse was found either way
// up: the gain defaulted to 10 mm/mV (−5 and −6 dB). Each baseline now
// votes with its ink in the front end's upside-down cue, and trace turns
// a page whose only row shows its pulse once turned: the gain is read
// from the pulse.
func TestSingleRowTurned(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises two pages")
	}
	for _, seed := range []uint64{5, 9} {
		_, page, err := accuracy.RenderCase(accuracy.Case{Condition: "overlap", Layout: "rhythm", Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		res, _, err := digitiseWith(page.Image, nil)
		if err != nil {
			t.Fatalf("seed %d: %v", seed, err)
		}
		if g := res.Calibration.GainMMPerMV; g.V != 20 || g.Origin != "pulse" {
			t.Errorf("seed %d: gain %v mm/mV from %s, want 20 from the pulse", seed, g.V, g.Origin)
		}
	}
}
