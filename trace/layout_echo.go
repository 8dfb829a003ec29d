package trace

import (
	"image"
	"math"
)

// A lead printed twice on a page (the rhythm strip of a 3 × 4 + 1 page
// repeats lead II of the grid over the same time window) draws the same
// curve twice at the same distance from the rows' common start. Comparing
// the ink of two rows over one time window therefore tells layouts apart
// that print the same number of rows, without reading any label: 3 × 4 + 3
// repeats II, V1 and V5 in its rhythm strips, 6 × 2 repeats nothing.

// inkCentres writes to dst, for each image column x in [x0, x0+len(dst)),
// the ink-weighted mean y of the ink between rows y0 and y1 (inclusive)
// minus ref, px; NaN where the column holds no ink there.
func inkCentres(dst []float64, ink *image.Gray, x0, y0, y1 int, ref float64) {
	n := len(dst)
	sw := make([]float64, n)
	swy := make([]float64, n)
	b := ink.Rect
	xa, xb := max(x0, b.Min.X), min(x0+n, b.Max.X)
	for y := max(y0, b.Min.Y); y <= min(y1, b.Max.Y-1); y++ {
		if xa >= xb {
			break
		}
		row := ink.Pix[(y-b.Min.Y)*ink.Stride+(xa-b.Min.X) : (y-b.Min.Y)*ink.Stride+(xb-b.Min.X)]
		fy := float64(y)
		for i, v := range row {
			if v >= inkThreshold {
				w := float64(v)
				sw[xa-x0+i] += w
				swy[xa-x0+i] += w * fy
			}
		}
	}
	for i := range dst {
		if sw[i] > 0 {
			dst[i] = swy[i]/sw[i] - ref
		} else {
			dst[i] = math.NaN()
		}
	}
}

// rowEcho is the correlation of the ink of rows a and b over the same
// stretch of their width, the fractions [f0, f1) of the trace (from
// traceX0 to x1), allowing the two copies to be offset by up to 0.5 mm: a
// value near 1 says both rows print the same lead over the same time
// window. It returns NaN when the rows share too little traced stretch
// (less than a quarter of the window with ink in both: a fax keeps little
// more than its complexes). The band of each row
// reaches 0.45 of the distance to its neighbours (at most 15 mm), so that
// the neighbours' traces stay out of it.
func rowEcho(ink *image.Gray, rows []rowInfo, a, b int, f0, f1, pxX, pxY float64) float64 {
	ra, rb := rows[a], rows[b]
	wa, wb := float64(ra.x1)-ra.traceX0, float64(rb.x1)-rb.traceX0
	if wa <= 0 || wb <= 0 {
		return math.NaN()
	}
	w := math.Min(wa, wb)
	n := int((f1 - f0) * w)
	if n < int(5*pxX) {
		return math.NaN()
	}
	shift := int(math.Round(0.5 * pxX))
	centres := func(i int) []float64 {
		r := rows[i]
		up, down := 15*pxY, 15*pxY
		if i > 0 {
			up = math.Min(up, 0.45*(r.baseY-rows[i-1].baseY))
		}
		if i+1 < len(rows) {
			down = math.Min(down, 0.45*(rows[i+1].baseY-r.baseY))
		}
		dst := make([]float64, n+2*shift)
		x0 := int(math.Round(r.traceX0+f0*w)) - shift
		inkCentres(dst, ink, x0, int(r.baseY-up), int(r.baseY+down), r.baseY)
		return dst
	}
	ca, cb := centres(a), centres(b)
	best := math.NaN()
	for s := -shift; s <= shift; s++ {
		c, m := pearson(ca[shift:shift+n], cb[shift+s:shift+s+n])
		if 4*m < n {
			continue
		}
		if math.IsNaN(best) || c > best {
			best = c
		}
	}
	return best
}

// pearson is the correlation of x and y over the indices where both are
// finite, and the number of such indices; NaN with fewer than 10 or no
// variance.
func pearson(x, y []float64) (float64, int) {
	var sx, sy, sxx, syy, sxy float64
	m := 0
	for i := range x {
		if math.IsNaN(x[i]) || math.IsNaN(y[i]) {
			continue
		}
		sx += x[i]
		sy += y[i]
		sxx += x[i] * x[i]
		syy += y[i] * y[i]
		sxy += x[i] * y[i]
		m++
	}
	if m < 10 {
		return math.NaN(), m
	}
	fm := float64(m)
	vx, vy := sxx-sx*sx/fm, syy-sy*sy/fm
	if vx <= 0 || vy <= 0 {
		return math.NaN(), m
	}
	return (sxy - sx*sy/fm) / math.Sqrt(vx*vy), m
}
