package imageproc

import (
	"image"
	"math"
)

// points is a weighted sample of bright pixels of a line-strength map,
// in row-major order (x, y, w) and again in column-major order (xt, yt,
// wt).
type points struct {
	x, y, w    []float32
	xt, yt, wt []float32
	span       int // w+h of the map: bound on |projection|
}

// collectPoints samples the pixels of m stronger than thr (weight = value
// − thr), keeping at most about limit of them (regular subsampling).
func collectPoints(m *image.Gray, thr uint8, limit int) *points {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	n := 0
	for y := 0; y < h; y++ {
		for _, v := range m.Pix[y*m.Stride : y*m.Stride+w] {
			if v > thr {
				n++
			}
		}
	}
	step := 1
	if n > limit {
		step = (n + limit - 1) / limit
	}
	kept := n / step // the k = step, 2·step, … of the n pixels
	p := &points{span: w + h, x: make([]float32, 0, kept), y: make([]float32, 0, kept), w: make([]float32, 0, kept)}
	k := 0
	for y := 0; y < h; y++ {
		for x, v := range m.Pix[y*m.Stride : y*m.Stride+w] {
			if v <= thr {
				continue
			}
			k++
			if k%step != 0 {
				continue
			}
			p.x = append(p.x, float32(x))
			p.y = append(p.y, float32(y))
			p.w = append(p.w, float32(v-thr))
		}
	}
	p.transpose(w)
	return p
}

// transpose fills xt, yt, wt with the points in column-major order (by x,
// then y: a counting sort of the row-major points on x, which keeps each
// column's points in row order); w is the map's width.
func (p *points) transpose(w int) {
	start := make([]int, w+1)
	for _, x := range p.x {
		start[int(x)+1]++
	}
	for i := 1; i <= w; i++ {
		start[i] += start[i-1]
	}
	n := len(p.x)
	p.xt, p.yt, p.wt = make([]float32, n), make([]float32, n), make([]float32, n)
	for i, x := range p.x {
		k := start[int(x)]
		start[int(x)]++
		p.xt[k], p.yt[k], p.wt[k] = x, p.y[i], p.w[i]
	}
}

// family selects which line family a projection favours.
type family int

const (
	horizontal family = 1 << iota
	vertical
	both = horizontal | vertical
)

// sharpness returns Σ bin² of the projection profiles of p for lines
// turned θ radians counter-clockwise (as seen on the image, y down), for
// the chosen families. Each point is split linearly between two bins.
// The points of one line of a family fall in the same bins, so each
// family's projection visits them in the order that leaves them apart
// (rows of points across the vertical lines, columns across the
// horizontal ones): consecutive additions to one bin wait for each other,
// and that made the horizontal projection up to twice as slow as the
// vertical one. The sums are those of the row-major order up to the
// order of floating-point additions (angles equal to 1e-12° on corpus
// pages).
func (p *points) sharpness(theta float64, fam family, buf []float64) float64 {
	n := 2*p.span + 4
	if cap(buf) < n {
		buf = make([]float64, n)
	}
	buf = buf[:n]
	c, s := float32(math.Cos(theta)), float32(math.Sin(theta))
	off := float32(p.span + 1)
	total := 0.0
	project := func(a, b float32, xs, ys, ws []float32) {
		clear(buf)
		ys, ws = ys[:len(xs)], ws[:len(xs)]
		for i, x := range xs {
			v := a*x + b*ys[i] + off
			k := int(v)
			f := v - float32(k)
			wt := float64(ws[i])
			buf[k] += wt * float64(1-f)
			buf[k+1] += wt * float64(f)
		}
		for _, v := range buf {
			total += v * v
		}
	}
	if fam&horizontal != 0 {
		project(s, c, p.xt, p.yt, p.wt) // y cosθ + x sinθ is constant along a line
	}
	if fam&vertical != 0 {
		project(c, -s, p.x, p.y, p.w) // x cosθ − y sinθ
	}
	return total
}

// searchAngle scans θ over [lo, hi] radians in steps and returns the angle
// of sharpest projection, refined by a parabola through the best three.
func (p *points) searchAngle(lo, hi, step float64, fam family) (best, score float64) {
	n := int(math.Round((hi-lo)/step)) + 1
	if n < 3 {
		n = 3
	}
	vals := make([]float64, n)
	buf := make([]float64, 2*p.span+4)
	bi := 0
	for i := 0; i < n; i++ {
		vals[i] = p.sharpness(lo+float64(i)*step, fam, buf)
		if vals[i] > vals[bi] {
			bi = i
		}
	}
	best = lo + float64(bi)*step
	if bi > 0 && bi < n-1 {
		a, b, c := vals[bi-1], vals[bi], vals[bi+1]
		if d := a - 2*b + c; d < 0 {
			best += 0.5 * (a - c) / d * step
		}
	}
	return best, vals[bi]
}

// estimateSkew returns the counter-clockwise skew (radians) of the line
// families in m (a line-strength map), searched within ±maxSkew: coarse
// on a 4× smaller copy, then fine on m itself.
func estimateSkew(m *image.Gray, maxSkew float64, fam family) float64 {
	thr := strengthThreshold(m)
	coarse := downscaleGray(m, 4)
	pc := collectPoints(coarse, thr/2, 60000)
	if len(pc.x) < 20 {
		return 0
	}
	step := 0.2 * math.Pi / 180
	a0, _ := pc.searchAngle(-maxSkew, maxSkew, step, fam)
	pf := collectPoints(m, thr, 250000)
	// Fine search in two stages (0.1° over the coarse step's ±2, then
	// 0.02° over ±0.1° around the best): 20 projections instead of 41.
	mid := 0.1 * math.Pi / 180
	am, _ := pf.searchAngle(a0-2*step, a0+2*step, mid, fam)
	fineStep := 0.02 * math.Pi / 180
	a1, _ := pf.searchAngle(am-mid, am+mid, fineStep, fam)
	return a1
}

// strengthThreshold picks the level above which pixels of a strength map
// count as structure: the 85th percentile, within [20, 160] so that
// saturated maps keep their lines.
func strengthThreshold(m *image.Gray) uint8 {
	var hist [256]int
	w, h := m.Rect.Dx(), m.Rect.Dy()
	for y := 0; y < h; y++ {
		for _, v := range m.Pix[y*m.Stride : y*m.Stride+w] {
			hist[v]++
		}
	}
	need := w * h * 15 / 100
	acc := 0
	for v := 255; v > 0; v-- {
		acc += hist[v]
		if acc >= need {
			return uint8(min(max(v, 20), 160))
		}
	}
	return 20
}
