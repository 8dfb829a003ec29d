package trace

import (
	"image"
	"math"
	"sort"

	"tracelift/grid"
)

// rowInfo is a trace row found on the page.
type rowInfo struct {
	baseY    float64 // y of the row's densest ink level (≈ isoelectric line), px
	zeroY    float64 // y of 0 mV: pulse foot if known, else NaN
	x0, x1   int     // horizontal extent of the row's ink, px
	traceX0  float64 // left edge of the trace (after the calibration pulse), px
	hasPulse bool
	score    float64   // coverage of the row's extent by ink near the baseline, 0..1
	ticks    []float64 // x of tall isolated strokes (column separators), px
}

// inkProfile returns the number of ink pixels of each image row.
func inkProfile(ink *image.Gray) []float64 {
	b := ink.Rect
	p := make([]float64, b.Dy())
	for y := 0; y < b.Dy(); y++ {
		row := ink.Pix[y*ink.Stride : y*ink.Stride+b.Dx()]
		n := 0
		for _, v := range row {
			if v >= inkThreshold {
				n++
			}
		}
		p[y] = float64(n)
	}
	return p
}

// boxSmooth returns the moving average of src over a window of 2h+1.
func boxSmooth(dst, src []float64, h int) []float64 {
	n := len(src)
	if dst == nil {
		dst = make([]float64, n)
	}
	if len(dst) != n {
		panic("trace: boxSmooth: length mismatch")
	}
	pre := make([]float64, n+1)
	for i, v := range src {
		pre[i+1] = pre[i] + v
	}
	for i := range src {
		lo, hi := max(0, i-h), min(n, i+h+1)
		dst[i] = (pre[hi] - pre[lo]) / float64(hi-lo)
	}
	return dst
}

// findRows locates the trace rows of the page: peaks of the smoothed row
// ink profile that are backed by a long, nearly continuous horizontal
// stretch of ink (common practice: projection profiles, see doc.go).
func findRows(ink *image.Gray, cal grid.Calibration, pulses []grid.Pulse) []rowInfo {
	b := ink.Rect
	pxX, pxY := cal.PxPerMMX.V, cal.PxPerMMY.V
	prof := boxSmooth(nil, inkProfile(ink), max(1, int(pxY*0.75)))
	type cand struct {
		y int
		v float64
	}
	var cands []cand
	for y := 1; y < len(prof)-1; y++ {
		if prof[y] > 0 && prof[y] >= prof[y-1] && prof[y] > prof[y+1] {
			cands = append(cands, cand{y, prof[y]})
		}
	}
	sort.Slice(cands, func(i, j int) bool { return cands[i].v > cands[j].v })
	if len(cands) == 0 {
		return nil
	}
	minSep := 7 * pxY
	floor := 0.2 * cands[0].v
	var peaks []int
	for _, c := range cands {
		if c.v < floor {
			break
		}
		ok := true
		for _, p := range peaks {
			if math.Abs(float64(c.y-p)) < minSep {
				ok = false
				break
			}
		}
		if ok {
			peaks = append(peaks, c.y)
		}
	}
	sort.Ints(peaks)
	// Horizontal stretch of each candidate row.
	var rows []rowInfo
	halfBand := int(3 * pxY)
	maxGap := int(4 * pxX)
	has := make([]bool, b.Dx())
	for _, py := range peaks {
		for i := range has {
			has[i] = false
		}
		for y := max(0, py-halfBand); y < min(b.Dy(), py+halfBand+1); y++ {
			row := ink.Pix[y*ink.Stride : y*ink.Stride+b.Dx()]
			for x, v := range row {
				if v >= inkThreshold {
					has[x] = true
				}
			}
		}
		// Longest stretch of ink columns allowing gaps up to maxGap.
		bestX0, bestX1, bestN := -1, -1, 0
		x0, last, n := -1, -1, 0
		for x, h := range has {
			if !h {
				continue
			}
			if x0 < 0 || x-last > maxGap {
				x0, n = x, 0
			}
			last = x
			n++
			if last-x0 > bestX1-bestX0 {
				bestX0, bestX1, bestN = x0, last, n
			}
		}
		if bestX0 < 0 || float64(bestX1-bestX0) < 25*pxX {
			continue
		}
		r := rowInfo{baseY: float64(py), zeroY: math.NaN(), x0: bestX0 + b.Min.X, x1: bestX1 + 1 + b.Min.X}
		r.score = float64(bestN) / float64(bestX1-bestX0+1)
		if r.score < 0.6 {
			continue
		}
		rows = append(rows, r)
	}
	// Keep rows whose extent is comparable with the widest one (drops
	// header text lines and stray marks).
	widest := 0
	for _, r := range rows {
		widest = max(widest, r.x1-r.x0)
	}
	out := rows[:0]
	for _, r := range rows {
		if float64(r.x1-r.x0) >= 0.45*float64(widest) {
			out = append(out, r)
		}
	}
	rows = out
	for i := range rows {
		r := &rows[i]
		r.baseY += float64(b.Min.Y)
		attachPulse(r, pulses, pxX, pxY)
		if !r.hasPulse {
			findPulse(ink, r, cal)
		}
		if !r.hasPulse {
			r.traceX0 = float64(r.x0)
		}
	}
	return rows
}

// pulseTailMM is the flat stretch printed between the calibration pulse's
// falling edge and the first trace column, mm (common practice on the
// pages tracelift prints; other printers differ, and column ticks, when
// present, override it: see alignToTicks).
const pulseTailMM = 2.0

// attachPulse takes the row's 0 mV level and trace start from a detected
// calibration pulse whose foot lies near the row.
func attachPulse(r *rowInfo, pulses []grid.Pulse, pxX, pxY float64) {
	for _, p := range pulses {
		if math.Abs(p.BaseY-r.baseY) > 4*pxY || p.X1 < float64(r.x0)-2*pxX || p.X0 > float64(r.x0)+30*pxX {
			continue
		}
		r.hasPulse = true
		r.zeroY = p.BaseY
		r.traceX0 = p.X1 + pulseTailMM*pxX
		return
	}
}

// findPulse looks for a 1 mV calibration pulse at the left end of the row:
// a tall stroke rising from the baseline by about the gain's height, a flat
// top, and a fall back to the baseline within 12 mm.
func findPulse(ink *image.Gray, r *rowInfo, cal grid.Calibration) {
	pxX, pxY := cal.PxPerMMX.V, cal.PxPerMMY.V
	want := cal.GainMMPerMV.V * pxY // pulse height, px
	if !(want > 2) {
		return
	}
	band := image.Rect(r.x0, int(r.baseY-want*1.5), min(ink.Rect.Max.X, r.x0+int(14*pxX)), int(r.baseY+want*0.5)).Intersect(ink.Rect)
	if band.Empty() {
		return
	}
	var cr columnRuns
	cr.scan(ink, band)
	tall := func(c int) (foot float64, ok bool) {
		for _, ru := range cr.col(c) {
			h := float64(ru.bot - ru.top + 1)
			if h >= 0.75*want && h <= 1.35*want && math.Abs(float64(ru.bot)-r.baseY) < 0.3*want {
				return float64(ru.bot), true
			}
		}
		return 0, false
	}
	// The rising edge must come within 6 mm of the row's first ink.
	rise := -1
	var foot float64
	for c := 0; c < min(cr.width(), int(6*pxX)); c++ {
		if f, ok := tall(c); ok {
			rise, foot = c, f
			break
		}
	}
	if rise < 0 {
		return
	}
	// The falling edge: the last tall column 3–8 mm after the rise, with
	// a flat top between the edges.
	fall := -1
	for c := rise + int(3*pxX); c < min(cr.width(), rise+int(8*pxX)); c++ {
		if _, ok := tall(c); ok {
			fall = c
		}
	}
	if fall < 0 {
		return
	}
	topY := foot - want
	flat := 0
	for c := rise + int(pxX); c < fall-int(pxX); c++ {
		for _, ru := range cr.col(c) {
			if math.Abs(ru.centre()-topY) < 0.25*want && float64(ru.bot-ru.top) < 0.2*want {
				flat++
				break
			}
		}
	}
	if span := fall - rise - 2*int(pxX); span <= 0 || float64(flat) < 0.7*float64(span) {
		return
	}
	for fall+1 < cr.width() {
		if _, ok := tall(fall + 1); !ok {
			break
		}
		fall++
	}
	pen := penWidth(&cr)
	r.hasPulse = true
	r.zeroY = foot - (pen-1)/2
	r.traceX0 = float64(cr.x0+fall) - (pen-1)/2 + pulseTailMM*pxX
}

// findTicks records tall, isolated vertical strokes in a row: printed
// column separators. A stroke counts when it is at least 3 mm tall and the
// trace 1.5 mm to either side is thin.
func findTicks(ink *image.Gray, r *rowInfo, cal grid.Calibration, rowsAbove, rowsBelow float64) {
	pxX, pxY := cal.PxPerMMX.V, cal.PxPerMMY.V
	band := image.Rect(int(r.traceX0), int(r.baseY-rowsAbove), r.x1, int(r.baseY+rowsBelow)).Intersect(ink.Rect)
	if band.Empty() {
		return
	}
	var cr columnRuns
	cr.scan(ink, band)
	pen := penWidth(&cr)
	d := int(1.5 * pxX)
	base := r.baseY
	if !math.IsNaN(r.zeroY) {
		base = r.zeroY
	}
	maxH := func(c int) float64 {
		m := 0.0
		if c < 0 || c >= cr.width() {
			return 0
		}
		for _, ru := range cr.col(c) {
			if math.Abs(ru.centre()-base) < 3*pxY || (float64(ru.top) < base && float64(ru.bot) > base) {
				m = math.Max(m, float64(ru.bot-ru.top+1))
			}
		}
		return m
	}
	// isTick: a stroke crossing the baseline, reaching at least 1.2 mm to
	// either side and at most 5 mm.
	isTick := func(c int) bool {
		for _, ru := range cr.col(c) {
			up, down := base-float64(ru.top), float64(ru.bot)-base
			if up >= 1.2*pxY && down >= 1.2*pxY && up <= 5*pxY && down <= 5*pxY {
				return true
			}
		}
		return false
	}
	for c := 0; c < cr.width(); c++ {
		if !isTick(c) {
			continue
		}
		e := c
		for e+1 < cr.width() && isTick(e+1) {
			e++
		}
		if e-c <= d && maxH(c-d) <= 2*pen+1 && maxH(e+d) <= 2*pen+1 {
			// The stroke's centre, px.
			r.ticks = append(r.ticks, float64(cr.x0)+float64(c+e)/2)
		}
		c = e
	}
}
