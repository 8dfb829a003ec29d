package trace

import (
	"image"
	"math"
	"testing"
)

// softStroke draws a polyline of pen radius r (px) into m with its edge
// anti-aliased over a pixel (ink 255 inside, falling to 0 across the
// edge), as a scan's ink map shows a printed stroke; the darker of what
// is there and the stroke is kept.
func softStroke(m *image.Gray, pts []Point, r float64) {
	for y := m.Rect.Min.Y; y < m.Rect.Max.Y; y++ {
		for x := m.Rect.Min.X; x < m.Rect.Max.X; x++ {
			d := math.Inf(1)
			for i := 0; i+1 < len(pts); i++ {
				d = math.Min(d, segDist(float64(x), float64(y), pts[i], pts[i+1]))
			}
			v := uint8(255 * math.Min(math.Max(r+0.5-d, 0), 1))
			if o := y*m.Stride + x; v > m.Pix[o] {
				m.Pix[o] = v
			}
		}
	}
}

// segDist is the distance from (x, y) to the segment ab.
func segDist(x, y float64, a, b Point) float64 {
	dx, dy := b.X-a.X, b.Y-a.Y
	t := ((x-a.X)*dx + (y-a.Y)*dy) / (dx*dx + dy*dy)
	t = math.Min(math.Max(t, 0), 1)
	return math.Hypot(x-a.X-t*dx, y-a.Y-t*dy)
}

// TestApexesInBlocks draws the upper row's deep S wave (a V) over the
// lower row's tall R wave (a Λ) in the same columns, rows 20 mm apart at
// 20 mm/mV (10 px/mm), the V's trough 8–12 mm below the Λ's apex, so
// that the four strokes merge into one block of ink between them (soft
// edged, as a scan's ink map shows a printed stroke).
// Followed row by row, both paths level off inside the block (trough and
// apex read 3–5 mm short); after apexesInBlocks the upper path reaches
// the drawn trough and the lower path the drawn apex within 2 px, and the
// paths away from the block are as they were.
func TestApexesInBlocks(t *testing.T) {
	const b0, b1 = 200.0, 400.0
	for _, c := range []struct {
		pen, overlap, shift, halfW float64 // pen radius, px; apex and trough 300 ∓ overlap; Λ's shift and half-width, px
	}{
		{1.5, 40, 0, 8},
		{2, 60, 0, 8},
		{2, 60, 2, 8},
		{1.5, 50, -1, 8},
	} {
		apex, trough := 300-c.overlap, 300+c.overlap
		m := image.NewGray(image.Rect(0, 0, 300, 700))
		softStroke(m, []Point{{0, b0}, {100, b0}, {100 + c.halfW, trough}, {100 + 2*c.halfW, b0}, {300, b0}}, c.pen)
		softStroke(m, []Point{{0, b1}, {99 + c.shift, b1}, {99 + c.halfW + c.shift, apex}, {99 + 2*c.halfW + c.shift, b1}, {300, b1}}, c.pen)
		pj := twoRowJobs(m, b0, b1)
		before0, before1 := maxY(pj[0][0].pr.points, 95, 125), minY(pj[1][0].pr.points, 95, 125)
		apexesInBlocks(m, pj, 10, 200)
		got0, got1 := maxY(pj[0][0].pr.points, 95, 125), minY(pj[1][0].pr.points, 95, 125)
		t.Logf("%+v: trough %.1f → %.1f (drawn %g), apex %.1f → %.1f (drawn %g)", c, before0, got0, trough, before1, got1, apex)
		if d := got0 - trough; d < -2 || d > 2 {
			t.Errorf("%+v: upper row's trough at %.1f px, drawn at %g", c, got0, trough)
		}
		if d := got1 - apex; d < -2 || d > 2 {
			t.Errorf("%+v: lower row's apex at %.1f px, drawn at %g", c, got1, apex)
		}
		for _, x := range []float64{50, 200} {
			if y, ok := yAt(pj[0][0].pr.points, x); !ok || y < b0-1 || y > b0+1 {
				t.Errorf("%+v: upper row at x %g: %.1f px", c, x, y)
			}
			if y, ok := yAt(pj[1][0].pr.points, x); !ok || y < b1-1 || y > b1+1 {
				t.Errorf("%+v: lower row at x %g: %.1f px", c, x, y)
			}
		}
	}
}

// TestApexesInBlocksFlatTrace: where the lower row's R wave reaches up to
// the upper row's flat trace, the upper row gains no trough deeper than
// as followed (its trace is no V: the R wave's arms close by themselves
// below its apex).
func TestApexesInBlocksFlatTrace(t *testing.T) {
	const b0, b1 = 200.0, 400.0
	m := image.NewGray(image.Rect(0, 0, 300, 700))
	stroke(m, []Point{{0, b0}, {300, b0}}, 1.5)
	stroke(m, []Point{{0, b1}, {99, b1}, {105, b0}, {111, b1}, {300, b1}}, 1.5)
	pj := twoRowJobs(m, b0, b1)
	before := maxY(pj[0][0].pr.points, 0, 300)
	apexesInBlocks(m, pj, 10, 200)
	if y := maxY(pj[0][0].pr.points, 0, 300); y > before+1 {
		t.Errorf("upper row dips to %.1f px, %.1f as followed (its trace is flat at %g)", y, before, b0)
	}
}
