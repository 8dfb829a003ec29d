package imageproc

import (
	"image"
	"testing"

	"tracelift/render"
)

// faxCorpusPage renders the fax condition's page for seed and layout as
// the evaluation corpus does, with its resolution.
func faxCorpusPage(t *testing.T, layout string, seed uint64) (*image.Gray, float64, float64) {
	t.Helper()
	rec, err := render.CorpusRecord(seed, false)
	if err != nil {
		t.Fatal(err)
	}
	o, err := render.ConditionOptions("fax", seed)
	if err != nil {
		t.Fatal(err)
	}
	o.Layout = layout
	pg, err := render.Render(rec, o)
	if err != nil {
		t.Fatal(err)
	}
	g, ok := pg.Image.(*image.Gray)
	if !ok {
		t.Fatalf("fax page is %T, want *image.Gray", pg.Image)
	}
	dx, dy, _ := pg.Truth.Resolution()
	return g, dx, dy
}

// TestFaxOrientation: binarised fax pages whose thin traces the work copy
// lightened were handed on turned (6x2 seed 2 upright came out turned a
// quarter; 12x1 seed 1 and rhythm seed 2, turned 90° counter-clockwise,
// came out upside down). Each must come out upright.
func TestFaxOrientation(t *testing.T) {
	for _, c := range []struct {
		layout string
		seed   uint64
		turned bool
	}{
		{"6x2", 2, false},
		{"12x1", 1, true},
		{"rhythm", 2, true},
	} {
		g, dx, dy := faxCorpusPage(t, c.layout, c.seed)
		want := 0
		if c.turned {
			// Turned 90° counter-clockwise: three more quarter turns
			// (or one clockwise) bring it back.
			g, dx, dy, want = turnGray(g, 1), dy, dx, 3
		}
		p, err := Prepare(g, &Options{DPIX: dx, DPIY: dy})
		if err != nil {
			t.Fatalf("%s seed %d: %v", c.layout, c.seed, err)
		}
		if p.QuarterTurns != want {
			t.Errorf("%s seed %d (turned %v): %d quarter turns, want %d", c.layout, c.seed, c.turned, p.QuarterTurns, want)
		}
	}
}
