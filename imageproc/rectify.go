package imageproc

import (
	"image"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// Lattice registration of a photographed page.
//
// A homography from vanishing points leaves a photo with the lens warp and
// any paper curl, a few millimetres at the corners. The printed grid is a
// known lattice, so the coarse-rectified page is registered to it:
//
//   - the major-line period (5 mm) along x and y from the power of the
//     grid map's projection profiles summed over large tiles (power does
//     not depend on where the lines fall, so a slowly varying position
//     does not blur it);
//   - in overlapping tiles of about 4 major periods, the local phase of
//     that period (one Fourier coefficient of the Hann-windowed column and
//     row profiles, common practice for fringe and lattice analysis) gives
//     the position of a major line near the tile centre along each axis;
//   - the lines' integer indices are unwrapped from the best tile
//     outwards (quality-guided phase unwrapping: Ghiglia & Pritt,
//     Two-Dimensional Phase Unwrapping, Wiley 1998, ch. 4, from memory);
//   - the tie points (lattice position ↔ page px) are fitted by a
//     homography (normalised DLT, EstimateHomography) and a cubic
//     polynomial residual field, by least squares with outlier rejection
//     (3.5 robust standard deviations, iterated), the field clamped to the
//     tie points' hull so that it cannot run away where no grid was seen;
//   - that first fit is refined on the 1 mm lines (refineLattice): at
//     every lattice node (each crossing of major lines) a window one major
//     period across, seen through the fit's local affine approximation, is
//     projected on the lattice axes, and the phase of the minor (S/5)
//     period gives the node's offset from the prediction, modulo 1 mm.
//     The offsets are unwrapped from node to node (quality-guided, as
//     above), so a region the first fit numbered a period off is mended
//     rather than fitted around, and the map is refitted to the nodes
//     (the phase read at five times the frequency, so a fifth of the
//     position error). Where the minor lines are too faint the major
//     period is used the same way; the tightest fit whose ties cover at
//     least 80 % of the first fit's is kept;
//   - the refit's residual field is a bicubic B-spline with knots every
//     four major periods (20 mm), fitted by regularised least squares
//     (splineField): one cubic polynomial left up to 0.4 mm in the corners
//     of a strongly warped photo, where the lens changes fastest. It
//     continues linearly for two periods past the tie points (the grid's
//     last millimetres, whose node windows run off the grid);
//   - the registered page is cropped to the tie points' extent plus three
//     periods, but kept on the sheet (the paper mask): the sheet's edge
//     against the desk reads as a trace to the later stages.
//
// The result maps the registered page's pixels (a square lattice at one
// px/mm on both axes) to the coarse page's pixels.

// latticeMap maps registered page px to coarse page px.
type latticeMap struct {
	h      Homography   // lattice px → coarse px
	cu, cv []float64    // residual polynomial coefficients (coarse px)
	sp     *splineField // residual spline field, replacing the polynomial when set
	nrm    [4]float64   // lattice px → normalised: (X−nrm[0])·nrm[1], (Y−nrm[2])·nrm[3]
	lo, hi Point        // clamp box of the residual field, lattice px
	x0, y0 float64      // lattice px of registered pixel (0, 0)
	w, h0  int          // registered page size, px
	period float64      // lattice px per major period
	rms    float64      // tie points' rms residual, coarse px
	ties   int          // inlier tie points
}

// at maps a registered page pixel to coarse page px.
func (m *latticeMap) at(x, y float64) (float64, float64) {
	X, Y := x+m.x0, y+m.y0
	u, v := Apply(m.h, X, Y)
	if m.sp != nil {
		du, dv := m.sp.at(X, Y)
		return u + du, v + dv
	}
	cx := min(max(X, m.lo.X), m.hi.X)
	cy := min(max(Y, m.lo.Y), m.hi.Y)
	var t [polyTerms]float64
	polyBasis(&t, (cx-m.nrm[0])*m.nrm[1], (cy-m.nrm[2])*m.nrm[3])
	for k := range t {
		u += m.cu[k] * t[k]
		v += m.cv[k] * t[k]
	}
	return u, v
}

// polyTerms is the number of terms of the residual polynomial (all
// monomials x^i·y^j with i+j ≤ 3).
const polyTerms = 10

func polyBasis(t *[polyTerms]float64, x, y float64) {
	*t = [polyTerms]float64{1, x, y, x * x, x * y, y * y, x * x * x, x * x * y, x * y * y, y * y * y}
}

// axisPhase is one tile's measurement along one axis.
type axisPhase struct {
	pos float64 // coarse px of a major line near the tile centre
	q   float64 // quality: share of the windowed profile in the period
}

// tieTile is one tile's pair of measurements.
type tieTile struct {
	x, y   axisPhase
	jx, jy int  // unwrapped major-line indices
	seen   bool // index assigned
}

// registerLattice registers the coarse-rectified page whose grid-strength
// map is grd. ok is false when the grid does not give a reliable lattice
// (then the coarse page is kept). onSheet, when not nil, reports whether a
// coarse px lies on the sheet (not the desk around it); the registered
// page's crop then stays on the sheet.
func registerLattice(grd *image.Gray, onSheet func(u, v float64) bool) (*latticeMap, bool) {
	w, h := grd.Rect.Dx(), grd.Rect.Dy()
	mx, okx := majorPeriod(grd, true)
	my, oky := majorPeriod(grd, false)
	// The lattice is square: one axis reading about a fifth of the other
	// did not see its major lines.
	// A harmonic (2, 3 or 4 lines per period) taken on one axis shows
	// the same way.
	for k := 5.0; k >= 2; k-- {
		if r := mx / my; math.Abs(r/k-1) < 0.2 {
			my *= k
		} else if math.Abs(r*k-1) < 0.2 {
			mx *= k
		}
	}
	if !okx || !oky || mx/my > 1.4 || my/mx > 1.4 {
		return nil, false
	}
	// Tiles of 3 major periods, one period apart: neighbours differ by
	// about one period, so the unwrapping tolerates a scale error of the
	// coarse page of ±30 %.
	tile := int(math.Round(3 * max(mx, my)))
	step := int(math.Round(max(mx, my)))
	nx, ny := (w-tile)/step+1, (h-tile)/step+1
	if nx < 4 || ny < 3 || tile < 16 {
		return nil, false
	}
	tiles := make([]tieTile, nx*ny)
	col := make([]float64, tile)
	row := make([]float64, tile)
	win := hann(tile)
	for ty := 0; ty < ny; ty++ {
		for tx := 0; tx < nx; tx++ {
			x0, y0 := tx*step, ty*step
			clear(col)
			clear(row)
			for y := 0; y < tile; y++ {
				r := grd.Pix[(y0+y)*grd.Stride+x0 : (y0+y)*grd.Stride+x0+tile]
				s := 0
				for x, v := range r {
					col[x] += float64(v)
					s += int(v)
				}
				row[y] = float64(s)
			}
			c := float64(tile-1) / 2
			t := &tiles[ty*nx+tx]
			t.x = phaseAt(col, win, mx, float64(x0)+c)
			t.y = phaseAt(row, win, my, float64(y0)+c)
		}
	}
	// Tie points: lattice px (square, period S per major line) ↔ coarse px.
	S := math.Sqrt(mx * my)
	// Where the major lines barely stand out from the minor ones (a grey
	// grid, a dense layout), tiles of middling phase quality misnumber
	// their lines; the fit is then repeated on the clearer tiles only and
	// the tightest fit kept.
	var m *latticeMap
	for _, frac := range []float64{0.35, 0.5, 0.65} {
		mm, ok := fitTiles(tiles, nx, ny, step, mx, my, S, frac)
		// A first fit this loose has not found the lattice; a tighter
		// one is refined on the node windows (refine.go), which mends
		// misnumbered regions.
		if !ok || mm.rms > S/4 {
			continue
		}
		mm = refineLattice(grd, mm, S)
		if m == nil || mm.rms < m.rms {
			m = mm
		}
		if m.rms <= max(1.5, S/40) {
			break
		}
	}
	if m == nil {
		return nil, false
	}
	// The registered page covers the coarse page: its corners through the
	// homography's inverse.
	inv, ok := Invert(m.h)
	if !ok {
		return nil, false
	}
	lo := Point{math.Inf(1), math.Inf(1)}
	hi := Point{math.Inf(-1), math.Inf(-1)}
	for _, c := range [4]Point{{0, 0}, {float64(w - 1), 0}, {0, float64(h - 1)}, {float64(w - 1), float64(h - 1)}} {
		X, Y := Apply(inv, c.X, c.Y)
		lo.X, lo.Y = min(lo.X, X), min(lo.Y, Y)
		hi.X, hi.Y = max(hi.X, X), max(hi.Y, Y)
	}
	m.x0, m.y0 = math.Floor(lo.X), math.Floor(lo.Y)
	m.w, m.h0 = int(math.Ceil(hi.X-m.x0))+1, int(math.Ceil(hi.Y-m.y0))+1
	if m.w > 3*w || m.h0 > 3*h || m.w < w/3 || m.h0 < h/3 {
		return nil, false
	}
	m.period = S
	// Crop to the grid area seen (the inlier tie points) with three
	// periods (15 mm) of margin, on the sheet: the desk around the sheet
	// carries nothing for the later stages.
	cx0 := max(m.x0, math.Floor(m.lo.X-3*S))
	cy0 := max(m.y0, math.Floor(m.lo.Y-3*S))
	cx1 := min(m.x0+float64(m.w-1), math.Ceil(m.hi.X+3*S))
	cy1 := min(m.y0+float64(m.h0-1), math.Ceil(m.hi.Y+3*S))
	if onSheet != nil {
		cx0, cy0, cx1, cy1 = m.clipToSheet(onSheet, cx0, cy0, cx1, cy1, S)
	}
	if cx1-cx0 > 8*S && cy1-cy0 > 6*S {
		m.x0, m.y0 = cx0, cy0
		m.w, m.h0 = int(cx1-cx0)+1, int(cy1-cy0)+1
	}
	// Tie points scattered by more than a twelfth of a period: the
	// lattice was not seen well enough (a dotted grid without major
	// marks on one axis, say); the coarse page is kept.
	if m.rms > max(3, S/12) {
		return nil, false
	}
	return m, true
}

// fitTiles unwraps the tiles' major-line indices (tiles whose phase
// quality is at least frac of the best tiles' take part), fits the
// lattice map to the tie points and re-indexes tiles one period off.
func fitTiles(tiles []tieTile, nx, ny, step int, mx, my, S, frac float64) (*latticeMap, bool) {
	if !unwrap(tiles, nx, ny, step, mx, my, frac) {
		return nil, false
	}
	var lat, pg []Point
	for _, t := range tiles {
		if t.seen {
			lat = append(lat, Point{float64(t.jx) * S, float64(t.jy) * S})
			pg = append(pg, Point{t.x.pos, t.y.pos})
		}
	}
	m, ok := fitLattice(lat, pg, S, false)
	if !ok {
		return nil, false
	}
	// Re-index: a tile unwrapped one period off is moved to the index
	// the fit predicts, then everything is fitted again.
	for iter := 0; iter < 2; iter++ {
		lat, pg = lat[:0], pg[:0]
		for i := range tiles {
			t := &tiles[i]
			if !t.seen {
				continue
			}
			t.jx, t.jy = m.reindex(t.jx, t.jy, t.x.pos, t.y.pos, S)
			lat = append(lat, Point{float64(t.jx) * S, float64(t.jy) * S})
			pg = append(pg, Point{t.x.pos, t.y.pos})
		}
		if m, ok = fitLattice(lat, pg, S, false); !ok {
			return nil, false
		}
	}
	return m, true
}

// reindex returns the indices (near jx, jy) whose predicted position is
// closest to the measured one, axis by axis.
func (m *latticeMap) reindex(jx, jy int, px, py, S float64) (int, int) {
	bx, by := jx, jy
	best := math.Inf(1)
	for d := -1; d <= 1; d++ {
		u, _ := m.at(float64(jx+d)*S-m.x0, float64(jy)*S-m.y0)
		if e := math.Abs(u - px); e < best {
			best, bx = e, jx+d
		}
	}
	best = math.Inf(1)
	for d := -1; d <= 1; d++ {
		_, v := m.at(float64(jx)*S-m.x0, float64(jy+d)*S-m.y0)
		if e := math.Abs(v - py); e < best {
			best, by = e, jy+d
		}
	}
	return bx, by
}

// hann returns the n-point Hann window.
func hann(n int) []float64 {
	w := make([]float64, n)
	for i := range w {
		w[i] = 0.5 - 0.5*math.Cos(2*math.Pi*(float64(i)+0.5)/float64(n))
	}
	return w
}

// phaseAt measures, in a profile whose first sample sits at page
// coordinate origin+0 − (len−1)/2 relative to centre c, the position of a
// line of period T (px) nearest the profile's centre c (page px).
func phaseAt(prof, win []float64, T, c float64) axisPhase {
	n := len(prof)
	var mean, ws float64
	for i, v := range prof {
		mean += win[i] * v
		ws += win[i]
	}
	mean /= ws
	var re, im, tot float64
	mid := float64(n-1) / 2
	for i, v := range prof {
		d := win[i] * (v - mean)
		a := 2 * math.Pi * (float64(i) - mid) / T
		re += d * math.Cos(a)
		im -= d * math.Sin(a)
		tot += math.Abs(d)
	}
	if tot == 0 {
		return axisPhase{}
	}
	// Lines (high grid strength) at offsets where cos(2π·off/T − φ) = 1.
	phi := math.Atan2(-im, re)
	return axisPhase{pos: c + phi/(2*math.Pi)*T, q: 2 * math.Hypot(re, im) / tot}
}

// majorPeriod finds the major-line period (px) of grd along x (vertical
// lines, column profiles) or y. The profiles of tiles of about 512 px are
// high-passed (a 255-px running mean removed), Hann-windowed, and their
// normalised power summed over the tiles at log-spaced periods. Each
// period's prominence is its power over the median power within ±25 %
// (lighting and the sheet's edges give smooth spectra; a lattice gives
// peaks); the fundamental is the period whose prominences summed over its
// first four harmonics are largest (a harmonic sum, common practice in
// pitch detection). It is replaced by five times itself when that shows
// a prominent peak of its own (the minor lines were the fundamental).
func majorPeriod(grd *image.Gray, alongX bool) (float64, bool) {
	w, h := grd.Rect.Dx(), grd.Rect.Dy()
	L, across := w, h
	if !alongX {
		L, across = h, w
	}
	tl := min(1024, L/2)
	if tl < 96 {
		return 0, false
	}
	nt, na := L/tl, max(1, across/tl)
	const ratio = 1.005
	var periods []float64
	for T := 3.0; T <= float64(tl)/3; T *= ratio {
		periods = append(periods, T)
	}
	np := len(periods)
	power := make([]float64, np)
	raw := make([]float64, tl)
	prof := make([]float64, tl)
	win := hann(tl)
	const box = 255 // half width of the running mean
	for a := 0; a < na; a++ {
		for t := 0; t < nt; t++ {
			clear(raw)
			a0, a1 := a*across/na, (a+1)*across/na
			for k := a0; k < a1; k++ {
				if alongX {
					r := grd.Pix[k*grd.Stride+t*tl : k*grd.Stride+t*tl+tl]
					for i, v := range r {
						raw[i] += float64(v)
					}
				} else {
					for i := range raw {
						raw[i] += float64(grd.Pix[(t*tl+i)*grd.Stride+k])
					}
				}
			}
			// High-pass: subtract the running mean (prefix sums).
			cum := make([]float64, tl+1)
			for i, v := range raw {
				cum[i+1] = cum[i] + v
			}
			var e float64
			for i := range raw {
				lo, hi := max(0, i-box), min(tl, i+box+1)
				prof[i] = win[i] * (raw[i] - (cum[hi]-cum[lo])/float64(hi-lo))
				e += prof[i] * prof[i]
			}
			if e == 0 {
				continue
			}
			for j, T := range periods {
				// cos/sin by rotation (one complex multiply per sample).
				dc, ds := math.Cos(2*math.Pi/T), math.Sin(2*math.Pi/T)
				c, s := 1.0, 0.0
				var re, im float64
				for i := range prof {
					re += prof[i] * c
					im += prof[i] * s
					c, s = c*dc-s*ds, s*dc+c*ds
				}
				power[j] += (re*re + im*im) / e
			}
		}
	}
	// Prominence against the local median: within ±(c + 30 %) but
	// outside the main lobe ±c of a peak (c = 2.5 T/tile, at least 2 %).
	prom := make([]float64, np)
	var nb []float64
	for j, T := range periods {
		c := max(0.02, 2.5*T/float64(tl))
		core := int(math.Ceil(math.Log(1+c) / math.Log(ratio)))
		span := int(math.Ceil(math.Log(1.3+c) / math.Log(ratio)))
		nb = nb[:0]
		for i := max(0, j-span); i <= min(np-1, j+span); i++ {
			if i < j-core || i > j+core {
				nb = append(nb, power[i])
			}
		}
		slices.Sort(nb)
		if len(nb) > 4 && nb[len(nb)/2] > 0 {
			prom[j] = power[j] / nb[len(nb)/2]
		}
	}
	peakProm := func(T float64) float64 {
		if T < periods[0] || T > periods[np-1] {
			return 0
		}
		k := nearest(periods, T)
		best := 0.0
		for d := -2; d <= 2; d++ {
			if i := k + d; i >= 0 && i < np {
				best = max(best, prom[i])
			}
		}
		return best
	}
	// A sheet in view spans at least about 30 major periods (150 mm) on
	// its short side.
	maxT := float64(min(w, h)) / 30
	best, bestScore := -1, 0.0
	for j, T := range periods {
		if prom[j] < 4 || T > maxT {
			continue
		}
		sc := prom[j]
		for k := 2; k <= 4; k++ {
			sc += peakProm(T / float64(k))
		}
		if sc > bestScore {
			best, bestScore = j, sc
		}
	}
	if best < 0 {
		return 0, false
	}
	T := refinePeak(periods, power, best)
	// The major lines' peak: within its main lobe of 5T.
	k5 := nearest(periods, 5*T)
	lobe := int(math.Ceil(math.Log(1+1.25*5*T/float64(tl)) / math.Log(ratio)))
	p5 := 0.0
	for i := max(0, k5-lobe); i <= min(np-1, k5+lobe); i++ {
		p5 = max(p5, prom[i])
	}
	if p5 >= 4 && 5*T <= min(periods[np-1], 1.1*maxT) {
		k := k5
		for d := -lobe; d <= lobe; d++ {
			if i := k + d; i >= 0 && i < np && power[i] > power[k] {
				k = i
			}
		}
		return refinePeak(periods, power, k), true
	}
	return T, true
}

// refinePeak fits a parabola (in log period) through the peak and its
// neighbours.
func refinePeak(periods, power []float64, j int) float64 {
	if j <= 0 || j >= len(power)-1 {
		return periods[j]
	}
	a, b, c := power[j-1], power[j], power[j+1]
	d := a - 2*b + c
	if d >= 0 {
		return periods[j]
	}
	off := min(max(0.5*(a-c)/d, -1), 1)
	return periods[j] * math.Pow(1.005, off)
}

func nearest(periods []float64, T float64) int {
	i, _ := slices.BinarySearch(periods, T)
	if i > 0 && (i == len(periods) || T/periods[i-1] < periods[i]/T) {
		i--
	}
	return min(i, len(periods)-1)
}

// unwrap assigns major-line indices to the reliable tiles, from the best
// tile outwards (each tile from its most reliable assigned neighbour):
// the neighbour's line plus the whole number of periods between them.
// Reliable tiles not connected to each other form separate regions; only
// the largest is kept. It reports false when too few tiles are reliable.
func unwrap(tiles []tieTile, nx, ny, step int, mx, my, frac float64) bool {
	qs := make([]float64, len(tiles))
	for i, t := range tiles {
		qs[i] = min(t.x.q, t.y.q)
	}
	sorted := slices.Clone(qs)
	slices.Sort(sorted)
	// Reliable: clearly periodic on both axes (the best tiles set the
	// scale of what a grid tile looks like on this page; frac of their
	// quality).
	thr := max(0.15, frac*sorted[len(sorted)*9/10])
	comp, big, size := growRegions(nx, ny, func(i int) float64 { return qs[i] }, func(i int) bool { return qs[i] >= thr },
		func(i int) { tiles[i].jx, tiles[i].jy = 0, 0 },
		func(from, to int) bool {
			t, f := &tiles[to], tiles[from]
			rx, ry := (t.x.pos-f.x.pos)/mx, (t.y.pos-f.y.pos)/my
			if math.Abs(rx-math.Round(rx)) > 0.3 || math.Abs(ry-math.Round(ry)) > 0.3 {
				// An ambiguous step (a local scale change, or a line
				// misread): the tile may be reached by another path.
				return false
			}
			t.jx = f.jx + int(math.Round(rx))
			t.jy = f.jy + int(math.Round(ry))
			return true
		})
	if big < 0 {
		return false
	}
	for i := range tiles {
		tiles[i].seen = comp[i] == big
	}
	return size >= 12
}

// fitLattice fits lattice px → coarse px: a homography by the normalised
// DLT, then a cubic residual field, both by least squares with iterated
// rejection of tie points beyond 3.5 robust standard deviations (and at
// least 2 px).
func fitLattice(lat, pg []Point, S float64, spline bool) (*latticeMap, bool) {
	n := len(lat)
	if n < 12 {
		return nil, false
	}
	in := make([]bool, n)
	for i := range in {
		in[i] = true
	}
	m := &latticeMap{}
	// Normalisation of lattice coordinates for the polynomial, and the
	// clamp box of the field: the tie points' extent.
	m.lo = Point{math.Inf(1), math.Inf(1)}
	m.hi = Point{math.Inf(-1), math.Inf(-1)}
	for _, p := range lat {
		m.lo.X, m.lo.Y = min(m.lo.X, p.X), min(m.lo.Y, p.Y)
		m.hi.X, m.hi.Y = max(m.hi.X, p.X), max(m.hi.Y, p.Y)
	}
	if m.hi.X-m.lo.X < 4*S || m.hi.Y-m.lo.Y < 3*S {
		return nil, false
	}
	m.nrm = [4]float64{(m.lo.X + m.hi.X) / 2, 2 / (m.hi.X - m.lo.X), (m.lo.Y + m.hi.Y) / 2, 2 / (m.hi.Y - m.lo.Y)}
	m.cu, m.cv = make([]float64, polyTerms), make([]float64, polyTerms)
	res := make([]float64, n)
	for iter := 0; iter < 4; iter++ {
		var src, dst []Point
		for i := range lat {
			if in[i] {
				src, dst = append(src, lat[i]), append(dst, pg[i])
			}
		}
		if len(src) < 12 {
			return nil, false
		}
		H, err := EstimateHomography(src, dst)
		if err != nil {
			return nil, false
		}
		m.h = H
		clear(m.cu)
		clear(m.cv)
		if spline {
			if m.sp = fitSpline(src, dst, H, m.lo, m.hi, 4*S, 2*S); m.sp == nil {
				return nil, false
			}
		} else if len(src) >= 3*polyTerms {
			a := mat.NewDense(len(src), polyTerms, nil)
			bu := mat.NewVecDense(len(src), nil)
			bv := mat.NewVecDense(len(src), nil)
			var t [polyTerms]float64
			for k, p := range src {
				polyBasis(&t, (p.X-m.nrm[0])*m.nrm[1], (p.Y-m.nrm[2])*m.nrm[3])
				a.SetRow(k, t[:])
				u, v := Apply(H, p.X, p.Y)
				bu.SetVec(k, dst[k].X-u)
				bv.SetVec(k, dst[k].Y-v)
			}
			var qr mat.QR
			qr.Factorize(a)
			var xu, xv mat.VecDense
			if qr.SolveVecTo(&xu, false, bu) == nil && qr.SolveVecTo(&xv, false, bv) == nil {
				for k := 0; k < polyTerms; k++ {
					m.cu[k], m.cv[k] = xu.AtVec(k), xv.AtVec(k)
				}
			}
		}
		for i := range lat {
			u, v := m.at(lat[i].X, lat[i].Y) // x0 = y0 = 0 during the fit
			res[i] = math.Hypot(u-pg[i].X, v-pg[i].Y)
		}
		var r []float64
		for i := range res {
			if in[i] {
				r = append(r, res[i])
			}
		}
		slices.Sort(r)
		sigma := 1.4826 * r[len(r)/2]
		lim := max(2, 3.5*sigma)
		changed := false
		for i := range res {
			if now := res[i] <= lim; now != in[i] {
				in[i], changed = now, true
			}
		}
		if !changed {
			break
		}
	}
	var ss float64
	m.ties = 0
	for i := range res {
		if in[i] {
			ss += res[i] * res[i]
			m.ties++
		}
	}
	if m.ties < 12 {
		return nil, false
	}
	m.rms = math.Sqrt(ss / float64(m.ties))
	// The field's clamp box (and the grid area seen): the inliers' extent.
	m.lo = Point{math.Inf(1), math.Inf(1)}
	m.hi = Point{math.Inf(-1), math.Inf(-1)}
	for i, p := range lat {
		if in[i] {
			m.lo.X, m.lo.Y = min(m.lo.X, p.X), min(m.lo.Y, p.Y)
			m.hi.X, m.hi.Y = max(m.hi.X, p.X), max(m.hi.Y, p.Y)
		}
	}
	return m, true
}

// nodeOffset is one lattice node's measured offset.
type nodeOffset struct {
	jx, jy int           // major-line indices of the node
	c      Point         // predicted coarse px
	a      [4]float64    // local Jacobian d(u, v)/d(X, Y): a[0] du/dX, a[1] du/dY, a[2] dv/dX, a[3] dv/dY
	d      [2][2]float64 // [minor, major] line offsets (lattice px, modulo S/5 or S) along X and Y
	q      [2][2]float64 // their phase quality
	ok     bool
}

// nodeGrid is the refined nodes, indexed from (jx0, jy0).
type nodeGrid struct {
	jx0, jy0, nx, ny int
	n                []nodeOffset
}

// refineTies measures every lattice node (each major line crossing, one
// period S apart) whose window (S across, five minor periods) falls on
// the map: the grid seen through the local affine approximation of m
// around the node (coarse px → lattice offset, each pixel binned once,
// Hann-weighted across) is projected on the lattice axes, and the phase
// of the minor (S/5) and of the major (S) period in those profiles give
// the node's offset from the prediction modulo either period. The whole
// numbers of periods are left to unwrapOffsets.
func refineTies(grd *image.Gray, m *latticeMap, S float64) *nodeGrid {
	w, h := grd.Rect.Dx(), grd.Rect.Dy()
	inv, ok := Invert(m.h)
	if !ok {
		return nil
	}
	lo := Point{math.Inf(1), math.Inf(1)}
	hi := Point{math.Inf(-1), math.Inf(-1)}
	for _, c := range [4]Point{{0, 0}, {float64(w - 1), 0}, {0, float64(h - 1)}, {float64(w - 1), float64(h - 1)}} {
		X, Y := Apply(inv, c.X, c.Y)
		lo.X, lo.Y = min(lo.X, X), min(lo.Y, Y)
		hi.X, hi.Y = max(hi.X, X), max(hi.Y, Y)
	}
	T := S / 5
	k := min(8, max(4, int(T/1.2))) // bins per minor period
	bw := T / float64(k)
	L := S / 2 // window half-width, lattice px: five minor periods across
	nb := 5 * k
	hw := make([]float64, nb)
	for i := range hw {
		hw[i] = 0.5 - 0.5*math.Cos(2*math.Pi*(float64(i)+0.5)/float64(nb))
	}
	colS, colW := make([]float64, nb), make([]float64, nb)
	rowS, rowW := make([]float64, nb), make([]float64, nb)
	prof := make([]float64, nb)
	g := &nodeGrid{jx0: int(math.Ceil(lo.X / S)), jy0: int(math.Ceil(lo.Y / S))}
	g.nx = int(math.Floor(hi.X/S)) - g.jx0 + 1
	g.ny = int(math.Floor(hi.Y/S)) - g.jy0 + 1
	if g.nx < 4 || g.ny < 4 || g.nx*g.ny > 1<<16 {
		return nil
	}
	g.n = make([]nodeOffset, g.nx*g.ny)
	for iy := 0; iy < g.ny; iy++ {
		for ix := 0; ix < g.nx; ix++ {
			jx, jy := g.jx0+ix, g.jy0+iy
			X0, Y0 := float64(jx)*S, float64(jy)*S
			cu, cv := m.at(X0, Y0)
			u1, v1 := m.at(X0+S/2, Y0)
			u0, v0 := m.at(X0-S/2, Y0)
			u3, v3 := m.at(X0, Y0+S/2)
			u2, v2 := m.at(X0, Y0-S/2)
			a, c := (u1-u0)/S, (v1-v0)/S // d(u, v)/dX
			b, d := (u3-u2)/S, (v3-v2)/S // d(u, v)/dY
			det := a*d - b*c
			if det <= 0 {
				continue
			}
			// Coarse px → lattice offset: (dX, dY) = B·(u − cu, v − cv).
			b00, b01, b10, b11 := d/det, -b/det, -c/det, a/det
			ru := L * (math.Abs(a) + math.Abs(b))
			rv := L * (math.Abs(c) + math.Abs(d))
			x0, x1 := int(math.Floor(cu-ru)), int(math.Ceil(cu+ru))
			y0, y1 := int(math.Floor(cv-rv)), int(math.Ceil(cv+rv))
			if x0 < 0 || y0 < 0 || x1 >= w || y1 >= h {
				continue
			}
			clear(colS)
			clear(colW)
			clear(rowS)
			clear(rowW)
			// Bin coordinates (lattice offset + L, in bins) step by
			// (e00, e10) along a row.
			e00, e01, e10, e11 := b00/bw, b01/bw, b10/bw, b11/bw
			fnb := float64(nb)
			for y := y0; y <= y1; y++ {
				dv := float64(y) - cv
				du := float64(x0) - cu
				fx := e00*du + e01*dv + L/bw
				fy := e10*du + e11*dv + L/bw
				r := grd.Pix[y*grd.Stride+x0 : y*grd.Stride+x1+1]
				for i, pv := range r {
					X, Y := fx+float64(i)*e00, fy+float64(i)*e10
					if X < 0 || Y < 0 || X >= fnb || Y >= fnb {
						continue
					}
					bx, by := int(X), int(Y)
					val := float64(pv)
					colS[bx] += val * hw[by]
					colW[bx] += hw[by]
					rowS[by] += val * hw[bx]
					rowW[by] += hw[bx]
				}
			}
			nd := nodeOffset{jx: jx, jy: jy, c: Point{cu, cv}, a: [4]float64{a, b, c, d}, ok: true}
			for pi, P := range [2]float64{T, S} {
				dx, qx, okx := linePhase(colS, colW, hw, prof, bw, L, P)
				dy, qy, oky := linePhase(rowS, rowW, hw, prof, bw, L, P)
				nd.ok = nd.ok && okx && oky
				nd.d[pi] = [2]float64{dx, dy}
				nd.q[pi] = [2]float64{qx, qy}
			}
			g.n[iy*g.nx+ix] = nd
		}
	}
	return g
}

// linePhase returns the offset (lattice px, within ±T/2) of the line of
// period T nearest the profile's centre, and the phase's quality.
func linePhase(sum, wt, win, prof []float64, bw, L, T float64) (float64, float64, bool) {
	var mean, ws float64
	for i := range sum {
		if wt[i] == 0 {
			return 0, 0, false
		}
		prof[i] = sum[i] / wt[i]
		mean += win[i] * prof[i]
		ws += win[i]
	}
	mean /= ws
	var re, im, tot float64
	for i, v := range prof {
		dv := win[i] * (v - mean)
		a := 2 * math.Pi * ((float64(i)+0.5)*bw - L) / T
		re += dv * math.Cos(a)
		im += dv * math.Sin(a)
		tot += math.Abs(dv)
	}
	if tot == 0 {
		return 0, 0, false
	}
	return math.Atan2(im, re) / (2 * math.Pi) * T, 2 * math.Hypot(re, im) / tot, true
}

// unwrapOffsets turns the nodes' line offsets of period P (pi 0: the
// minor lines, 1: the major lines), known modulo P, into continuous
// offsets along axis k, from the most reliable node outwards over
// neighbours of quality at least thr (quality-guided unwrapping, as for
// the major-line tiles). Only the largest region so reached is kept; the
// other nodes get NaN. The offsets are finally shifted by a whole number
// of P so that their median is nearest zero (the model's numbering kept
// where it holds).
func (g *nodeGrid) unwrapOffsets(pi, k int, thr, P float64) []float64 {
	off := make([]float64, len(g.n))
	q := func(i int) float64 { return g.n[i].q[pi][k] }
	comp, big, _ := growRegions(g.nx, g.ny, q, func(i int) bool { return g.n[i].ok && q(i) >= thr },
		func(i int) { off[i] = g.n[i].d[pi][k] },
		func(from, to int) bool {
			r := (off[from] - g.n[to].d[pi][k]) / P
			if math.Abs(r-math.Round(r)) > 0.3 {
				return false
			}
			off[to] = g.n[to].d[pi][k] + P*math.Round(r)
			return true
		})
	if big < 0 {
		return nil
	}
	var vs []float64
	for i := range off {
		if comp[i] == big {
			vs = append(vs, off[i])
		} else {
			off[i] = math.NaN()
		}
	}
	slices.Sort(vs)
	sh := P * math.Round(vs[len(vs)/2]/P)
	for i := range off {
		off[i] -= sh
	}
	return off
}

// refineLattice refits m to node ties measured through it on the minor
// lines (twice: the second time through the first refit), or, when that
// is not tighter than m, on the major lines. It returns the tightest of
// the fits whose ties cover at least 80 % of m's, or m.
func refineLattice(grd *image.Gray, m *latticeMap, S float64) *latticeMap {
	best := m
	for pi, P := range [2]float64{S / 5, S} {
		cur := m
		for pass := 0; pass < 2; pass++ {
			g := refineTies(grd, cur, S)
			if g == nil {
				break
			}
			mm, moved := fitNodes(g, pi, P, S)
			if mm == nil {
				break
			}
			cur = mm
			// Nodes found where the model put them (within a quarter
			// period): its local frames were right, a second pass
			// would measure the same.
			if moved < P/4 {
				break
			}
		}
		if cur != m && cur.rms < best.rms && cur.ties*5 >= m.ties*4 {
			best = cur
		}
		if best != m && best.rms <= S/40 {
			break
		}
	}
	return best
}

// fitNodes unwraps the nodes' offsets of period P (pi as in
// unwrapOffsets) and fits a lattice map to the node ties; nil when too
// few nodes are reliable. moved is the 95th percentile of the nodes'
// offsets from the model, lattice px.
func fitNodes(g *nodeGrid, pi int, P, S float64) (m *latticeMap, moved float64) {
	var qs []float64
	for _, n := range g.n {
		if n.ok {
			qs = append(qs, min(n.q[pi][0], n.q[pi][1]))
		}
	}
	if len(qs) < 30 {
		return nil, 0
	}
	slices.Sort(qs)
	thr := max(0.1, 0.4*qs[len(qs)*9/10])
	ox := g.unwrapOffsets(pi, 0, thr, P)
	oy := g.unwrapOffsets(pi, 1, thr, P)
	if ox == nil || oy == nil {
		return nil, 0
	}
	var lat, pg []Point
	var mv []float64
	for i, n := range g.n {
		if !n.ok || math.IsNaN(ox[i]) || math.IsNaN(oy[i]) {
			continue
		}
		dx, dy := ox[i], oy[i]
		mv = append(mv, math.Hypot(dx, dy))
		lat = append(lat, Point{float64(n.jx) * S, float64(n.jy) * S})
		pg = append(pg, Point{n.c.X + n.a[0]*dx + n.a[1]*dy, n.c.Y + n.a[2]*dx + n.a[3]*dy})
	}
	m, ok := fitLattice(lat, pg, S, true)
	if !ok {
		return nil, 0
	}
	slices.Sort(mv)
	return m, mv[len(mv)*95/100]
}

// splineField is a smooth 2-D displacement field (coarse px) over a
// rectangle of lattice px: a uniform bicubic B-spline (de Boor, A
// Practical Guide to Splines, Springer 1978, from memory) whose knots are
// h apart, nx × ny control values per component; outside the rectangle
// it keeps its value at the nearest point. It takes up what a homography
// leaves of a lens warp or a curled sheet, near the corners too, where
// the distortion changes fastest and one cubic polynomial fell short.
type splineField struct {
	x0, y0, h float64
	nx, ny    int
	cu, cv    []float64
}

// bspline returns the four uniform cubic B-spline weights at u ∈ [0, 1].
func bspline(u float64) [4]float64 {
	v := 1 - u
	return [4]float64{v * v * v / 6, (3*u*u*u - 6*u*u + 4) / 6, (-3*u*u*u + 3*u*u + 3*u + 1) / 6, u * u * u / 6}
}

// cell returns the first control index and the weights along one axis.
func (s *splineField) cell(t, o float64, n int) (int, [4]float64) {
	f := (t - o) / s.h
	i := min(max(int(math.Floor(f)), 0), n-4)
	return i, bspline(min(max(f-float64(i), 0), 1))
}

// at returns the field at lattice px (X, Y) (clamped to its rectangle).
func (s *splineField) at(X, Y float64) (float64, float64) {
	i, wx := s.cell(X, s.x0, s.nx)
	j, wy := s.cell(Y, s.y0, s.ny)
	var du, dv float64
	for b := 0; b < 4; b++ {
		r := (j+b)*s.nx + i
		for a := 0; a < 4; a++ {
			w := wx[a] * wy[b]
			du += w * s.cu[r+a]
			dv += w * s.cv[r+a]
		}
	}
	return du, dv
}

// fitSpline fits the displacement dst − H(src) over the box lo–hi
// widened by margin on every side by a bicubic B-spline with knots about
// h apart, by least squares with a penalty on the control values' second
// differences (a thin-plate-like regularisation, common practice): where
// there are no tie points the field continues linearly, so the margin
// (the grid's last millimetres, whose nodes' windows run off the grid)
// follows the warp's slope instead of a clamped value. nil when the
// system cannot be solved.
func fitSpline(src, dst []Point, H Homography, lo, hi Point, h, margin float64) *splineField {
	lo = Point{lo.X - margin, lo.Y - margin}
	hi = Point{hi.X + margin, hi.Y + margin}
	cx := max(1, int(math.Ceil((hi.X-lo.X)/h)))
	cy := max(1, int(math.Ceil((hi.Y-lo.Y)/h)))
	s := &splineField{x0: lo.X, y0: lo.Y, nx: cx + 3, ny: cy + 3}
	s.h = max((hi.X-lo.X)/float64(cx), (hi.Y-lo.Y)/float64(cy))
	n := s.nx * s.ny
	ata := make([]float64, n*n)
	bu, bv := make([]float64, n), make([]float64, n)
	var idx [16]int
	var wt [16]float64
	for k, p := range src {
		i, wx := s.cell(p.X, s.x0, s.nx)
		j, wy := s.cell(p.Y, s.y0, s.ny)
		for b := 0; b < 4; b++ {
			for a := 0; a < 4; a++ {
				idx[b*4+a] = (j+b)*s.nx + i + a
				wt[b*4+a] = wx[a] * wy[b]
			}
		}
		u, v := Apply(H, p.X, p.Y)
		ru, rv := dst[k].X-u, dst[k].Y-v
		for a := range idx {
			bu[idx[a]] += wt[a] * ru
			bv[idx[a]] += wt[a] * rv
			row := ata[idx[a]*n:]
			for b := range idx {
				row[idx[b]] += wt[a] * wt[b]
			}
		}
	}
	// Second differences along x, along y and mixed, each weighted by
	// lambda (in tie-point units: a fifth of one tie per control value;
	// 0.05 fitted the corpus corners tighter, 0.5 left 0.3 mm there).
	const lambda = 0.2
	add := func(st []int, c []float64) {
		for a := range st {
			for b := range st {
				ata[st[a]*n+st[b]] += lambda * c[a] * c[b]
			}
		}
	}
	for j := 0; j < s.ny; j++ {
		for i := 0; i < s.nx; i++ {
			k := j*s.nx + i
			if i+2 < s.nx {
				add([]int{k, k + 1, k + 2}, []float64{1, -2, 1})
			}
			if j+2 < s.ny {
				add([]int{k, k + s.nx, k + 2*s.nx}, []float64{1, -2, 1})
			}
			if i+1 < s.nx && j+1 < s.ny {
				add([]int{k, k + 1, k + s.nx, k + s.nx + 1}, []float64{math.Sqrt2, -math.Sqrt2, -math.Sqrt2, math.Sqrt2})
			}
		}
	}
	// A tiny ridge keeps control values with no data and no curvature
	// (a flat corner) determined.
	for k := 0; k < n; k++ {
		ata[k*n+k] += 1e-6
	}
	var ch mat.Cholesky
	if !ch.Factorize(mat.NewSymDense(n, ata)) {
		return nil
	}
	var xu, xv mat.VecDense
	if ch.SolveVecTo(&xu, mat.NewVecDense(n, bu)) != nil || ch.SolveVecTo(&xv, mat.NewVecDense(n, bv)) != nil {
		return nil
	}
	s.cu, s.cv = make([]float64, n), make([]float64, n)
	for k := 0; k < n; k++ {
		s.cu[k], s.cv[k] = xu.AtVec(k), xv.AtVec(k)
	}
	return s
}

// clipToSheet moves each side of the crop box x0–x1, y0–y1 (lattice px)
// inwards, half a period at a time but never inside the tie points'
// extent, until at least 90 % of the points along it (one per period) lie
// on the sheet: a sheet's edge left in the registered page (dark against
// the desk) reads as a trace to the later stages.
func (m *latticeMap) clipToSheet(onSheet func(u, v float64) bool, x0, y0, x1, y1, S float64) (float64, float64, float64, float64) {
	on := func(xa, ya, xb, yb float64) bool {
		n := max(2, int(math.Hypot(xb-xa, yb-ya)/S)+1)
		k := 0
		for i := 0; i < n; i++ {
			f := float64(i) / float64(n-1)
			u, v := m.at(xa+f*(xb-xa)-m.x0, ya+f*(yb-ya)-m.y0)
			if onSheet(u, v) {
				k++
			}
		}
		return 10*k >= 9*n
	}
	for x0 < m.lo.X && !on(x0, y0, x0, y1) {
		x0 = min(x0+S/2, m.lo.X)
	}
	for x1 > m.hi.X && !on(x1, y0, x1, y1) {
		x1 = max(x1-S/2, m.hi.X)
	}
	for y0 < m.lo.Y && !on(x0, y0, x1, y0) {
		y0 = min(y0+S/2, m.lo.Y)
	}
	for y1 > m.hi.Y && !on(x0, y1, x1, y1) {
		y1 = max(y1-S/2, m.hi.Y)
	}
	return math.Floor(x0), math.Floor(y0), math.Ceil(x1), math.Ceil(y1)
}

// growRegions grows regions over an nx × ny grid of cells by
// quality-guided unwrapping (Ghiglia & Pritt 1998): each region
// starts at the best usable cell not yet reached (begin(i) sets it up)
// and then takes the most reliable edge first — an edge from a reached
// cell to a usable 4-neighbour, as reliable as the lesser quality of the
// two — where join(from, to) reports whether cell to could be unwrapped
// from its neighbour (and does it). It returns each cell's region (−1 for
// none) and the largest region with its size (big −1 when no cell is
// usable).
func growRegions(nx, ny int, q func(i int) float64, usable func(i int) bool, begin func(i int), join func(from, to int) bool) (comp []int, big, bigSize int) {
	comp, big = make([]int, nx*ny), -1
	for i := range comp {
		comp[i] = -1
	}
	type edge struct {
		q        float64
		from, to int
	}
	var queue []edge
	push := func(i int) {
		ix, iy := i%nx, i/nx
		for _, d := range [4][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}} {
			x, y := ix+d[0], iy+d[1]
			if x < 0 || y < 0 || x >= nx || y >= ny {
				continue
			}
			if j := y*nx + x; comp[j] < 0 && usable(j) {
				queue = append(queue, edge{min(q(i), q(j)), i, j})
			}
		}
	}
	for c := 0; ; c++ {
		start := -1
		for i := range comp {
			if comp[i] < 0 && usable(i) && (start < 0 || q(i) > q(start)) {
				start = i
			}
		}
		if start < 0 {
			return comp, big, bigSize
		}
		begin(start)
		comp[start] = c
		size := 1
		push(start)
		for len(queue) > 0 {
			b := 0
			for i := range queue {
				if queue[i].q > queue[b].q {
					b = i
				}
			}
			e := queue[b]
			queue[b] = queue[len(queue)-1]
			queue = queue[:len(queue)-1]
			if comp[e.to] >= 0 || !join(e.from, e.to) {
				continue
			}
			comp[e.to] = c
			size++
			push(e.to)
		}
		if size > bigSize {
			big, bigSize = c, size
		}
	}
}
