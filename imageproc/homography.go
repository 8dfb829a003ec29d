package imageproc

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"tracelift/homography"
)

// Point is a position in pixels (pixel centres at integer coordinates)
// or in millimetres, as documented where used.
type Point struct{ X, Y float64 }

// Homography is a row-major 3×3 projective map acting on pixel
// coordinates (pixel centres at integer coordinates).
type Homography = [9]float64

// Identity is the identity homography.
var identity = homography.Identity

// Apply maps (x, y) through h (see package homography).
func Apply(h Homography, x, y float64) (float64, float64) { return homography.Apply(h, x, y) }

// Mul returns the product a·b (apply b first, then a).
func Mul(a, b Homography) Homography { return homography.Mul(a, b) }

// Invert returns the inverse of h; ok is false when h is singular.
func Invert(h Homography) (Homography, bool) { return homography.Invert(h) }

// ErrDegenerate reports point sets that do not determine a homography.
var ErrDegenerate = errors.New("imageproc: degenerate point configuration")

// EstimateHomography returns the least-squares homography H with
// H·src[k] ≈ dst[k], by the normalised direct linear transform (Hartley,
// IEEE TPAMI 1997;19:580–93): both point sets are translated to their
// centroid and scaled to mean distance √2, the 2n×9 system is solved by
// SVD (gonum mat), and the normalisation is undone. At least 4 pairs are
// needed.
func EstimateHomography(src, dst []Point) (Homography, error) {
	var h Homography
	if len(src) != len(dst) {
		panic("imageproc: EstimateHomography: length mismatch")
	}
	n := len(src)
	if n < 4 {
		return h, fmt.Errorf("%w: %d point pairs, need 4", ErrDegenerate, n)
	}
	ts, ok1 := normaliser(src)
	td, ok2 := normaliser(dst)
	if !ok1 || !ok2 {
		return h, ErrDegenerate
	}
	a := mat.NewDense(2*n, 9, nil)
	for k := 0; k < n; k++ {
		x, y := Apply(ts, src[k].X, src[k].Y)
		u, v := Apply(td, dst[k].X, dst[k].Y)
		a.SetRow(2*k, []float64{-x, -y, -1, 0, 0, 0, u * x, u * y, u})
		a.SetRow(2*k+1, []float64{0, 0, 0, -x, -y, -1, v * x, v * y, v})
	}
	var svd mat.SVD
	if !svd.Factorize(a, mat.SVDThin) { // V is 9×9 either way; thin keeps U at 2n×9
		return h, ErrDegenerate
	}
	var vt mat.Dense
	svd.VTo(&vt)
	var hn Homography
	for i := 0; i < 9; i++ {
		hn[i] = vt.At(i, 8)
	}
	tdInv, _ := Invert(td)
	h = Mul(tdInv, Mul(hn, ts))
	if h[8] == 0 {
		return h, ErrDegenerate
	}
	for i := range h {
		h[i] /= h[8]
	}
	return h, nil
}

// normaliser returns the similarity moving pts' centroid to the origin with
// mean distance √2.
func normaliser(pts []Point) (Homography, bool) {
	var cx, cy float64
	for _, p := range pts {
		cx += p.X
		cy += p.Y
	}
	cx /= float64(len(pts))
	cy /= float64(len(pts))
	var d float64
	for _, p := range pts {
		d += math.Hypot(p.X-cx, p.Y-cy)
	}
	d /= float64(len(pts))
	if d == 0 {
		return identity, false
	}
	s := math.Sqrt2 / d
	return Homography{s, 0, -s * cx, 0, s, -s * cy, 0, 0, 1}, true
}
