package trace

import (
	"image"
	"math"
	"sort"

	"tracelift/grid"
)

// Calibration pulses taller than the row pitch (20 mm/mV on a 12 × 1
// page, rows ≈ 14 mm apart) overlap: the pulses of all rows are printed
// at the same x, so their rising and falling strokes merge into two long
// vertical lines down the page, crossed by the flat tops, and no stroke
// ends on its own row's baseline for findPulse to see. Each row's pulse
// is still a rectangle: both lines cover the row from its baseline up to
// its top, and its flat top joins them there. findStackedPulses tests
// the printed gains 5, 10 and 20 mm/mV (standards.md §1.1) against that
// picture; a wrong gain predicts a top where another row's top or none
// lies, and at least one row (the top or the bottom one) then has no top
// where it should.

// stackedGainsMM are the pulse heights tried, mm (1 mV at the printed
// gains 5, 10 and 20 mm/mV, standards.md §1.1).
var stackedGainsMM = [...]float64{5, 10, 20}

// colCover is the fraction of the pixels of column x between rows y0 and
// y1 (inclusive) that are ink, taking the best of columns x−1, x, x+1 on
// each row (a stroke a pixel off the vertical).
func colCover(ink *image.Gray, x, y0, y1 int) float64 {
	b := ink.Rect
	y0, y1 = max(y0, b.Min.Y), min(y1, b.Max.Y-1)
	if y0 > y1 || x-1 < b.Min.X || x+1 >= b.Max.X {
		return 0
	}
	n := 0
	for y := y0; y <= y1; y++ {
		o := (y-b.Min.Y)*ink.Stride + (x - b.Min.X)
		if ink.Pix[o-1] >= inkThreshold || ink.Pix[o] >= inkThreshold || ink.Pix[o+1] >= inkThreshold {
			n++
		}
	}
	return float64(n) / float64(y1-y0+1)
}

// flatTop returns the y of a horizontal line of ink across columns
// [x0, x1] within tol px of y, the ink-weighted centre of the line's
// rows, and whether one is there: each of at least 80 % of the columns
// holds ink within tol of y.
func flatTop(ink *image.Gray, x0, x1 int, y, tol float64) (float64, bool) {
	b := ink.Rect
	ya, yb := max(int(math.Floor(y-tol)), b.Min.Y), min(int(math.Ceil(y+tol)), b.Max.Y-1)
	x0, x1 = max(x0, b.Min.X), min(x1, b.Max.X-1)
	if ya > yb || x0 > x1 {
		return 0, false
	}
	hit := 0
	var sw, swy float64
	for x := x0; x <= x1; x++ {
		any := false
		for yy := ya; yy <= yb; yy++ {
			v := ink.Pix[(yy-b.Min.Y)*ink.Stride+(x-b.Min.X)]
			if v >= inkThreshold {
				any = true
				sw += float64(v)
				swy += float64(v) * float64(yy)
			}
		}
		if any {
			hit++
		}
	}
	if float64(hit) < 0.8*float64(x1-x0+1) || sw == 0 {
		return 0, false
	}
	return swy / sw, true
}

// pulseEdge is a run of adjacent image columns, [x0, x1].
type pulseEdge struct{ x0, x1 int }

func (s pulseEdge) centre() float64 { return float64(s.x0+s.x1) / 2 }

// findStackedPulses looks for overlapping calibration pulses at the left
// end of the rows (see above) and, when three or more rows, and at least
// three quarters of the trace rows of the stack (missedRows), show a
// complete rectangle at one printed gain,
// gives those rows that pulse: 0 mV at the foot beside the falling
// stroke (the row's baseline when the foot is not found), the height and
// the trace start pulseTailMM after the falling stroke. It replaces what
// findPulse and attachPulse found on those rows (a tangle of strokes
// there looks like short pulses) and returns whether it did.
func findStackedPulses(ink *image.Gray, rows []rowInfo, cal grid.Calibration, readAt func(y float64) (rowInfo, bool)) ([]rowInfo, bool) {
	n := len(rows)
	if n < 3 {
		return rows, false
	}
	pxX, pxY := cal.PxPerMMX.V, cal.PxPerMMY.V
	x0s := make([]int, 0, n)
	for _, r := range rows {
		x0s = append(x0s, r.x0)
	}
	sort.Ints(x0s)
	xa := max(ink.Rect.Min.X+1, x0s[0]-int(14*pxX))
	xb := min(ink.Rect.Max.X-1, x0s[n/2]+int(25*pxX))
	// Stacked pulse strokes cover the millimetres above every trace row's
	// baseline: candidate strokes are the columns that cover 1.5–4 mm
	// above it on at least half of the rows (header and footer lines are
	// rows here too). The window starts above the baseline because a
	// row's baseline, the peak of its ink profile, can sit a millimetre
	// or more below the pulse's foot (tall T waves, baseline wander: LUDB
	// record 1, 12 × 1 at 20 mm/mV).
	var strokes []pulseEdge
	in := false
	for x := xa; x < xb; x++ {
		k := 0
		for _, r := range rows {
			if colCover(ink, x, int(r.baseY-4*pxY), int(r.baseY-1.5*pxY)) >= 0.9 {
				k++
			}
		}
		ok := k >= 3 && 2*k >= n
		switch {
		case ok && !in:
			strokes = append(strokes, pulseEdge{x, x})
			in = true
		case ok:
			strokes[len(strokes)-1].x1 = x
		default:
			in = false
		}
	}
	pitch := rowPitch(rows)
	var best stackFit
	for i, s1 := range strokes {
		for _, s2 := range strokes[i+1:] {
			d := (s2.centre() - s1.centre()) / pxX
			if d < 3 || d > 12 {
				continue
			}
			feet := stackFeet(ink, rows, s2, pxX, pxY, pitch)
			for _, h := range stackedGainsMM {
				if f := fitStack(ink, rows, s1, s2, feet, h, pxY); f.better(best) {
					best = f
				}
			}
		}
	}
	if best.count < 3 || 4*best.count < 3*(best.count+missedRows(rows, best.tops)) {
		return rows, false
	}
	fallX := stackFall(ink, rows, best.fall, best.tops, pxY)
	for ri := range rows {
		if math.IsNaN(best.tops[ri]) {
			continue
		}
		best.give(&rows[ri], best.feet[ri], best.tops[ri], fallX, pxX, pxY)
	}
	if readAt != nil {
		rows = ladderRows(ink, rows, best, cal, fallX, readAt)
	}
	return rows, true
}

// ladderRows completes the rows of a stack of pulses (best): the feet of
// a stack are evenly spaced, one per trace row, and where the ladder has
// a rung that no row of rows sits on (within a quarter of its pitch) —
// inside the stack, or continuing it up or down — that rung's row was
// missed by the ink profile (its line wandering, or its peak pulled
// into a neighbour's by tall complexes). Such a rung counts when it has
// a foot beside the falling stroke within a fifth of the pitch of where
// the pitch puts it, a flat top best's height above that foot, and both
// strokes covering the height between (stackRung); readAt then reads the
// row's stretch at the foot, and the row takes the rung as its pulse. Rows run top to bottom, and so do the rows
// returned (the new ones carry their pulse; stackRows then drops the
// profile peaks of tangled complexes near them).
func ladderRows(ink *image.Gray, rows []rowInfo, best stackFit, cal grid.Calibration, fallX float64, readAt func(y float64) (rowInfo, bool)) []rowInfo {
	pxX, pxY := cal.PxPerMMX.V, cal.PxPerMMY.V
	var feet []float64
	for ri := range rows {
		if !math.IsNaN(best.tops[ri]) && !math.IsNaN(best.feet[ri]) {
			feet = append(feet, best.feet[ri])
		}
	}
	if len(feet) < 3 {
		return rows
	}
	sort.Float64s(feet)
	// The pitch: consecutive feet are one or more pitches apart.
	minD := math.Inf(1)
	for k := 1; k < len(feet); k++ {
		minD = math.Min(minD, feet[k]-feet[k-1])
	}
	if minD < 5*pxY {
		return rows
	}
	var ps []float64
	for k := 1; k < len(feet); k++ {
		d := feet[k] - feet[k-1]
		ps = append(ps, d/math.Round(d/minD))
	}
	sort.Float64s(ps)
	pitch := ps[len(ps)/2]
	taken := func(y float64) bool {
		for _, r := range rows {
			f := r.baseY
			if r.hasPulse && !math.IsNaN(r.zeroY) {
				f = r.zeroY
			}
			if math.Abs(f-y) < 0.25*pitch {
				return true
			}
		}
		return false
	}
	// rung reads the rung nearest y: its foot, its top and whether it is
	// whole; a whole rung no row sits on is read as a row.
	var added []rowInfo
	rung := func(y float64) (float64, bool) {
		foot := footAt(ink, best.fall, y, 0.2*pitch, pxX)
		if math.IsNaN(foot) || foot-best.hMM*pxY < float64(ink.Rect.Min.Y) {
			return 0, false
		}
		top, covered, ok := stackRung(ink, best.rise, best.fall, foot, best.hMM, stackTol(best.hMM)*pxY, pxY)
		if !covered || !ok {
			return 0, false
		}
		if !taken(foot) {
			if r, ok := readAt(foot); ok {
				best.give(&r, foot, top, fallX, pxX, pxY)
				// Printed rows are 250 mm wide (standards.md §1.1), as in
				// findRows.
				if float64(r.x1)-r.traceX0 > 256*pxX {
					r.x1 = int(r.traceX0 + 250*pxX)
				}
				added = append(added, r)
			}
		}
		return foot, true
	}
	// Inside the stack: gaps of two or more pitches between feet.
	for k := 1; k < len(feet); k++ {
		m := int(math.Round((feet[k] - feet[k-1]) / pitch))
		for j := 1; j < m; j++ {
			rung(feet[k-1] + float64(j)*(feet[k]-feet[k-1])/float64(m))
		}
	}
	// Beyond it, upwards and downwards, while the ladder goes on.
	for _, dir := range []float64{-1, 1} {
		edge := feet[0]
		if dir > 0 {
			edge = feet[len(feet)-1]
		}
		for {
			foot, ok := rung(edge + dir*pitch)
			if !ok {
				break
			}
			edge = foot
		}
	}
	if len(added) == 0 {
		return rows
	}
	rows = append(rows, added...)
	sort.SliceStable(rows, func(i, j int) bool { return rows[i].baseY < rows[j].baseY })
	return rows
}

// footAt is the foot of a pulse whose falling stroke is fall near y: the
// median centre of the ink runs nearest y within w px of it over the
// pulse's tail (pulseTailMM after the stroke), NaN where fewer than half
// of the tail's columns hold ink there.
func footAt(ink *image.Gray, fall pulseEdge, y, w, pxX float64) float64 {
	fx0, fx1 := fall.x1+2, fall.x1+int(pulseTailMM*pxX)
	if fx1 <= fx0 {
		return math.NaN()
	}
	c := make([]float64, fx1-fx0)
	inkCentres(c, ink, fx0, int(y-w), int(y+w), y)
	var ys []float64
	for _, v := range c {
		if !math.IsNaN(v) {
			ys = append(ys, v)
		}
	}
	if 2*len(ys) < len(c) {
		return math.NaN()
	}
	sort.Float64s(ys)
	return y + ys[len(ys)/2]
}

// stackFit is one reading of a stack of pulses: its rising and falling
// strokes, the pulse height tried, each row's foot and top (NaN where
// missing), how many rows have a top and how many tops are missing where
// the picture at this height says there must be one (unexplained).
type stackFit struct {
	rise, fall  pulseEdge
	hMM         float64
	feet, tops  []float64
	count       int
	unexplained int
}

// better reports whether f explains the stack better than g: more rows
// with a top once its unexplained misses are taken off, then more rows
// with a top.
func (f stackFit) better(g stackFit) bool {
	a, b := f.count-f.unexplained, g.count-g.unexplained
	if a != b {
		return a > b
	}
	return f.count > g.count
}

// give makes the rung with foot and top (y, px; foot NaN when not
// found, the row's baseline standing in) row r's pulse: 0 mV at the foot,
// the measured height unless it is more than 10 % off the fit's, and the
// trace starting pulseTailMM after the falling stroke at fallX.
func (f stackFit) give(r *rowInfo, foot, top, fallX, pxX, pxY float64) {
	r.hasPulse, r.zeroY = true, foot
	base := foot
	if math.IsNaN(base) {
		base = r.baseY
	}
	r.pulseMM = (base - top) / pxY
	if math.Abs(r.pulseMM-f.hMM) > 0.1*f.hMM {
		r.pulseMM = f.hMM
	}
	r.traceX0 = fallX + pulseTailMM*pxX
	r.x0 = min(r.x0, f.rise.x0)
}

// stackTol is how far, mm, a stacked pulse's top may lie from hMM above
// its foot: 6 % of hMM, at least 0.3 mm (the pen blurs a measured height
// by a few per cent; 5, 10 and 20 mm/mV, a factor of two apart, stay
// apart).
func stackTol(hMM float64) float64 { return math.Max(0.3, 0.06*hMM) }

// stackRung reads the rung of a stack of pulses with strokes rise and
// fall whose foot is at base (y, px): whether both strokes cover the
// height from base up to hMM above it (within t px), and the top, the
// flat line joining them within t px of that height, if there is one.
func stackRung(ink *image.Gray, rise, fall pulseEdge, base, hMM, t, pxY float64) (top float64, covered, ok bool) {
	yt := base - hMM*pxY
	if colCover(ink, int(rise.centre()), int(yt+t), int(base)) < 0.9 || colCover(ink, int(fall.centre()), int(yt+t), int(base)) < 0.9 {
		return 0, false, false
	}
	top, ok = flatTop(ink, rise.x1+2, fall.x0-2, yt, t)
	return top, true, ok
}

// stackFeet finds each row's foot: the thin line beside the falling
// stroke (the pulse's tail, at the row's 0 mV), the centre of the ink
// run nearest the row's baseline within a quarter of the row pitch
// (at most 3 mm); NaN where fewer than half of the tail's columns hold
// ink there.
func stackFeet(ink *image.Gray, rows []rowInfo, fall pulseEdge, pxX, pxY, pitch float64) []float64 {
	feet := make([]float64, len(rows))
	w := 3 * pxY
	if pitch > 0 {
		w = math.Min(w, 0.25*pitch)
	}
	for ri, r := range rows {
		feet[ri] = footAt(ink, fall, r.baseY, w, pxX)
	}
	return feet
}

// fitStack reads the stack of pulses between the strokes rise and fall
// at a pulse height of hMM: a row whose two strokes cover it from its foot
// (its baseline where no foot was found) up to hMM above has a top there
// if a flat line joins the strokes within stackTol of that height, and
// is an unexplained miss otherwise (stackRung). Strokes that run on above
// the highest top (by more than 2 mm over the next 2 mm) are one
// unexplained miss more: at a pulse height that is too small, the pulses
// above the stack's top row are left over. (At a 15 mm pitch every row's
// 20 mm top lies 5 mm above the next row's foot, so 5 mm/mV fits every
// row but the bottom one.)
func fitStack(ink *image.Gray, rows []rowInfo, rise, fall pulseEdge, feet []float64, hMM, pxY float64) stackFit {
	f := stackFit{rise: rise, fall: fall, hMM: hMM, feet: feet, tops: make([]float64, len(rows))}
	tol := stackTol(hMM) * pxY
	highest := math.Inf(1)
	for ri, r := range rows {
		f.tops[ri] = math.NaN()
		base, t := feet[ri], tol
		if math.IsNaN(base) {
			base, t = r.baseY, math.Max(tol, 0.5*pxY)
		}
		y, covered, ok := stackRung(ink, rise, fall, base, hMM, t, pxY)
		switch {
		case ok:
			f.tops[ri] = y
			f.count++
			highest = math.Min(highest, y)
		case covered:
			f.unexplained++
		}
	}
	if f.count > 0 {
		y0, y1 := int(highest-4*pxY), int(highest-2*pxY)
		if colCover(ink, int(rise.centre()), y0, y1) >= 0.9 && colCover(ink, int(fall.centre()), y0, y1) >= 0.9 {
			f.unexplained++
		}
	}
	return f
}

// rowPitch is the median spacing of consecutive rows' baselines, px (0
// for fewer than two rows).
func rowPitch(rows []rowInfo) float64 {
	var sp []float64
	for i := 1; i < len(rows); i++ {
		sp = append(sp, math.Abs(rows[i].baseY-rows[i-1].baseY))
	}
	if len(sp) == 0 {
		return 0
	}
	sort.Float64s(sp)
	return sp[(len(sp)-1)/2]
}

// stackFall is the falling line's centre to a fraction of a pixel
// (grid.LineCentre) over the lower 3 mm of the stacked pulses, clear of
// their feet: the median over the rows with a top. The columns found to
// be covered (colCover allows a pixel either side) only give it to the
// half pixel, 1.7 ms at 300 dpi and 25 mm/s, which on a QRS stroke
// drawn at 20 mm/mV is a tenth of a millivolt.
func stackFall(ink *image.Gray, rows []rowInfo, fall pulseEdge, tops []float64, pxY float64) float64 {
	var xs []float64
	for ri, r := range rows {
		if math.IsNaN(tops[ri]) {
			continue
		}
		if x, ok := grid.LineCentre(ink, fall.x0-2, fall.x1+2, int(r.baseY-3*pxY), int(r.baseY-0.5*pxY), true); ok {
			xs = append(xs, x)
		}
	}
	if len(xs) == 0 {
		return fall.centre()
	}
	sort.Float64s(xs)
	return xs[len(xs)/2]
}

// countPulseMM is the number of rows whose own pulse was measured
// (pulseMM > 0).
func countPulseMM(rows []rowInfo) int {
	k := 0
	for _, r := range rows {
		if r.pulseMM > 0 {
			k++
		}
	}
	return k
}

// stackRows returns the rows of a page whose pulses were read as a stack
// (findStackedPulses): the rows from the first to the last with a pulse,
// without those that sit within 0.6 of the stack's pitch from a row with
// a pulse (profile peaks of the complexes tangled between two rows), and
// beyond them the rows that continue the stack at its pitch (0.75–1.4
// pitches from the last row kept) over the pulse rows' stretch of paper
// (ending within 5 mm of them, starting no later than 25 mm after them,
// and read as a continuous line, not the looser reading that header text
// crossed by tall complexes passes): trace rows whose pulse was not read.
// The top row of a 12 × 1 page at 20 mm/mV has its pulse's top in the
// header and the bottom rows theirs among the complexes of the rows
// above (overlap 12x1 seed 9: rows I, V5 and V6 were dropped).
func stackRows(rows []rowInfo, pxX float64) []rowInfo {
	tops := make([]float64, len(rows))
	for i, r := range rows {
		tops[i] = math.NaN()
		if r.hasPulse {
			tops[i] = r.baseY
		}
	}
	if evenRows(rows) {
		// Every row read as a continuous line at an even pitch: no
		// profile peak is a tangle, and the rows whose pulses were not
		// read are trace rows too.
		return rows
	}
	near := nearStack(rows, tops)
	lo, hi := math.Inf(1), math.Inf(-1)
	var x0s, x1s, ys []float64
	for _, r := range rows {
		if r.hasPulse {
			lo, hi = math.Min(lo, r.baseY), math.Max(hi, r.baseY)
			x0s, x1s, ys = append(x0s, float64(r.x0)), append(x1s, float64(r.x1)), append(ys, r.baseY)
		}
	}
	keep := make([]bool, len(rows))
	for i, r := range rows {
		keep[i] = r.baseY >= lo && r.baseY <= hi && (r.hasPulse || !near[i])
	}
	if len(ys) >= 2 {
		var sp []float64
		for k := 1; k < len(ys); k++ {
			sp = append(sp, ys[k]-ys[k-1])
		}
		sort.Float64s(sp)
		sort.Float64s(x0s)
		sort.Float64s(x1s)
		pitch, refX0, refX1 := sp[(len(sp)-1)/2], x0s[len(x0s)/2], x1s[len(x1s)/2]
		spans := func(r rowInfo) bool {
			return !r.loose && math.Abs(float64(r.x1)-refX1) <= 5*pxX && float64(r.x0) <= refX0+25*pxX
		}
		// Outwards from the stack's first pulse row (upwards) and its
		// last (downwards); rows run top to bottom.
		first, last := -1, -1
		for i, r := range rows {
			if r.hasPulse {
				if first < 0 {
					first = i
				}
				last = i
			}
		}
		for _, e := range [2]struct{ from, step int }{{first, -1}, {last, 1}} {
			edge := rows[e.from].baseY
			for k := e.from + e.step; k >= 0 && k < len(rows); k += e.step {
				d := math.Abs(rows[k].baseY - edge)
				if d < 0.75*pitch {
					continue
				}
				if d > 1.4*pitch || !spans(rows[k]) {
					break
				}
				keep[k], edge = true, rows[k].baseY
			}
		}
	}
	var out []rowInfo
	for i, r := range rows {
		if keep[i] {
			out = append(out, r)
		}
	}
	return out
}

// missedRows counts the rows without a top (NaN in tops) between the
// first and the last row with one that sit at least 0.6 of the stack's
// pitch (the median spacing of consecutive rows with a top) from every
// row with a top: trace rows whose pulse was not read. Rows above and
// below the stack are header and footer text, and profile peaks between
// two trace rows are tangles of their complexes (dropCrowdedRows).
func missedRows(rows []rowInfo, tops []float64) int {
	miss := 0
	for i, n := range nearStack(rows, tops) {
		if !n && math.IsNaN(tops[i]) && inStack(rows, tops, i) {
			miss++
		}
	}
	return miss
}

// inStack reports whether row i lies between the first and the last row
// with a top.
func inStack(rows []rowInfo, tops []float64, i int) bool {
	lo, hi := math.Inf(1), math.Inf(-1)
	for ri, y := range tops {
		if !math.IsNaN(y) {
			lo, hi = math.Min(lo, rows[ri].baseY), math.Max(hi, rows[ri].baseY)
		}
	}
	return rows[i].baseY >= lo && rows[i].baseY <= hi
}

// nearStack reports for each row without a top whether it lies within 0.6
// of the stack's pitch (the median spacing of consecutive rows with a top)
// of a row with one.
func nearStack(rows []rowInfo, tops []float64) []bool {
	near := make([]bool, len(rows))
	var ys, sp []float64
	for ri, y := range tops {
		if !math.IsNaN(y) {
			if len(ys) > 0 {
				sp = append(sp, rows[ri].baseY-ys[len(ys)-1])
			}
			ys = append(ys, rows[ri].baseY)
		}
	}
	if len(sp) == 0 {
		return near
	}
	sort.Float64s(sp)
	pitch := sp[(len(sp)-1)/2]
	for ri, r := range rows {
		if !math.IsNaN(tops[ri]) {
			continue
		}
		for _, y := range ys {
			if math.Abs(y-r.baseY) < 0.6*pitch {
				near[ri] = true
				break
			}
		}
	}
	return near
}

// evenRows reports whether the rows form a regular ladder of traces: at
// least four, every one read as a continuous line (not the looser
// reading) over most of the widest row's stretch (0.8), ending with it
// (within 2 % of its width),
// and every spacing within evenTol of the median spacing. Profile peaks
// of complexes tangled between two rows break it: they are not continuous
// lines and they halve a spacing. On a 12 × 1 page of real records at
// 20 mm/mV (LUDB record 4) the stack's pulses were read on 4 of the 12
// rows, whose spacings (1, 4 and 5 row pitches) made the others look like
// tangles; the 12 rows themselves are evenly spaced.
func evenRows(rows []rowInfo) bool {
	if len(rows) < 4 {
		return false
	}
	widest, end := 0, 0
	for _, r := range rows {
		widest, end = max(widest, r.x1-r.x0), max(end, r.x1)
	}
	var sp []float64
	for i, r := range rows {
		if r.loose || float64(r.x1-r.x0) < 0.8*float64(widest) || float64(end-r.x1) > 0.02*float64(widest) {
			return false
		}
		if i > 0 {
			sp = append(sp, r.baseY-rows[i-1].baseY)
		}
	}
	s := append([]float64(nil), sp...)
	sort.Float64s(s)
	med := s[(len(s)-1)/2]
	for _, d := range sp {
		if math.Abs(d-med) > evenTol*med {
			return false
		}
	}
	return true
}

// evenTol is the departure from the median spacing, as a fraction of it,
// within which rows count as evenly spaced (a row's profile peak sits a
// millimetre or two off its line where its complexes lean one way).
const evenTol = 0.2
