package trace

import (
	"image"
	"math"
	"sort"
)

// fillPitchGaps returns rows with a placeholder in every gap between
// found rows that spans a whole number (2, 3, …) of the page's row pitch,
// taken as the median spacing of the rows: rows are printed at a regular
// pitch (common practice), and a row whose ink a fax dropped must keep its
// place so the rows below keep their leads. The baselines of found rows
// scatter by a few percent of the pitch on such pages (profile peaks of
// broken traces), so a gap counts when its spacing per row is within 15 %
// of the pitch. Placeholders carry their upper neighbour's extent and
// start, and no pulse, ticks or ink columns.
func fillPitchGaps(rows []rowInfo) []rowInfo {
	if len(rows) < 3 {
		return rows
	}
	var sp []float64
	for i := 1; i < len(rows); i++ {
		sp = append(sp, rows[i].baseY-rows[i-1].baseY)
	}
	sort.Float64s(sp)
	pitch := sp[(len(sp)-1)/2]
	if !(pitch > 0) {
		return rows
	}
	out := []rowInfo{rows[0]}
	for i := 1; i < len(rows); i++ {
		a, b := rows[i-1], rows[i]
		g := b.baseY - a.baseY
		k := math.Round(g / pitch)
		if k >= 2 && math.Abs(g/k-pitch) <= 0.15*pitch {
			for j := 1; j < int(k); j++ {
				ph := a
				ph.baseY = a.baseY + float64(j)*g/k
				ph.zeroY = math.NaN()
				ph.hasPulse, ph.pulseMM, ph.score, ph.ticks, ph.cols = false, 0, 0, nil, nil
				out = append(out, ph)
			}
		}
		out = append(out, b)
	}
	return out
}

// bandFill is the fraction of the pixels of rows [y0, y1] and columns
// [x0, x1) of ink that are ink: a trace crossing a 6 mm band fills a few
// tenths of it at most, a dark region left in the ink fills it all.
func bandFill(ink *image.Gray, y0, y1, x0, x1 int) float64 {
	b := ink.Rect
	y0, y1 = max(y0, b.Min.Y), min(y1, b.Max.Y-1)
	x0, x1 = max(x0, b.Min.X), min(x1, b.Max.X)
	if y0 > y1 || x0 >= x1 {
		return 0
	}
	n := 0
	for y := y0; y <= y1; y++ {
		row := ink.Pix[(y-b.Min.Y)*ink.Stride+(x0-b.Min.X) : (y-b.Min.Y)*ink.Stride+(x1-b.Min.X)]
		for _, v := range row {
			if v >= inkThreshold {
				n++
			}
		}
	}
	return float64(n) / float64((y1-y0+1)*(x1-x0))
}
