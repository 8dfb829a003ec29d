// Package homography holds the 3×3 projective maps that carry points
// between the paper (mm), a rendered or scanned image and an upright page
// (px): applying, composing and inverting them. Matrices are row-major
// [9]float64; a point (x, y) maps to (u/w, v/w) with [u v w]ᵀ = H·[x y 1]ᵀ
// (Hartley & Zisserman, Multiple View Geometry, 2nd ed., ch. 2; common
// practice).
package homography

import "math"

// Identity is the identity map.
var Identity = [9]float64{1, 0, 0, 0, 1, 0, 0, 0, 1}

// Apply maps (x, y) through h.
func Apply(h [9]float64, x, y float64) (float64, float64) {
	w := h[6]*x + h[7]*y + h[8]
	return (h[0]*x + h[1]*y + h[2]) / w, (h[3]*x + h[4]*y + h[5]) / w
}

// Mul returns the product a·b: the map that applies b first, then a.
func Mul(a, b [9]float64) [9]float64 {
	var c [9]float64
	for i := range 3 {
		for j := range 3 {
			c[3*i+j] = a[3*i]*b[j] + a[3*i+1]*b[3+j] + a[3*i+2]*b[6+j]
		}
	}
	return c
}

// Invert returns the inverse of h by the adjugate; ok is false when h is
// singular or not finite.
func Invert(h [9]float64) (inv [9]float64, ok bool) {
	a, b, c, d, e, f, g, hh, i := h[0], h[1], h[2], h[3], h[4], h[5], h[6], h[7], h[8]
	A, B, C := e*i-f*hh, -(d*i - f*g), d*hh-e*g
	det := a*A + b*B + c*C
	if det == 0 || math.IsNaN(det) || math.IsInf(det, 0) {
		return inv, false
	}
	r := 1 / det
	return [9]float64{
		A * r, -(b*i - c*hh) * r, (b*f - c*e) * r,
		B * r, (a*i - c*g) * r, -(a*f - c*d) * r,
		C * r, -(a*hh - b*g) * r, (a*e - b*d) * r,
	}, true
}
