package trace

import (
	"image"
	"math"
	"sort"
)

// rowRelief is the share of a row's traced columns (from x0 to x1) whose
// ink nearest the baseline (inkCentres, within h px of it) lies more than
// 0.75 mm from the row's local level, the median over a 20 mm stretch
// (a phone photo's sheet curls slowly). A printed trace leaves its line
// for every complex (QRS strokes, T waves of a few tenths of a mV: a few
// percent of the columns at least), while the edge of the sheet, a rule
// or a line of dashes left in the ink stays on it. NaN when fewer than a
// quarter of the columns hold ink.
func rowRelief(ink *image.Gray, r rowInfo, h, pxX, pxY float64) float64 {
	w := r.x1 - r.x0
	if w <= 0 {
		return math.NaN()
	}
	c := make([]float64, w)
	inkCentres(c, ink, r.x0, int(r.baseY-h), int(r.baseY+h), r.baseY)
	chunk := max(8, int(20*pxX))
	var buf []float64
	dev, n := 0, 0
	for a := 0; a < w; a += chunk {
		z := min(w, a+chunk)
		buf = buf[:0]
		for _, v := range c[a:z] {
			if !math.IsNaN(v) {
				buf = append(buf, v)
			}
		}
		if len(buf) == 0 {
			continue
		}
		sort.Float64s(buf)
		med := buf[len(buf)/2]
		for _, v := range buf {
			n++
			if math.Abs(v-med) > 0.75*pxY {
				dev++
			}
		}
	}
	if 4*n < w {
		return math.NaN()
	}
	return float64(dev) / float64(n)
}

// minRelief is the smallest rowRelief of a trace row: the flattest leads
// of the corpus (lead III and aVF of a 12 × 1 fax page, a few tenths of a
// mV) measured 0.03–0.08, the bottom edge of a photographed sheet 0.000
// (a project measurement).
const minRelief = 0.01

// dropFlatRows removes the rows without a calibration pulse whose ink
// stays on one line (rowRelief below minRelief), or nearly so while
// filling its band like a solid region. Each row's band reaches
// 6 mm, at most 0.45 of the distance to a neighbouring row, so that the
// neighbours' complexes stay out of it.
func dropFlatRows(ink *image.Gray, rows []rowInfo, pxX, pxY float64) []rowInfo {
	out := make([]rowInfo, 0, len(rows))
	for i, r := range rows {
		if !r.hasPulse {
			h := 6 * pxY
			if i > 0 {
				h = math.Min(h, 0.45*(r.baseY-rows[i-1].baseY))
			}
			if i+1 < len(rows) {
				h = math.Min(h, 0.45*(rows[i+1].baseY-r.baseY))
			}
			// NaN (too little ink to tell) keeps the row.
			rel := rowRelief(ink, r, h, pxX, pxY)
			if rel < minRelief {
				continue
			}
			// The edge of a dark region (the desk around a photographed
			// sheet, left in the ink) is nearly flat and fills the band
			// below it: relief 0.07 and fill 0.60 over ±3 mm, against
			// relief ≥ 0.15 where the traces of 20 mm/mV pages fill up
			// to 0.35, and fill ≤ 0.21 on flat traces (a project
			// measurement).
			if rel < 0.1 && bandFill(ink, int(r.baseY-3*pxY), int(r.baseY+3*pxY), r.x0, r.x1) > 0.35 {
				continue
			}
		}
		out = append(out, r)
	}
	return out
}

// dropCrowdedRows removes rows that sit closer than 0.6 of the page's row
// pitch (the median spacing) to both of their neighbours: rows are
// printed at a regular pitch (common practice), and a profile peak
// between two rows is a tangle of their tall complexes (12 × 1 at
// 20 mm/mV). A row with a calibration pulse is never removed. It needs
// four rows to know the pitch.
func dropCrowdedRows(rows []rowInfo) []rowInfo {
	if len(rows) < 4 {
		return rows
	}
	sp := make([]float64, 0, len(rows)-1)
	for i := 1; i < len(rows); i++ {
		sp = append(sp, rows[i].baseY-rows[i-1].baseY)
	}
	sort.Float64s(sp)
	pitch := sp[(len(sp)-1)/2]
	out := make([]rowInfo, 0, len(rows))
	for i, r := range rows {
		near := func(j int) bool {
			return j >= 0 && j < len(rows) && math.Abs(rows[j].baseY-r.baseY) < 0.6*pitch
		}
		if !r.hasPulse && near(i-1) && near(i+1) {
			continue
		}
		out = append(out, r)
	}
	return out
}
