package trace

import (
	"image"
	"math"
	"testing"
)

// TestUntangleCrossingStrokes draws two rows 20 mm apart (10 px/mm) whose
// QRS complexes cross each other: the upper row's S wave dips 26 mm, past
// the lower row's baseline, while the lower row's R wave rises 26 mm, past
// the upper row's (20 mm/mV pages print deep S and tall R waves so). The
// strokes cross twice and enclose a lens; per column they are one run.
// Followed row by row, each path rides the lens's near edge and takes the
// other row's apex, stopping on either side of the merged runs where the
// lens closes (one complex a little later than the other). After untangleCrossings each row must reach its own
// extreme within 1 mm and keep off the other's: the upper row's lowest
// point near the drawn S nadir, the lower row's highest near the drawn R
// apex. Where the two complexes only touch (no crossing, no lens) the paths
// are left as followed, and so are two R waves that share columns.
func TestUntangleCrossingStrokes(t *testing.T) {
	const b0, b1 = 200.0, 400.0
	tests := []struct {
		name          string
		upper, lower  []Point
		swap          bool
		nadir0, apex1 float64 // drawn extremes of the upper (max y) and lower (min y) rows
	}{
		{"R a little later", []Point{{0, b0}, {94, b0}, {103, 450}, {111, b0}, {300, b0}},
			[]Point{{0, b1}, {96, b1}, {105, 150}, {114, b1}, {300, b1}}, true, 450, 150},
		{"S a little later", []Point{{0, b0}, {96, b0}, {105, 450}, {114, b0}, {300, b0}},
			[]Point{{0, b1}, {94, b1}, {103, 150}, {111, b1}, {300, b1}}, true, 450, 150},
		{"S and R only touch", []Point{{0, b0}, {95, b0}, {100, 300}, {105, b0}, {300, b0}},
			[]Point{{0, b1}, {95, b1}, {100, 302}, {105, b1}, {300, b1}}, false, 300, 302},
		// TestSeparateRowsSharedColumns's first page: the upper row's R
		// points away from the lower row, whose R crosses the upper
		// baseline inside the upper row's strokes: no lens.
		{"R waves in step", []Point{{0, b0}, {96, b0}, {100, 40}, {104, b0}, {107, 260}, {110, b0}, {300, b0}},
			[]Point{{0, b1}, {97, b1}, {101, 150}, {105, b1}, {300, b1}}, false, 260, 150},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m := image.NewGray(image.Rect(0, 0, 300, 700))
			stroke(m, tc.upper, 1.5)
			stroke(m, tc.lower, 1.5)
			pj := twoRowJobs(m, b0, b1)
			var cr columnRuns
			separateRows(m, pj, &cr, 10, 100) // 10 mm/mV: the rows are 2 mV apart
			before0, before1 := maxY(pj[0][0].pr.points, 85, 125), minY(pj[1][0].pr.points, 85, 125)
			untangleCrossings(m, pj, 10, 100)
			got0, got1 := maxY(pj[0][0].pr.points, 85, 125), minY(pj[1][0].pr.points, 85, 125)
			t.Logf("upper row's lowest point %.1f → %.1f (drawn %g), lower row's highest %.1f → %.1f (drawn %g)", before0, got0, tc.nadir0, before1, got1, tc.apex1)
			if !tc.swap {
				if got0 != before0 || got1 != before1 {
					t.Errorf("paths changed where the complexes only touch")
				}
				return
			}
			if math.Abs(got0-tc.nadir0) > 10 {
				t.Errorf("upper row's S nadir at y %.1f, drawn at %g", got0, tc.nadir0)
			}
			if math.Abs(got1-tc.apex1) > 10 {
				t.Errorf("lower row's R apex at y %.1f, drawn at %g", got1, tc.apex1)
			}
			// Neither row keeps the other's extreme: the upper row stays
			// below the lower row's apex, the lower above the upper's nadir.
			if m := minY(pj[0][0].pr.points, 85, 125); m < b0-10 {
				t.Errorf("upper row rises to y %.1f, above its own baseline %g", m, b0)
			}
			if m := maxY(pj[1][0].pr.points, 85, 125); m > b1+10 {
				t.Errorf("lower row dips to y %.1f, below its own baseline %g", m, b1)
			}
		})
	}
}

// TestLensAtPanelEdge: a lens less than lensEdgeMM inside the panels'
// common columns is left alone (the separator tick and the previous
// lead's ends meet the paths at a column boundary); the same lens further
// inside is found.
func TestLensAtPanelEdge(t *testing.T) {
	const b0, b1 = 200.0, 400.0
	m := image.NewGray(image.Rect(0, 0, 300, 700))
	stroke(m, []Point{{0, b0}, {94, b0}, {103, 450}, {111, b0}, {300, b0}}, 1.5)
	stroke(m, []Point{{0, b1}, {96, b1}, {105, 150}, {114, b1}, {300, b1}}, 1.5)
	pj := twoRowJobs(m, b0, b1)
	var cr columnRuns
	separateRows(m, pj, &cr, 10, 100)
	a, b := pj[0][0].pr.points, pj[1][0].pr.points
	in := findLenses(m, a, b, 0, 300, 10)
	if len(in) != 1 {
		t.Fatalf("lenses %v inside the panels, want one", in)
	}
	// Common columns starting 5 px (0.5 mm) before the lens's first end.
	if got := findLenses(m, a, b, int(in[0][0])-6, 300, 10); len(got) != 0 {
		t.Errorf("lens at %v, 0.5 mm from the panel edge, was exchanged", got)
	}
}
