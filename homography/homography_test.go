package homography

import (
	"math"
	"testing"
)

// A rotation, an anisotropic scale, a translation and a perspective row
// composed, applied and inverted: Invert(H)·H is the identity and points
// return to where they started.
func TestComposeInvert(t *testing.T) {
	th := 7 * math.Pi / 180
	r := [9]float64{math.Cos(th), math.Sin(th), 0, -math.Sin(th), math.Cos(th), 0, 0, 0, 1}
	s := [9]float64{8.03, 0, 12, 0, 3.85, -4, 0, 0, 1}
	p := [9]float64{1, 0, 0, 0, 1, 0, 1e-4, -2e-4, 1}
	h := Mul(p, Mul(s, r))
	inv, ok := Invert(h)
	if !ok {
		t.Fatal("invertible map reported singular")
	}
	id := Mul(inv, h)
	for k := range id {
		if math.Abs(id[k]/id[8]-Identity[k]) > 1e-12 {
			t.Fatalf("Invert(H)·H = %v, want identity", id)
		}
	}
	for _, q := range [][2]float64{{0, 0}, {297, 210}, {-15.5, 88}} {
		u, v := Apply(h, q[0], q[1])
		// Apply in steps must agree with the composed map.
		x1, y1 := Apply(r, q[0], q[1])
		x2, y2 := Apply(s, x1, y1)
		x3, y3 := Apply(p, x2, y2)
		if math.Hypot(u-x3, v-y3) > 1e-9 {
			t.Errorf("Mul order: (%g, %g) vs stepwise (%g, %g)", u, v, x3, y3)
		}
		x, y := Apply(inv, u, v)
		if math.Hypot(x-q[0], y-q[1]) > 1e-9 {
			t.Errorf("round trip of %v gave (%g, %g)", q, x, y)
		}
	}
	if _, ok := Invert([9]float64{1, 2, 3, 2, 4, 6, 0, 0, 1}); ok {
		t.Error("singular map reported invertible")
	}
}
