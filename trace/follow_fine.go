package trace

import (
	"image"
	"math"
)

// The fine reading. pathPoints bounds the centre line of a steep stroke
// by the runs of the columns the pen reaches, and needs the pen's radius
// for it. On a page whose trace carries noise (at 20 mm/mV a 20 µV noise
// is a 0.4 mm jitter) every run is tall, even the thinnest, and the
// radius taken from the runs is inflated: twice the pen's on the overlap
// corpus, where it held each QRS apex 4–6 mm (0.2–0.3 mV) low and cut
// the troughs alike. The row's calibration pulse is drawn with the same
// pen and without noise; its flat top gives the pen's own width
// (rowInfo.penPx). With it, and the runs' edges interpolated between
// columns (fracBounds in pathPoints), the bounds are tight on steep
// strokes and the apexes keep their height.
//
// The inflated radius also did some good: where another row's stroke
// merges with the trace, the wide bounds kept the path's point near the
// trace's level, and the machinery that untangles rows (separateRows,
// the stroke lenses, the limb-lead checks) was measured with those
// points. So the fine reading is kept beside the guarded one
// (pathResult.fine, keyed by the guarded point) and replaces it only at
// the end of the first pass, in the columns where no other row's stroke
// meets the panel's (contestedColumns), and only for points the
// untangling did not move. (Keeping the guarded reading also within 0.25,
// 0.5, 1 or 2 mm of those columns scored lower on the overlap pages of
// records 1–3, and 1 mm on those of records 4–9.)
//
// Measured (tracelift eval -n 3 --seed 1, 168 pages, against the guarded
// reading alone, with clip.go): overlap median 14.5 → 15.3 dB, mean
// 12.5 → 14.1, 86 leads up by 0.5 dB or more and 8 down, most leads of
// 3 × 4 pages 19 → 25 dB; photo 37 up, none down, leads under 15 dB
// 46 → 22; scan and penmarks 55 up, none down; clean, gray, fax and
// lowres, whose runs are not made tall by noise, within 0.7 dB. On records 4–9 (126 pages
// of overlap, photo and scan): overlap median 15.5 → 15.9 dB, mean 14.4
// → 15.4, scan leads under 15 dB 103 → 76. Used only where the runs are
// noise-tall (median run over 0.5 mm), the path's thinnest runs are at
// least the pulse's width (grey scans break faint runs into shorter
// pieces) and the pulse's width is a pen's (0.15–0.6 mm; printer pens
// are 0.2–0.4 mm: common practice, from memory).

// finePen reports whether the fine reading applies to a path: the pulse's
// width pulsePen, px, is a pen's at pxPerMM px/mm, the median run pen is
// noise-tall and the path's thinnest runs penLo are at least the pulse's.
func finePen(pulsePen, pen, penLo, pxPerMM float64) bool {
	return pulsePen >= 0.15*pxPerMM && pulsePen <= 0.6*pxPerMM && pen > 0.5*pxPerMM && penLo >= pulsePen
}

// applyFine replaces, in each panel's path, the points that have a fine
// reading in fines[i] (nil: none) by it, except in the columns where the
// panel's stroke meets another row's (contestedColumns with contestGapMM
// at pxY px/mm). It reports per panel whether its path changed; changed
// paths are new slices.
func applyFine(panels []Panel, fines []map[[2]float64]float64, ink *image.Gray, pxY float64) []bool {
	changed := make([]bool, len(panels))
	any := false
	for _, f := range fines {
		any = any || f != nil
	}
	if !any {
		return changed
	}
	// The columns ending on the page's edge (clippedColumns) keep the
	// fine reading: the edge cuts the lead's own stroke, which the fine
	// reading reads best up to it.
	x0s, _, marks := contestedColumnsClip(panels, contestGapMM*pxY, ink, false)
	for i := range panels {
		fine := fines[i]
		if fine == nil {
			continue
		}
		near := marks[i]
		var path []Point
		for k, q := range panels[i].Path {
			if c := int(math.Round(q.X)) - x0s[i]; c >= 0 && c < len(near) && near[c] {
				continue
			}
			if y, ok := fine[[2]float64{q.X, q.Y}]; ok && y != q.Y {
				if path == nil {
					path = append([]Point(nil), panels[i].Path...)
				}
				path[k].Y = y
			}
		}
		if path != nil {
			panels[i].Path, changed[i] = path, true
		}
	}
	return changed
}
