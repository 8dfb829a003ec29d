package trace

import (
	"image"
	"math"
	"sort"

	"tracelift/ecg"
)

// A lead printed twice on a page (the rhythm strip of a 3 × 4 + 1 page
// repeats lead II of the grid over the same time window) draws the same
// curve twice at the same distance from the rows' common start. Comparing
// the ink of two rows over one time window therefore tells layouts apart
// that print the same number of rows, without reading any label: 3 × 4 + 3
// repeats II, V1 and V5 in its rhythm strips, 6 × 2 repeats nothing.

// inkCentres writes to dst, for each image column x in [x0, x0+len(dst)),
// the centre of the column's ink run nearest to the row's baseline y ref
// among the runs between rows y0 and y1 (inclusive), minus ref, px; NaN
// where the column holds no ink there. The nearest run is the row's own
// trace (a complex's strokes start at the baseline), while strokes of a
// neighbouring row's tall complexes reaching into the band lie farther.
func inkCentres(dst []float64, ink *image.Gray, x0, y0, y1 int, ref float64) {
	b := ink.Rect
	y0, y1 = max(y0, b.Min.Y), min(y1, b.Max.Y-1)
	for i := range dst {
		dst[i] = math.NaN()
		x := x0 + i
		if x < b.Min.X || x >= b.Max.X || y0 > y1 {
			continue
		}
		off := (y0-b.Min.Y)*ink.Stride + (x - b.Min.X)
		best := math.Inf(1)
		top := -1
		for y := y0; y <= y1+1; y, off = y+1, off+ink.Stride {
			in := y <= y1 && ink.Pix[off] >= inkThreshold
			switch {
			case in && top < 0:
				top = y
			case !in && top >= 0:
				bot := y - 1
				d := 0.0
				if float64(bot) < ref {
					d = ref - float64(bot)
				} else if float64(top) > ref {
					d = float64(top) - ref
				}
				if d < best {
					best = d
					dst[i] = float64(top+bot)/2 - ref
				}
				top = -1
			}
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

// nameRhythmStrips checks the lead of each rhythm strip below a 3 × 4 grid
// (rows 3… of lay, one cell each, the grid in rows 0–2 with four 2.5 s
// columns) against the grid: the strip repeats its lead's grid cell over
// that cell's time window, so the cell it echoes names it. A strip is
// renamed only on clear evidence: an echo of at least 0.8 (two copies of
// one lead score 0.98–1.0 on clean and scanned pages, but similar leads
// score up to 0.99 too, V5 against I on a synthetic page; a project
// measurement) that beats the echo of the strip's assumed lead by at
// least 0.25, or where that lead has no grid cell. It returns whether a
// strip was renamed.
func nameRhythmStrips(ink *image.Gray, rows []rowInfo, lay *Layout, pxX, pxY float64) bool {
	if len(lay.Rows) < 4 || len(rows) < len(lay.Rows) {
		return false
	}
	for g := 0; g < 3; g++ {
		if lay.Rows[g].Rhythm || len(lay.Rows[g].Cells) != 4 {
			return false
		}
	}
	renamed := false
	for ri := 3; ri < len(lay.Rows); ri++ {
		r := &lay.Rows[ri]
		if !r.Rhythm || len(r.Cells) != 1 || rows[ri].cols == nil {
			continue
		}
		own := false // the assumed lead has a grid cell
		best, bestE, ownE := ecg.LeadUnknown, math.Inf(-1), math.NaN()
		for g := 0; g < 3; g++ {
			for k, c := range lay.Rows[g].Cells {
				e := rowEcho(ink, rows, ri, g, float64(k)/4, float64(k+1)/4, pxX, pxY)
				if c.Lead == r.Cells[0].Lead {
					own, ownE = true, e
				}
				if math.IsNaN(e) {
					continue
				}
				if e > bestE {
					best, bestE = c.Lead, e
				}
			}
		}
		if best == ecg.LeadUnknown || best == r.Cells[0].Lead || bestE < 0.8 {
			continue
		}
		if own && !(bestE-ownE >= 0.25) {
			continue // includes an assumed lead whose cell shows too little ink
		}
		r.Cells[0].Lead, r.Cells[0].Negated = best, false
		renamed = true
	}
	return renamed
}

// oneLeadRows reports whether every row of the page seems to print the
// same lead: a single lead printed as consecutive rows of rhythm. Each row
// is cut into four windows (the columns of a 3 × 4 page) and each window's
// polarity is measured as up / (up + down), with up and down the 98th
// percentiles of the trace's rise above and fall below the baseline
// (inkCentres). One lead keeps its polarity from window to window; a
// page of several leads does not (aVR is inverted against I and II, V1
// against V5). On this project's corpus the spread of the polarities
// (10th to 90th percentile) is 0.07–0.10 on 30 s rhythm pages (scan and
// fax) and 0.39–0.70 on 3 × 4 pages (clean, scan, fax, 20 mm/mV; a
// project measurement), so 0.15 splits them. It needs eight windows with
// a trace.
func oneLeadRows(ink *image.Gray, rows []rowInfo, pxY float64) bool {
	var ratios []float64
	for i, r := range rows {
		w := float64(r.x1) - r.traceX0
		n := int(w / 4)
		if n < 10 {
			continue
		}
		up, down := 15*pxY, 15*pxY
		if i > 0 {
			up = math.Min(up, 0.45*(r.baseY-rows[i-1].baseY))
		}
		if i+1 < len(rows) {
			down = math.Min(down, 0.45*(rows[i+1].baseY-r.baseY))
		}
		dst := make([]float64, n)
		rise := make([]float64, 0, n)
		fall := make([]float64, 0, n)
		for k := 0; k < 4; k++ {
			inkCentres(dst, ink, int(r.traceX0+float64(k)*w/4), int(r.baseY-up), int(r.baseY+down), r.baseY)
			rise, fall = rise[:0], fall[:0]
			for _, v := range dst {
				if !math.IsNaN(v) {
					rise = append(rise, -v)
					fall = append(fall, v)
				}
			}
			if len(rise) < n/4 {
				continue
			}
			sort.Float64s(rise)
			sort.Float64s(fall)
			a, b := math.Abs(rise[len(rise)*98/100]), math.Abs(fall[len(fall)*98/100])
			if a+b > 0 {
				ratios = append(ratios, a/(a+b))
			}
		}
	}
	if len(ratios) < 8 {
		return false
	}
	sort.Float64s(ratios)
	lo, hi := ratios[len(ratios)/10], ratios[len(ratios)-1-len(ratios)/10]
	return hi-lo <= 0.15
}
