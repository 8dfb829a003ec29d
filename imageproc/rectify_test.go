package imageproc

import (
	"image"
	"math"
	"math/rand/v2"
	"slices"
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
		lm, ok := registerLattice(img, nil)
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
		flat.sp = nil
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
		if _, ok := registerLattice(m, nil); ok {
			t.Errorf("%s: registered a lattice that is not there", name)
		}
	}
}

// TestRefineLatticeCorrects perturbs a registered lattice map by a smooth
// field of up to about 3 mm (a first fit whose lines were misnumbered over
// part of the page looks like this) and checks that the refinement on the
// 1 mm lines, unwrapped from node to node, brings the residual distortion
// back under 0.25 mm. The warp is the radial lens model of
// TestRegisterLatticeLens (Brown 1966, from memory).
func TestRefineLatticeCorrects(t *testing.T) {
	const w, h = 1500, 1100
	const pxPerMM = 5.0
	cx, cy := float64(w-1)/2, float64(h-1)/2
	r2 := cx*cx + cy*cy
	const k = 0.03
	warp := func(u, v float64) (float64, float64) {
		dx, dy := u-cx, v-cy
		f := 1 + k*(dx*dx+dy*dy)/r2
		u, v = cx+dx*f, cy+dy*f
		s := 1 + 0.04*(v-cy)/float64(h)
		return (u - cx) / pxPerMM * s, (v - cy) / pxPerMM
	}
	img := latticeImage(w, h, warp)
	lm, ok := registerLattice(img, nil)
	if !ok {
		t.Fatal("lattice not registered")
	}
	// The map as fitted (lattice px → coarse px, origin at lattice 0).
	base := *lm
	base.x0, base.y0 = 0, 0
	residual := func(m *latticeMap) float64 {
		var xs, ys, Xs, Ys []float64
		for Y := lm.lo.Y; Y <= lm.hi.Y; Y += 23 {
			for X := lm.lo.X; X <= lm.hi.X; X += 23 {
				u, v := m.at(X, Y)
				if u < 60 || v < 60 || u > w-60 || v > h-60 {
					continue
				}
				a, b := warp(u, v)
				xs, ys, Xs, Ys = append(xs, X), append(ys, Y), append(Xs, a), append(Ys, b)
			}
		}
		if len(xs) < 200 {
			t.Fatalf("only %d points on the page", len(xs))
		}
		return maxResidual(xs, ys, Xs, Ys)
	}
	// The homography with a cubic field: the lens left in, and a
	// perturbation on top.
	bad := base
	bad.sp = nil
	bad.cu, bad.cv = slices.Clone(base.cu), slices.Clone(base.cv)
	bad.cu[3] += 9        // x²: up to 9 px (1.8 mm) at the sides
	bad.cv[4] += 12       // x·y: up to 12 px at the corners
	bad.cu[7] -= 6        // x²·y
	bad.rms = math.Inf(1) // not the rms of the perturbed map: any refit may replace it
	before := residual(&bad)
	if before < 1.5 {
		t.Fatalf("perturbation leaves only %.2f mm; too weak to test the refinement", before)
	}
	fixed := refineLattice(img, &bad, lm.period)
	after := residual(fixed)
	if after > 0.25 {
		t.Errorf("refined residual %.3f mm > 0.25 mm (perturbed %.2f mm)", after, before)
	}
	t.Logf("perturbed %.2f mm → refined %.3f mm, %d ties, rms %.2f px", before, after, fixed.ties, fixed.rms)
}

// TestUnwrapOffsets checks the node-to-node unwrapping of minor-line
// offsets: a smooth field of several periods, seen only modulo the
// period, is recovered up to one whole number of periods; nodes of low
// quality are left out and do not break the field around them.
func TestUnwrapOffsets(t *testing.T) {
	const T = 5.0
	g := &nodeGrid{nx: 30, ny: 20}
	g.n = make([]nodeOffset, g.nx*g.ny)
	r := rand.New(rand.NewPCG(5, 5))
	truth := make([]float64, len(g.n))
	for iy := 0; iy < g.ny; iy++ {
		for ix := 0; ix < g.nx; ix++ {
			i := iy*g.nx + ix
			truth[i] = 3*T*math.Sin(float64(ix)/15) + 2*T*math.Cos(float64(iy)/10) + 0.03*T*r.NormFloat64()
			d := truth[i] - T*math.Round(truth[i]/T)
			q := 1.0
			if ix >= 10 && ix < 14 && iy >= 5 && iy < 15 {
				d, q = T*(r.Float64()-0.5), 0.05 // a blot: no grid seen
			}
			g.n[i] = nodeOffset{ok: true, d: [2][2]float64{{d, d}}, q: [2][2]float64{{q, q}}}
		}
	}
	off := g.unwrapOffsets(0, 0, 0.5, T)
	if off == nil {
		t.Fatal("nothing unwrapped")
	}
	shift := math.NaN()
	for i, o := range off {
		low := g.n[i].q[0][0] < 0.5
		if low != math.IsNaN(o) {
			t.Fatalf("node %d: quality %.2f but offset %v", i, g.n[i].q[0][0], o)
		}
		if low {
			continue
		}
		s := (truth[i] - o) / T
		if math.IsNaN(shift) {
			shift = math.Round(s)
		}
		if math.Abs(s-shift) > 0.3 {
			t.Fatalf("node (%d, %d): offset %.2f, truth %.2f: %.2f periods apart, others %.0f", i%g.nx, i/g.nx, o, truth[i], s, shift)
		}
	}
}

// TestRegisterLatticeCropsToSheet checks that the registered page's crop
// (the grid seen plus three periods) stops at the sheet's edge: the grid
// ends at x = 1100 px, the sheet at 1140 px (desk beyond), so the 15 mm
// margin would reach 1175 px and take the sheet's edge, which the later
// stages read as a trace. Without the sheet test the crop goes past it.
func TestRegisterLatticeCropsToSheet(t *testing.T) {
	const w, h = 1500, 1100
	img := latticeImage(w, h, func(u, v float64) (float64, float64) { return u / 5, v / 5 })
	for y := 0; y < h; y++ {
		clear(img.Pix[y*img.Stride+1100 : y*img.Stride+w])
	}
	onSheet := func(u, v float64) bool { return u < 1140 }
	right := func(lm *latticeMap) float64 {
		r := 0.0
		for y := 100.0; y < float64(lm.h0)-100; y += 50 {
			u, _ := lm.at(float64(lm.w-1), y)
			r = max(r, u)
		}
		return r
	}
	lm, ok := registerLattice(img, onSheet)
	if !ok {
		t.Fatal("lattice not registered")
	}
	if r := right(lm); r > 1140 || r < 1090 {
		t.Errorf("registered page's right edge at x = %.0f px, want on the sheet (≤ 1140) and past the grid's end (1100 less half a period)", r)
	}
	free, ok := registerLattice(img, nil)
	if !ok {
		t.Fatal("lattice not registered without the sheet test")
	}
	if r := right(free); r <= 1140 {
		t.Errorf("without the sheet test the right edge is at %.0f px: the case does not test the clip", r)
	}
}
