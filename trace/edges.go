package trace

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/stat"
)

// Where two columns of a 3 × 4 page meet, the printer draws a short
// vertical separator tick, one lead's trace stops and the next one's
// starts, all in the same few pixel columns: the last samples of one lead
// and the first of the next were read off strokes that are not theirs
// (the path climbs the tick, or takes the other lead's first complex
// where it starts with a steep stroke). On the clean corpus pages these
// few milliseconds held 40–90 % of a short lead's error. The path is
// therefore cut back just short of each column boundary and continued to
// it along the trace's own slope just beside it.
//
// The zone and fit lengths were chosen on the clean and scan pages of
// layouts 3x4, 3x4+3 and cabrera-3x4 (seeds 1–2, 12 pages): median SNR
// clean 25.9 → 27.4 dB (p10 20.4 → 25.3), scan 23.0 → 23.9 dB; zones of
// 0.2–0.7 pen widths and fits of 0.2–0.5 mm scored between the two, a
// fit of 0.15 mm (two columns) changed nothing.

// boundaryZonePen is the half-width of the stretch replaced at a column
// boundary, in pen widths.
const boundaryZonePen = 0.4

// boundaryFitMM is the length of trace beside the zone whose slope
// continues the path through it, mm (0.25 mm = 10 ms at 25 mm/s: short
// enough that a steep QRS stroke is still straight over it).
const boundaryFitMM = 0.25

// trimAtBoundaries returns pts (a panel's path from x0 to x1 px, sorted
// by x) with the stretch within zone px of x0 (when left: another column
// ends there) and of x1 (when right: another column starts there)
// replaced by the straight continuation of the path's points over the fit
// px beside the zone. The replacement points are one pixel apart and reach
// x0 and x1. An edge is left as it is where too few points lie beside its
// zone to fit a slope.
func trimAtBoundaries(pts []Point, x0, x1 float64, left, right bool, zone, fit float64) []Point {
	if len(pts) < 2 || zone <= 0 {
		return pts
	}
	if cut := x1 - zone; right {
		if a, b, ok := lineFit(pts, cut-fit, cut); ok {
			k := len(pts)
			for k > 0 && pts[k-1].X > cut {
				k--
			}
			out := append([]Point(nil), pts[:k]...)
			for x := math.Floor(cut) + 1; x <= x1; x++ {
				out = append(out, Point{x, a + b*x})
			}
			pts = out
		}
	}
	if cut := x0 + zone; left {
		if a, b, ok := lineFit(pts, cut, cut+fit); ok {
			k := 0
			for k < len(pts) && pts[k].X < cut {
				k++
			}
			var head []Point
			for x := math.Ceil(x0); x < cut; x++ {
				head = append(head, Point{x, a + b*x})
			}
			pts = append(head, pts[k:]...)
		}
	}
	return pts
}

// lineFit fits y = a + b·x by least squares (gonum's stat.LinearRegression)
// to the points with x in [lo, hi]; ok is false with fewer than three
// points or no spread in x.
func lineFit(pts []Point, lo, hi float64) (a, b float64, ok bool) {
	var xs, ys []float64
	for _, p := range pts {
		if p.X >= lo && p.X <= hi {
			xs, ys = append(xs, p.X), append(ys, p.Y)
		}
	}
	if len(xs) < 3 || slices.Min(xs) == slices.Max(xs) {
		return 0, 0, false
	}
	a, b = stat.LinearRegression(xs, ys, nil, false)
	return a, b, true
}
