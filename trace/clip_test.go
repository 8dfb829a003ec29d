package trace

import (
	"math"
	"testing"
)

// TestClipApex cuts a Gaussian R wave (σ 4 columns, 300 px tall) at 80 %
// of its height, as the paper's edge cuts a complex taller than the
// sheet, and extrapolates the stretch: the apex comes back above the edge
// and no higher than the wave was drawn, and the points outside the
// stretch are kept. A stretch whose sides do not meet in a peak (a
// trough at the top edge) is left alone.
func TestClipApex(t *testing.T) {
	const base, h, xc, sigma = 400.0, 300.0, 50.0, 4.0
	edge := base - 0.8*h
	var path []Point
	var xa, xb float64 = math.Inf(1), math.Inf(-1)
	for x := 0.0; x <= 100; x++ {
		d := (x - xc) / sigma
		y := base - h*math.Exp(-d*d/2)
		if y < edge {
			y = edge
			xa, xb = math.Min(xa, x), math.Max(xb, x)
		}
		path = append(path, Point{x, y})
	}
	out, past, ok := clipApex(path, xa, xb, true)
	if !ok {
		t.Fatal("not extrapolated")
	}
	apex := math.Inf(1)
	for _, p := range out {
		apex = math.Min(apex, p.Y)
		if (p.X < xa || p.X > xb) && p.Y != path[int(p.X)].Y {
			t.Errorf("point at x = %.0f moved outside the stretch", p.X)
		}
	}
	if apex > edge-0.1*h || apex < base-h-0.02*h {
		t.Errorf("apex at %.1f px: the edge is at %.0f, the wave's apex at %.0f", apex, edge, base-h)
	}
	if math.Abs(past-(edge-apex)) > 1e-9 {
		t.Errorf("reported %.1f px past the edge, apex is %.1f past", past, edge-apex)
	}
	t.Logf("edge %.0f, apex %.1f (drawn %.0f), %.0f %% of the cut height restored", edge, apex, base-h, 100*(edge-apex)/(0.2*h))
	// The same stretch taken as cut at the bottom edge: the sides make a
	// peak, not a trough; nothing changes.
	if _, _, ok := clipApex(path, xa, xb, false); ok {
		t.Error("a peak extrapolated as a trough")
	}
}
