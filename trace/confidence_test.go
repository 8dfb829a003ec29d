package trace

import (
	"image"
	"image/color"
	"math"
	"testing"

	"tracelift/ecg"
)

// TestPathSpans: a path's extent in each column is what the pen drew: a
// steep stroke (several points in one column) covers its whole height,
// and a segment between two columns covers the part of it inside each.
func TestPathSpans(t *testing.T) {
	path := []Point{{10, 50}, {11, 50}, {12, 50}, {12, 20}, {13, 30}, {14, 50}}
	x0, s := pathSpans(path)
	if x0 != 10 || len(s) != 5 {
		t.Fatalf("x0 %d, %d columns", x0, len(s))
	}
	want := []colSpan{{50, 50}, {50, 50}, {20, 50}, {25, 40}, {40, 50}}
	for i, w := range want {
		if math.Abs(s[i].lo-w.lo) > 1e-9 || math.Abs(s[i].hi-w.hi) > 1e-9 {
			t.Errorf("column %d: %v, want %v", 10+i, s[i], w)
		}
	}
}

// TestContestedShares: two rows' traces 40 px apart, one of them with a
// stroke reaching to within 2 px of the other: the columns of that stroke
// count as contested for both, each with its own excursion there; a third
// row far away shares nothing; a second panel of the same row never
// contests. The shares and the confidence follow from the sums.
func TestContestedShares(t *testing.T) {
	flat := func(y float64, x0, x1 int) []Point {
		var p []Point
		for x := x0; x <= x1; x++ {
			p = append(p, Point{float64(x), y})
		}
		return p
	}
	// Row 1: flat at 140, except a stroke up to 102 over columns 50–52.
	var r1 []Point
	for x := 0; x <= 99; x++ {
		y := 140.0
		if x >= 50 && x <= 52 {
			y = 102
		}
		r1 = append(r1, Point{float64(x), y})
	}
	panels := []Panel{
		{Lead: ecg.LeadI, Row: 0, ZeroY: 100, Path: flat(100, 0, 99)},
		{Lead: ecg.LeadII, Row: 1, ZeroY: 140, Path: r1},
		{Lead: ecg.LeadIII, Row: 2, ZeroY: 400, Path: flat(400, 0, 99)},
		{Lead: ecg.LeadAVR, Row: 1, ZeroY: 140, Path: flat(140, 100, 199)},
	}
	gap, floor := 6.0, 1.0
	con, tot := contestedShares(panels, gap, floor, nil)
	if con[2] != 0 || con[3] != 0 {
		t.Errorf("far row and same-row panel contested: %v", con)
	}
	// Row 0 is contested where row 1's stroke comes within 6 px: the
	// columns 50–52, whose extent reaches 102 (columns 49 and 53 hold
	// the strokes' halves from 140 to 121); each counts the floor only.
	if con[0] != 3*floor*floor || tot[0] != 100*floor*floor {
		t.Errorf("row 0: contested %g of %g", con[0], tot[0])
	}
	// Row 1 counts its stroke's excursion, 38 px, in those columns, of
	// a total that adds 19 px in columns 49 and 53 and the floor in the
	// 95 others.
	if con[1] != 3*38*38 || tot[1] != 3*38*38+2*19*19+95 {
		t.Errorf("row 1: contested %g of %g", con[1], tot[1])
	}
	sh := crossedShares(panels, con, tot)
	if math.Abs(sh[ecg.LeadII]-4332.0/5149) > 1e-12 || sh[ecg.LeadI] != 0.03 || sh[ecg.LeadIII] != 0 || sh[ecg.LeadAVR] != 0 {
		t.Errorf("shares %v", sh)
	}
	q := leadConfidence(map[ecg.Lead]float64{ecg.LeadI: 1, ecg.LeadII: 0.9, ecg.LeadIII: 1}, sh,
		map[ecg.Lead]float64{ecg.LeadI: 0.5})
	if math.Abs(q[ecg.LeadI]-0.485) > 1e-12 || q[ecg.LeadIII] != 1 || math.Abs(q[ecg.LeadII]-0.9*(1-4332.0/5149)) > 1e-12 {
		t.Errorf("confidence %v", q)
	}
}

// TestContestedThroughInk: two rows' paths that do not come near each
// other still meet where the ink under one continues as one run up to the
// other (merged strokes), and a path whose run of ink leaves its search
// band counts as met there; a run ending inside the band, away from other
// paths, does not.
func TestContestedThroughInk(t *testing.T) {
	ink := image.NewGray(image.Rect(0, 0, 10, 100))
	for y := 20; y <= 60; y++ {
		ink.Pix[y*ink.Stride+5] = 255 // one run in column 5
	}
	for y := 70; y <= 80; y++ {
		ink.Pix[y*ink.Stride+7] = 255 // a short run in column 7
	}
	if r := inkRun(ink, 5, colSpan{50, 52}); r.lo != 20 || r.hi != 60 {
		t.Errorf("run of column 5 from 50–52: %v", r)
	}
	path := []Point{{4, 90}, {5, 50}, {6, 90}, {7, 75}, {8, 90}}
	a := Panel{Row: 1, Path: path, ZeroY: 90, Bounds: image.Rect(0, 10, 10, 100)}
	b := Panel{Row: 0, Path: []Point{{4, 17}, {5, 17}, {6, 17}}, ZeroY: 17, Bounds: image.Rect(0, 0, 10, 40)}
	x0, _, marks := contestedColumns([]Panel{a, b}, 3, ink)
	got := map[int]bool{}
	for k, m := range marks[0] {
		if m {
			got[x0[0]+k] = true
		}
	}
	// Column 5's run reaches 20, within 3 px of b's path at 17; column 7's
	// run (70–80) stays clear. Without the ink map only the paths count.
	if !got[5] || got[7] {
		t.Errorf("row 1 met in columns %v, want 5 and not 7", got)
	}
	_, _, plain := contestedColumns([]Panel{a, b}, 3, nil)
	for k, m := range plain[0] {
		if m && x0[0]+k == 5 {
			t.Errorf("without ink, column 5 met")
		}
	}
	// The band: the same path with a band starting at 30 is cut there.
	a.Bounds = image.Rect(0, 30, 10, 100)
	x0, _, marks = contestedColumns([]Panel{a}, 3, ink)
	if !marks[0][5-x0[0]] || marks[0][7-x0[0]] {
		t.Errorf("band cut: marks %v", marks[0])
	}
}

// TestClippedColumns: complexes printed taller than the paper run flat
// along its edge at every beat; the columns ending on that row are
// marked, unless ink lies beyond it (a header above the top row: the row
// is then an apex, not the page's end), and a single apex reaching the
// topmost row once is not an edge.
func TestClippedColumns(t *testing.T) {
	const flat = 100.0
	mk := func(tops map[int]float64) (runs, spans [][]colSpan) {
		r := make([]colSpan, 40)
		for k := range r {
			r[k] = colSpan{flat - 2, flat + 2}
			if y, ok := tops[k]; ok {
				r[k].lo = y
			}
		}
		return [][]colSpan{r}, [][]colSpan{append([]colSpan(nil), r...)}
	}
	// Four beats cut at y = 10 (one a pixel lower), two columns each.
	runs, spans := mk(map[int]float64{5: 10, 6: 10, 15: 10, 16: 11, 25: 10, 26: 10, 35: 10, 36: 10, 37: 30})
	ink := image.NewGray(image.Rect(0, 0, 40, 120))
	marks, bot := clippedColumns([]int{0}, runs, spans, ink)
	for k, m := range marks[0] {
		if want := k%10 >= 5 && k%10 <= 6; m != want {
			t.Errorf("column %d marked %v, want %v", k, m, want)
		}
		if bot[0][k] {
			t.Errorf("column %d marked at the bottom edge", k)
		}
	}
	// The same with a header's ink above the row.
	ink.SetGray(12, 3, color.Gray{255})
	marks, _ = clippedColumns([]int{0}, runs, spans, ink)
	for k, m := range marks[0] {
		if m {
			t.Errorf("column %d marked below a header", k)
		}
	}
	// Three apexes at the top: no edge (clipMinGroups).
	runs, spans = mk(map[int]float64{5: 10, 6: 10, 7: 10, 15: 10, 25: 10})
	marks, _ = clippedColumns([]int{0}, runs, spans, nil)
	for k, m := range marks[0] {
		if m {
			t.Errorf("column %d marked on a page without an edge", k)
		}
	}
}
