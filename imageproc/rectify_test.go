package imageproc

import (
	"image"
	"math"
	"math/rand/v2"
	"testing"
)

// latticeImage draws a grid-strength map of a w×h page whose pixel (u, v)
// shows the paper point warp(u, v) (mm): 1 mm lines of strength 90 and
// 5 mm lines of strength 220, about 1.6 px wide.
func latticeImage(w, h int, warp func(u, v float64) (float64, float64)) *image.Gray {
	m := image.NewGray(image.Rect(0, 0, w, h))
	for v := 0; v < h; v++ {
		for u := 0; u < w; u++ {
			X, Y := warp(float64(u), float64(v))
			val := 0.0
			for _, c := range [2]float64{X, Y} {
				d1 := math.Abs(c - math.Round(c))       // mm to the nearest 1 mm line
				d5 := math.Abs(c/5-math.Round(c/5)) * 5 // mm to the nearest 5 mm line
				if d5 < 0.08 {
					val = max(val, 220)
				} else if d1 < 0.07 {
					val = max(val, 90)
				}
			}
			m.Pix[v*m.Stride+u] = uint8(val)
		}
	}
	return m
}

// TestRegisterLatticeLens draws a lattice seen through a radial lens warp
// (the model of a phone camera's distortion, q' = c + (q − c)(1 + k·r²);
// Brown 1966, Photogrammetric Engineering 32:444–62, from memory) and a
// mild perspective, and checks that the registration maps the registered
// page to paper by a plain scale and shift: the largest deviation over
// the page must stay under 0.25 mm (the bound is 0.5 mm), while
// the homography alone leaves more than 1 mm.
func TestRegisterLatticeLens(t *testing.T) {
	const w, h = 1500, 1100
	const pxPerMM = 5.0
	cx, cy := float64(w-1)/2, float64(h-1)/2
	r2 := cx*cx + cy*cy
	for _, k := range []float64{0.03, -0.03} {
		warp := func(u, v float64) (float64, float64) {
			dx, dy := u-cx, v-cy
			f := 1 + k*(dx*dx+dy*dy)/r2
			u, v = cx+dx*f, cy+dy*f
			// Mild perspective: the far side 4 % smaller.
			s := 1 + 0.04*(v-cy)/float64(h)
			return (u - cx) / pxPerMM * s, (v - cy) / pxPerMM
		}
		img := latticeImage(w, h, warp)
		lm, ok := registerLattice(img)
		if !ok {
			t.Fatalf("k=%g: lattice not registered", k)
		}
		// Registered px → paper mm; fit X = a·x + b, Y = c·y + d.
		var xs, ys, Xs, Ys []float64
		for y := 100.0; y < float64(lm.h0)-100; y += 37 {
			for x := 100.0; x < float64(lm.w)-100; x += 37 {
				u, v := lm.at(x, y)
				if u < 60 || v < 60 || u > w-60 || v > h-60 {
					continue // outside the drawn page
				}
				X, Y := warp(u, v)
				xs, ys, Xs, Ys = append(xs, x), append(ys, y), append(Xs, X), append(Ys, Y)
			}
		}
		if len(xs) < 200 {
			t.Fatalf("k=%g: only %d points on the page", k, len(xs))
		}
		res := maxResidual(xs, ys, Xs, Ys)
		if res > 0.25 {
			t.Errorf("k=%g: residual distortion %.3f mm > 0.25 mm", k, res)
		}
		// Without the residual field the lens shows.
		flat := *lm
		flat.cu, flat.cv = make([]float64, polyTerms), make([]float64, polyTerms)
		for i := range xs {
			u, v := flat.at(xs[i], ys[i])
			Xs[i], Ys[i] = warp(u, v)
		}
		if hres := maxResidual(xs, ys, Xs, Ys); hres < 1 {
			t.Errorf("k=%g: homography alone leaves %.3f mm; the test warp is too weak to test the field", k, hres)
		}
		t.Logf("k=%g: %d ties, rms %.2f px, residual %.3f mm", k, lm.ties, lm.rms, res)
	}
}

// maxResidual fits X = a·x + b and Y = c·y + d by least squares and
// returns the largest distance from the fit.
func maxResidual(xs, ys, Xs, Ys []float64) float64 {
	fit := func(x, y []float64) (float64, float64) {
		var sx, sy, sxx, sxy float64
		n := float64(len(x))
		for i := range x {
			sx, sy, sxx, sxy = sx+x[i], sy+y[i], sxx+x[i]*x[i], sxy+x[i]*y[i]
		}
		a := (n*sxy - sx*sy) / (n*sxx - sx*sx)
		return a, (sy - a*sx) / n
	}
	a, b := fit(xs, Xs)
	c, d := fit(ys, Ys)
	m := 0.0
	for i := range xs {
		m = max(m, math.Hypot(Xs[i]-(a*xs[i]+b), Ys[i]-(c*ys[i]+d)))
	}
	return m
}

// TestRegisterLatticeRefuses checks that a map without a lattice (seeded
// noise, and a blank page) is not registered: the coarse page must then
// be kept rather than warped by a fit to nothing.
func TestRegisterLatticeRefuses(t *testing.T) {
	noise := image.NewGray(image.Rect(0, 0, 1200, 900))
	r := rand.New(rand.NewPCG(3, 3))
	for i := range noise.Pix {
		noise.Pix[i] = uint8(r.IntN(60))
	}
	blankMap := image.NewGray(image.Rect(0, 0, 1200, 900))
	for name, m := range map[string]*image.Gray{"noise": noise, "blank": blankMap} {
		if _, ok := registerLattice(m); ok {
			t.Errorf("%s: registered a lattice that is not there", name)
		}
	}
}
