package trace

import (
	"math"
	"testing"
)

// TestTrimAtBoundaries draws a panel path along a straight slope whose
// last and first pixels run up a separator stroke, and checks that the
// stretch at a boundary is replaced by the slope's continuation, and that
// nothing changes without a boundary at the edge.
func TestTrimAtBoundaries(t *testing.T) {
	line := func(x float64) float64 { return 100 + 0.5*x }
	var pts []Point
	for x := 0.0; x <= 40; x++ {
		y := line(x)
		if x >= 39 || x <= 1 {
			y -= 30 // the path climbed the tick at both ends
		}
		pts = append(pts, Point{x, y})
	}
	out := trimAtBoundaries(pts, 0, 40, true, true, 2, 3)
	if out[0].X != 0 || out[len(out)-1].X != 40 {
		t.Fatalf("path spans %g–%g px, want 0–40", out[0].X, out[len(out)-1].X)
	}
	for _, p := range out {
		if d := math.Abs(p.Y - line(p.X)); d > 1e-9 {
			t.Errorf("x %g: y %.3f, want %.3f on the slope", p.X, p.Y, line(p.X))
		}
	}
	for i := 1; i < len(out); i++ {
		if out[i].X <= out[i-1].X {
			t.Fatalf("points out of order at %d: %g after %g", i, out[i].X, out[i-1].X)
		}
	}

	same := trimAtBoundaries(pts, 0, 40, false, false, 2, 3)
	if len(same) != len(pts) || same[0] != pts[0] || same[len(same)-1] != pts[len(pts)-1] {
		t.Error("the path changed without a boundary at either edge")
	}
	// Only the left edge is a boundary: the right end keeps its stroke.
	left := trimAtBoundaries(pts, 0, 40, true, false, 2, 3)
	if got := left[len(left)-1]; got != pts[len(pts)-1] {
		t.Errorf("right end %v changed to %v without a boundary there", pts[len(pts)-1], got)
	}
	if d := math.Abs(left[0].Y - line(0)); d > 1e-9 {
		t.Errorf("left end y %.3f, want %.3f", left[0].Y, line(0))
	}
	// Too few points beside the zone to fit a slope: unchanged.
	short := []Point{{0, 1}, {1, 2}, {2, 3}}
	if got := trimAtBoundaries(short, 0, 2, true, false, 2, 3); len(got) != 3 || got[0] != short[0] {
		t.Errorf("a three-point path was changed: %v", got)
	}
}
