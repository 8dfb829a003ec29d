package trace

import (
	"image"
	"math"
	"math/rand/v2"
	"testing"
)

// twoRowJobs follows the two rows of m (baselines b0 < b1, px, 10 px/mm)
// as Extract's first pass does: one panel per row, bands reaching 1.5 row
// pitches towards the other row.
func twoRowJobs(m *image.Gray, b0, b1 float64) [][]panelJob {
	pitch := b1 - b0
	var cr columnRuns
	var pj [][]panelJob
	for ri, b := range []float64{b0, b1} {
		up, down := 1.5*pitch, 1.5*pitch
		upLim, downLim := math.Inf(1), 0.5*pitch
		if ri == 1 {
			upLim, downLim = 0.5*pitch, math.Inf(1)
		}
		j := panelJob{bounds: image.Rect(0, int(b-up), m.Rect.Dx(), int(b+down)).Intersect(m.Rect), base: b, upLim: upLim, downLim: downLim, maxLen: 60, endLen: 24}
		cr.scan(m, j.bounds)
		j.follow(&cr, 10)
		j.keepRuns(&cr)
		pj = append(pj, []panelJob{j})
	}
	return pj
}

// TestSeparateRowsSharedColumns draws two rows 20 mm apart whose R waves
// share image columns (20 mm/mV pages print them so): the upper row's R
// reaches 16 mm up, the lower row's R 25 mm up, past the upper row's
// baseline, so that the strokes merge into single runs where they overlap.
// Following the upper row alone, the path has two ink-continuous ways up:
// its own apex and the lower row's apex lying within its band. After
// separateRows the upper row must reach its own apex within 2 px (pen
// radius 1.5 px); the lower row must not take the upper row's apex (its
// path may not rise more than 1 mm above its own apex) nor lose more of
// its own than on the first pass. (Where the lower apex lies inside the
// upper spike's strokes, the ink holds no trace of it: its path stops
// where the strokes merge.)
func TestSeparateRowsSharedColumns(t *testing.T) {
	const b0, b1 = 200.0, 400.0
	tests := []struct {
		name         string
		own, other   []Point
		apex0, apex1 float64 // drawn apexes of the upper and lower rows
	}{
		{"R waves in step", []Point{{0, b0}, {96, b0}, {100, 40}, {104, b0}, {107, 260}, {110, b0}, {300, b0}},
			[]Point{{0, b1}, {97, b1}, {101, 150}, {105, b1}, {300, b1}}, 40, 150},
		{"lower R a little later", []Point{{0, b0}, {96, b0}, {100, 40}, {104, b0}, {107, 260}, {110, b0}, {300, b0}},
			[]Point{{0, b1}, {98, b1}, {102, 150}, {106, b1}, {300, b1}}, 40, 150},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m := image.NewGray(image.Rect(0, 0, 300, 700))
			stroke(m, tc.own, 1.5)
			stroke(m, tc.other, 1.5)
			pj := twoRowJobs(m, b0, b1)
			first1 := minY(pj[1][0].pr.points, 90, 115)
			t.Logf("first pass: upper apex %.1f, lower apex %.1f", minY(pj[0][0].pr.points, 90, 115), first1)
			var cr columnRuns
			separateRows(m, pj, &cr, 10, 100) // 10 mm/mV: the rows are 2 mV apart
			if got := minY(pj[0][0].pr.points, 90, 115); math.Abs(got-tc.apex0) > 2 {
				t.Errorf("upper row's apex at y %.1f, drawn at %g", got, tc.apex0)
			}
			if got := minY(pj[1][0].pr.points, 90, 115); got < tc.apex1-10 || got > math.Max(first1, tc.apex1)+0.5 {
				t.Errorf("lower row's apex at y %.1f, drawn at %g (first pass %.1f)", got, tc.apex1, first1)
			}
			// At 25 mm/mV the same rows are 0.8 mV apart, closer than
			// minOrderPitchMV: the pass leaves them as first followed.
			pj = twoRowJobs(m, b0, b1)
			first0 := minY(pj[0][0].pr.points, 90, 115)
			separateRows(m, pj, &cr, 10, 250)
			if got := minY(pj[0][0].pr.points, 90, 115); got != first0 {
				t.Errorf("rows 0.8 mV apart: upper apex moved from %.1f to %.1f", first0, got)
			}
		})
	}
}

// TestFollowBrokenTraceBesideNeighbour draws what a binarised fax makes of
// a low-amplitude row: its flat stretches lost, only short dashes and the
// QRS strokes left (5 px of ink every 30 px: the fax corpus's "lead II: no
// trace found" pages), with the next row's trace continuous 20 mm below.
// With the baseline pull alone (0.01 per mm and column) the neighbour's
// line costs 0.2 a column against 0.4 for a column of gap, and the path
// takes it. Beyond half-way to the neighbouring row a flat stretch costs
// farCost a column more, so the path bridges its own row's breaks.
func TestFollowBrokenTraceBesideNeighbour(t *testing.T) {
	const base, next = 200.0, 400.0
	m := image.NewGray(image.Rect(0, 0, 400, 600))
	for x := 0.0; x < 400; x += 30 {
		stroke(m, []Point{{x, base}, {x + 2, base}}, 1.5)
	}
	stroke(m, []Point{{0, next}, {400, next}}, 1.5)
	var cr columnRuns
	cr.scan(m, image.Rect(0, 0, 400, 600))
	fp := defaultFollow(10, base)
	pr := follow(&cr, fp)
	if n := near(pr.points, next, 10); n == 0 {
		t.Errorf("without the far cost the path kept off the neighbour's line: the page does not show the case")
	}
	fp.farUp, fp.farDown = 100, 100 // half the row pitch
	pr = follow(&cr, fp)
	if n := near(pr.points, next, 10); n > 0 {
		t.Errorf("%d points on the neighbouring row's line", n)
	}
	if n := near(pr.points, base, 3); n < 60 {
		t.Errorf("%d points on the row's own dashes (5 px in every 30 of 400), want ≥ 60", n)
	}
}

// TestClipRunsMatchesClippedScan checks that cutting a band's kept runs
// to per-column limits gives the runs that scanning the band with the
// pixels outside the limits cleared gives (same extents, column by column;
// the centre of a cut run is only approximated).
func TestClipRunsMatchesClippedScan(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	m := image.NewGray(image.Rect(0, 0, 120, 90))
	for i := range m.Pix {
		if rng.IntN(3) == 0 {
			m.Pix[i] = 255
		}
	}
	b := image.Rect(10, 5, 110, 85)
	lo, hi := make([]float64, b.Dx()), make([]float64, b.Dx())
	for c := range lo {
		lo[c], hi[c] = math.Inf(-1), math.Inf(1)
		switch c % 4 {
		case 1:
			lo[c] = 20 + 30*rng.Float64()
		case 2:
			hi[c] = 30 + 40*rng.Float64()
		case 3:
			lo[c], hi[c] = float64(10+c%20), float64(50+c%20)
		}
	}
	var cr, want columnRuns
	cr.scan(m, b)
	var j panelJob
	j.bounds = b
	j.keepRuns(&cr)
	cr.clip(j, lo, hi)
	want.scan(clipBand(nil, m, b, lo, hi), b)
	if cr.width() != want.width() {
		t.Fatalf("%d columns, want %d", cr.width(), want.width())
	}
	for c := 0; c < want.width(); c++ {
		g, w := cr.col(c), want.col(c)
		if len(g) != len(w) {
			t.Fatalf("column %d: %d runs, want %d", c, len(g), len(w))
		}
		for k := range w {
			if g[k].top != w[k].top || g[k].bot != w[k].bot {
				t.Errorf("column %d run %d: [%d, %d], want [%d, %d]", c, k, g[k].top, g[k].bot, w[k].top, w[k].bot)
			}
		}
	}
}

func near(pts []Point, y, tol float64) int {
	n := 0
	for _, p := range pts {
		if math.Abs(p.Y-y) <= tol {
			n++
		}
	}
	return n
}
