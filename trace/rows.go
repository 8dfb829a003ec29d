package trace

import (
	"image"
	"math"
	"math/bits"
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
	pulseMM  float64   // height of a pulse found here by findPulse, mm (0 if none or from grid)
	penPx    float64   // the pen's width from the pulse's flat top, px (0 if unknown)
	score    float64   // coverage of the row's extent by ink near the baseline, 0..1
	ticks    []float64 // x of tall isolated strokes (column separators), px
	loose    bool      // found only on the looser reading (gaps up to 12 mm)
	cols     []bool    // image columns (from the ink map's left edge) with ink within 3 mm of the baseline
}

// inkProfile returns the number of ink pixels of each image row.
func inkProfile(ink *image.Gray) []float64 {
	b := ink.Rect
	p := make([]float64, b.Dy())
	for y := 0; y < b.Dy(); y++ {
		row := ink.Pix[y*ink.Stride : y*ink.Stride+b.Dx()]
		n, x := 0, 0
		for ; x+8 <= len(row); x += 8 {
			n += bits.OnesCount64(inkBits(row[x : x+8]))
		}
		for _, v := range row[x:] {
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
	faxGap := int(12 * pxX)
	has := make([]bool, b.Dx())
	// read reads the stretch of the row at profile index py within hb px
	// of it into has.
	read := func(py, hb int) (x0, x1 int, cov float64, loose bool) {
		for i := range has {
			has[i] = false
		}
		for y := max(0, py-hb); y < min(b.Dy(), py+hb+1); y++ {
			row := ink.Pix[y*ink.Stride : y*ink.Stride+b.Dx()]
			for x, v := range row {
				if v >= inkThreshold {
					has[x] = true
				}
			}
		}
		// Longest stretch of ink columns allowing gaps up to maxGap. A
		// binarised fax trace loses most of its flat, one-dot-thick
		// stretches (the line falls between the scanner's dots), leaving
		// the complexes as islands; such a row is accepted on a second,
		// looser reading: gaps up to faxGap and a lower coverage.
		// Header text passes that reading too, so a loose row is kept
		// only when it has a calibration pulse or lines up with the pulse
		// rows (below).
		x0, x1, cov = longestStretch(has, maxGap)
		if cov < 0.6 {
			x0 = -1
		}
		if l0, l1, lc := longestStretch(has, faxGap); lc >= 0.3 && (x0 < 0 || float64(l1-l0) > 1.2*float64(x1-x0)) {
			x0, x1, cov, loose = l0, l1, lc, true
		}
		return x0, x1, cov, loose
	}
	for _, py := range peaks {
		x0, x1, cov, loose := read(py, halfBand)
		// A row with a calibration pulse at its line is certainly a row:
		// where its stretch, read within 3 mm of the line, does not start
		// right after the pulse, it is read again within pulseBandMM, so
		// that a trace whose line wanders (baseline drift at 20 mm/mV)
		// still spans the page.
		for _, p := range pulses {
			if math.Abs(p.BaseY-float64(py+b.Min.Y)) <= 4*pxY {
				if x0 < 0 || float64(x0+b.Min.X)-p.X1 > pulseGapMM*pxX {
					x0, x1, cov, loose = read(py, int(pulseBandMM*pxY))
				}
				break
			}
		}
		if x0 < 0 || float64(x1-x0) < 25*pxX {
			continue
		}
		r := rowInfo{baseY: float64(py), zeroY: math.NaN(), x0: x0 + b.Min.X, x1: x1 + 1 + b.Min.X, score: cov, loose: loose, cols: append([]bool(nil), has...)}
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
		// The row's own pulse measurement always runs: its height checks
		// the gain; a pulse from the grid stage, when there is one, then
		// gives the 0 mV level and the start.
		findPulse(ink, r, cal)
		attachPulse(r, pulses, pxX, pxY)
		if !r.hasPulse {
			r.traceX0 = float64(r.x0)
		}
		// Printed rows are 250 mm wide (10 s at 25 mm/s, standards.md
		// §1.1); a longer stretch has picked up grid lines left in the ink.
		if r.hasPulse && float64(r.x1)-r.traceX0 > 256*pxX {
			r.x1 = int(r.traceX0 + 250*pxX)
		}
	}
	dropOddPulses(rows)
	// A row without a pulse that never leaves its line is the edge of
	// the sheet (a photo's desk), a rule or grid dashes, not a trace.
	rows = dropFlatRows(ink, rows, pxX, pxY)
	// Fewer than half of the rows with a pulse of their own: the pulses
	// may be taller than the row pitch and overlap.
	// readAt reads a row whose line a stack's ladder of pulses puts at y.
	readAt := func(y float64) (rowInfo, bool) {
		py := int(math.Round(y)) - b.Min.Y
		if py < 0 || py >= b.Dy() {
			return rowInfo{}, false
		}
		x0, x1, cov, loose := read(py, int(pulseBandMM*pxY))
		if x0 < 0 || float64(x1-x0) < 25*pxX {
			return rowInfo{}, false
		}
		return rowInfo{baseY: y, zeroY: math.NaN(), x0: x0 + b.Min.X, x1: x1 + 1 + b.Min.X, score: cov, loose: loose, cols: append([]bool(nil), has...)}, true
	}
	var stacked bool
	if k := countPulseMM(rows); 2*k < len(rows) {
		rows, stacked = findStackedPulses(ink, rows, cal, readAt)
	}
	if stacked {
		// The stack spans the trace rows: a row above or below it
		// without a pulse is header or footer text crossed by tall
		// complexes, one close to a pulse row a tangle of complexes.
		dropOddPulses(rows)
		rows = stackRows(rows, pxX)
	}
	// When most rows start with a calibration pulse, rows without one are
	// header or footer text, or stray marks.
	np := 0
	for _, r := range rows {
		if r.hasPulse {
			np++
		}
	}
	if np < 1 {
		out := rows[:0]
		for _, r := range rows {
			if r.hasPulse || !r.loose {
				out = append(out, r)
			}
		}
		rows = out
		commonStart(rows, pxX)
	}
	if np >= 1 {
		// Keep rows without a pulse (one may be crossed by tall complexes)
		// when they span the same stretch of paper as the pulse rows
		// (a single pulse row is enough: a header line crossed by a
		// rhythm strip's tall R waves does not end with the strip).
		var x0s, x1s []float64
		for _, r := range rows {
			if r.hasPulse {
				x0s = append(x0s, r.traceX0)
				x1s = append(x1s, float64(r.x1))
			}
		}
		sort.Float64s(x0s)
		sort.Float64s(x1s)
		refX0, refX1 := x0s[len(x0s)/2], x1s[len(x1s)/2]
		// Rows are at least 0.75 of the smallest pulse-row spacing apart:
		// profile peaks inside a tangle of tall complexes are not rows.
		pitch := math.Inf(1)
		prev := math.NaN()
		for _, r := range rows {
			if r.hasPulse {
				if !math.IsNaN(prev) {
					pitch = math.Min(pitch, r.baseY-prev)
				}
				prev = r.baseY
			}
		}
		// A pulse row lost in between (a fax drops most of a pulse) makes
		// that spacing two pitches: the median spacing of the rows that
		// span the page's stretch then gives the pitch.
		spans := func(r rowInfo) bool {
			return math.Abs(float64(r.x1)-refX1) <= 5*pxX && float64(r.x0) < refX0+5*pxX && float64(r.x0) > refX0-25*pxX
		}
		// A fax row may also have lost its first centimetres of ink (a
		// flat start between the dots): it still ends with the pulse rows
		// and covers at least half of their stretch.
		spansLate := func(r rowInfo) bool {
			return math.Abs(float64(r.x1)-refX1) <= 5*pxX && float64(r.x0) > refX0-25*pxX && float64(r.x1-r.x0) >= 0.5*(refX1-refX0)
		}
		// A row may also reach past both ends of the pulse rows' stretch
		// (grid dashes left in the ink): it then needs the coverage of a
		// trace row over that stretch.
		covers := func(r rowInfo) bool {
			if float64(r.x0) > refX0+5*pxX || float64(r.x1) < refX1-5*pxX {
				return false
			}
			a, z := int(refX0)-b.Min.X, int(refX1)-b.Min.X
			if a < 0 || z > len(r.cols) || z-a < 2 {
				return false
			}
			n := 0
			for _, h := range r.cols[a:z] {
				if h {
					n++
				}
			}
			// and ink in a thin line, not a solid band (a dark desk
			// around a photographed sheet left in the ink).
			return float64(n) >= 0.6*float64(z-a) && bandFill(ink, int(r.baseY-3*pxY), int(r.baseY+3*pxY), int(refX0), int(refX1)) < 0.35
		}
		var gaps []float64
		prev = math.NaN()
		for _, r := range rows {
			if r.hasPulse || spans(r) {
				if !math.IsNaN(prev) {
					gaps = append(gaps, r.baseY-prev)
				}
				prev = r.baseY
			}
		}
		if len(gaps) >= 2 {
			sort.Float64s(gaps)
			pitch = math.Min(pitch, gaps[(len(gaps)-1)/2])
		}
		if math.IsInf(pitch, 1) {
			// One pulse row and no spacing to go by: rows only need the
			// profile peaks' separation.
			pitch = minSep / 0.75
		}
		var out []rowInfo
		for _, r := range rows {
			// The looser reading can run on over dashes of grid left in
			// the ink past the end of the trace: end it with the pulse
			// rows.
			if r.loose && !r.hasPulse && float64(r.x1) > refX1+5*pxX && float64(r.x1) < refX1+20*pxX {
				r.x1 = int(refX1)
			}
			if r.loose && !r.hasPulse {
				r.traceX0 = refX0
			}
			keep := r.hasPulse
			if !keep && !spans(r) && spansLate(r) {
				r.x0 = min(r.x0, int(refX0))
				r.traceX0 = refX0
			}
			if !keep && !spans(r) && covers(r) {
				// Dashes of grid left in the ink (a grey page) run the
				// row's stretch on past both ends of the trace: the row
				// takes the pulse rows' stretch.
				r.x0, r.x1, r.traceX0 = max(r.x0, int(refX0)), int(refX1), refX0
			}
			if !keep && spans(r) {
				keep = true
				for _, q := range rows {
					if q.hasPulse && math.Abs(q.baseY-r.baseY) < 0.75*pitch {
						keep = false
					}
				}
			}
			if keep && !r.hasPulse && r.traceX0 < refX0 {
				// Ink before the pulse rows' trace start (remnants of a
				// pulse, grid dashes) is not trace: rows start together.
				r.traceX0 = refX0
			}
			if keep {
				out = append(out, r)
			}
		}
		rows = dropCrowdedRows(out)
	}
	return rows
}

// longestStretch returns the longest stretch [x0, x1] of true columns of
// has whose gaps are at most maxGap columns, and the fraction of its
// columns that are true; x0 is -1 when has holds no true column.
func longestStretch(has []bool, maxGap int) (x0, x1 int, cov float64) {
	bestX0, bestX1, bestN := -1, -1, 0
	s0, last, n := -1, -1, 0
	for x, h := range has {
		if !h {
			continue
		}
		if s0 < 0 || x-last > maxGap {
			s0, n = x, 0
		}
		last = x
		n++
		if last-s0 > bestX1-bestX0 {
			bestX0, bestX1, bestN = s0, last, n
		}
	}
	if bestX0 < 0 {
		return -1, -1, 0
	}
	return bestX0, bestX1, float64(bestN) / float64(bestX1-bestX0+1)
}

// pulseTailMM is the flat stretch printed between the calibration pulse's
// falling edge and the first trace column, mm (common practice on the
// pages tracelift prints; other printers differ, and column ticks, when
// present, override it: see alignToTicks).
const pulseTailMM = 2.0

// pulseBandMM is the half-height, mm, of the band a row's stretch of ink
// is read in again when a calibration pulse found by the grid stage
// stands on the row's line and the stretch read within 3 mm starts more
// than pulseGapMM after it (on a rhythm page with pen marks, reading every
// pulse row so moved a row's end 2.5 mm onto a mark). Real records printed at 20 mm/mV wander
// further: LUDB records 114 (6 × 2) and 38 (Cabrera) each lost a row whose
// stretch, read within 3 mm, started 37 mm after its pulse, and the page
// was read as one lead of rhythm.
const pulseBandMM = 6

// pulseGapMM: the pulse's fall, the 2 mm flat tail after it and a first
// complex leave the stretch starting within a few millimetres of it.
const pulseGapMM = 5

// attachPulseGapMM is how far, mm, the row's stretch of ink may start
// after a calibration pulse that belongs to it: the stretch is read
// within 3 mm of the row's line, and a trace whose first centimetres
// drift further (baseline wander at 20 mm/mV: LUDB record 4's lead II
// printed 3 × 4 starts 12 mm after its pulse there) starts it late.
const attachPulseGapMM = 25

// attachPulse takes the row's 0 mV level and trace start from a detected
// calibration pulse whose foot lies near the row.
func attachPulse(r *rowInfo, pulses []grid.Pulse, pxX, pxY float64) {
	for _, p := range pulses {
		if math.Abs(p.BaseY-r.baseY) > 4*pxY || p.X1 < float64(r.x0)-attachPulseGapMM*pxX || p.X0 > float64(r.x0)+30*pxX {
			continue
		}
		r.hasPulse = true
		r.zeroY = p.BaseY
		r.traceX0 = p.X1 + pulseTailMM*pxX
		return
	}
}

// findPulse looks for a rectangular calibration pulse at the left end of
// the row: a stroke rising from the baseline by 3–45 mm, a flat top 3–12
// mm long and a fall back to the same foot, rising between 14 mm before
// and 25 mm after the row's first ink (grid lines left in the ink can
// start the row early). Its height is recorded (pulseMM) so that a default gain
// can be replaced by the printed one.
func findPulse(ink *image.Gray, r *rowInfo, cal grid.Calibration) {
	pxX, pxY := cal.PxPerMMX.V, cal.PxPerMMY.V
	// A pulse taller than the row's ink band is cut off from the row's
	// stretch by its width, so the search starts 14 mm left of it.
	band := image.Rect(r.x0-int(14*pxX), int(r.baseY-45*pxY), min(ink.Rect.Max.X, r.x0+int(40*pxX)), int(r.baseY+3*pxY)).Intersect(ink.Rect)
	if band.Empty() {
		return
	}
	var cr columnRuns
	cr.scan(ink, band)
	// tall reports a run of column c standing on the baseline, at least
	// 3 mm tall (or within 20 % of want px when want > 0).
	tall := func(c int, want float64) (top, bot float64, ok bool) {
		for _, ru := range cr.col(c) {
			h := float64(ru.bot - ru.top + 1)
			if math.Abs(float64(ru.bot)-r.baseY) > 2.5*pxY || h < 3*pxY {
				continue
			}
			if want > 0 && math.Abs(h-want) > 0.2*want {
				continue
			}
			return float64(ru.top), float64(ru.bot), true
		}
		return 0, 0, false
	}
	rise := -1
	var top, foot float64
	for c := 0; c < min(cr.width(), r.x0-cr.x0+int(25*pxX)); c++ {
		if t, b, ok := tall(c, 0); ok {
			rise, top, foot = c, t, b
			break
		}
	}
	if rise < 0 {
		return
	}
	want := foot - top + 1
	fall := -1
	for c := rise + int(3*pxX); c < min(cr.width(), rise+int(12*pxX)); c++ {
		if _, _, ok := tall(c, want); ok {
			fall = c
		}
	}
	if fall < 0 {
		return
	}
	flat := 0
	var thick []float64 // the flat top's stroke heights: the pen width
	for c := rise + int(pxX); c < fall-int(pxX); c++ {
		for _, ru := range cr.col(c) {
			if math.Abs(ru.centre()-top) < 1.5*pxY && float64(ru.bot-ru.top) < 1.5*pxY {
				flat++
				thick = append(thick, float64(ru.bot-ru.top+1))
				break
			}
		}
	}
	if span := fall - rise - 2*int(pxX); span <= 0 || float64(flat) < 0.7*float64(span) {
		return
	}
	for fall+1 < cr.width() {
		if _, _, ok := tall(fall+1, want); !ok {
			break
		}
		fall++
	}
	// The pen width from the pulse's own flat top: the band's runs also
	// hold other rows' strokes where complexes reach into it, and a
	// width read from them (12–14 px for a 5 px pen on a page of
	// overlapping rows) moved the trace start by 0.4 mm (16 ms).
	sort.Float64s(thick)
	pen := thick[len(thick)/2]
	r.hasPulse = true
	r.penPx = pen
	r.zeroY = foot - (pen-1)/2
	r.pulseMM = (foot - top - (pen - 1)) / pxY
	r.traceX0 = float64(cr.x0+fall) - (pen-1)/2 + pulseTailMM*pxX
	// The falling line's centre to a fraction of a pixel, over its middle
	// (clear of the corners).
	pw := int(math.Ceil(pen))
	if x, ok := grid.LineCentre(ink, cr.x0+fall-pw-2, cr.x0+fall+2, int(top)+pw+1, int(foot)-pw-1, true); ok && math.Abs(x-(float64(cr.x0+fall)-(pen-1)/2)) < 1 {
		r.traceX0 = x + pulseTailMM*pxX
	}
}

// findTicks records tall, isolated vertical strokes in a row: printed
// column separators. A stroke counts when it crosses the baseline by 1.2–5
// mm each way, the trace 1.5 mm to one side of it is thin and its ends
// stand alone (tickCentre), which a steep QRS stroke's do not.
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
		if e-c <= d && (maxH(c-d) <= 2*pen+1 || maxH(e+d) <= 2*pen+1) {
			if x, ok := tickCentre(ink, &cr, c, e, base, pxX, pxY); ok {
				r.ticks = append(r.ticks, x)
			}
		}
		c = e
	}
}

// tickCentre checks that the vertical stroke in columns [c, e] of cr
// stands alone above and below the baseline and returns its ink-weighted
// centre, px. A printed separator is crossed by the trace only near the
// baseline, while a steep QRS stroke (which blurs into one tall run per
// column on a scan) is joined by the rest of its complex beside its top or
// bottom end: beside the stroke (1 px clear of it, 0.8 mm wide) and away
// from the baseline (0.7 mm) at most 8 % of the pixels may be ink. The
// centre is the median over the same rows (clear of the trace) of each
// row's ink-weighted centre, so it is sub-pixel.
func tickCentre(ink *image.Gray, cr *columnRuns, c, e int, base, pxX, pxY float64) (float64, bool) {
	top, bot := math.Inf(1), math.Inf(-1)
	for k := c; k <= e; k++ {
		for _, ru := range cr.col(k) {
			if float64(ru.top) < base && float64(ru.bot) > base {
				top, bot = math.Min(top, float64(ru.top)), math.Max(bot, float64(ru.bot))
			}
		}
	}
	if math.IsInf(top, 0) {
		return 0, false
	}
	g := max(2, int(math.Round(0.8*pxX)))
	xl0, xr1 := cr.x0+c-1-g, cr.x0+e+1+g
	xl1, xr0 := cr.x0+c-2, cr.x0+e+2
	clear := 0.7 * pxY
	inkN, area := 0, 0
	var centres []float64
	b := ink.Rect
	for _, ys := range [2][2]int{{int(top), int(base - clear)}, {int(math.Ceil(base + clear)), int(bot)}} {
		for y := max(ys[0], b.Min.Y); y <= min(ys[1], b.Max.Y-1); y++ {
			row := ink.Pix[(y-b.Min.Y)*ink.Stride:]
			var sw, swx float64
			for x := max(xl0, b.Min.X); x <= min(xr1, b.Max.X-1); x++ {
				v := row[x-b.Min.X]
				if x > xl1 && x < xr0 {
					sw += float64(v)
					swx += float64(v) * float64(x)
					continue
				}
				area++
				if v >= inkThreshold {
					inkN++
				}
			}
			if sw > 0 {
				centres = append(centres, swx/sw)
			}
		}
	}
	if area == 0 || len(centres) == 0 || float64(inkN) > 0.08*float64(area) {
		return 0, false
	}
	// The median of the rows' centres: a complex touching the stroke
	// over a few rows does not pull it aside.
	sort.Float64s(centres)
	return centres[len(centres)/2], true
}

// commonStart moves the start of rows without a pulse whose ink begins
// left of the page's common trace start (the median start of the rows) to
// that start: the rows of a page start together (common practice), and ink
// before the start is a pulse whose strokes a fax broke, or grid dashes.
// Rows starting later are left alone (a fax may drop a row's first
// centimetres).
func commonStart(rows []rowInfo, pxX float64) {
	if len(rows) < 3 {
		return
	}
	xs := make([]float64, 0, len(rows))
	for _, r := range rows {
		xs = append(xs, r.traceX0)
	}
	sort.Float64s(xs)
	med := xs[len(xs)/2]
	for i := range rows {
		r := &rows[i]
		if !r.hasPulse && r.traceX0 < med-pxX && float64(r.x1) > med+100*pxX {
			r.traceX0 = med
		}
	}
}

// dropOddPulses takes back the pulses findPulse read on rows whose height
// is off the page's own by more than a quarter (the median of the rows'
// pulse heights, when three rows or more have one): one page prints one
// gain (standards.md §1.1). Between the rows of a 12 × 1 page at 20
// mm/mV, where the pulses overlap into two lines down the page, a tangle
// of complexes crossed by them read as pulses 2.4 and 6.3 mm tall; rows
// that close to a pulse row set the row pitch, and the page's top and
// bottom rows, without a pulse of their own, were dropped as too close
// to the pulse rows (overlap 12x1 seed 9: 10 rows, read as a rhythm
// strip of one lead).
//
// A lone pulse among three rows or more whose height is no printed gain
// (5, 10 or 20 mm/mV within 8 %) is taken back as well: on a page printed
// without pulses a complex with a flat top read as a 2.4 mm pulse on one
// row of twelve and the page was traced at 2.4 mm/mV (synthetic record 5,
// 12 × 1, pulses painted out: −11.3 dB).
func dropOddPulses(rows []rowInfo) {
	var hs []float64
	for _, r := range rows {
		if r.pulseMM > 0 {
			hs = append(hs, r.pulseMM)
		}
	}
	if len(hs) == 1 && len(rows) >= 3 && !printedGain(hs[0]) {
		for i := range rows {
			if r := &rows[i]; r.pulseMM > 0 {
				r.hasPulse, r.pulseMM, r.zeroY, r.traceX0 = false, 0, math.NaN(), float64(r.x0)
			}
		}
		return
	}
	if len(hs) < 3 {
		return
	}
	sort.Float64s(hs)
	med := hs[len(hs)/2]
	for i := range rows {
		r := &rows[i]
		if r.pulseMM > 0 && math.Abs(r.pulseMM-med) > 0.25*med {
			r.hasPulse, r.pulseMM, r.zeroY, r.traceX0 = false, 0, math.NaN(), float64(r.x0)
		}
	}
}

// snapPrinted returns the printed gain, 5, 10 or 20 mm/mV (standards.md
// §1.1), that a pulse h mm tall shows within 8 % (the pen's thickness
// blurs a measured height by a few per cent), and true; h and false when
// it shows none.
func snapPrinted(h float64) (float64, bool) {
	for _, g := range []float64{5, 10, 20} {
		if math.Abs(h-g) <= 0.08*g {
			return g, true
		}
	}
	return h, false
}

// printedGain reports whether a pulse h mm tall is 1 mV at a printed gain
// (snapPrinted).
func printedGain(h float64) bool {
	_, ok := snapPrinted(h)
	return ok
}
