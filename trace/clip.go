package trace

import (
	"fmt"
	"image"
	"math"
)

// Complexes taller than the paper. A printer cuts a stroke off where the
// paper ends: an R wave whose apex lies beyond the sheet runs along its
// edge for as long as it is beyond, at every beat (a 20 mm/mV page's V4,
// 3.7 mV tall on the top row, ran flat along the edge 0.8 mV below its
// apex for 16 ms). clippedColumns finds such stretches; the path there is
// the edge, not the lead. extrapolateClipped fits one parabola to the
// path just before and just after a stretch and takes it past the edge,
// and marks the stretch (Panel.clipped) so that it counts as not read
// from the lead's own ink (contestedColumns). The apex is an estimate
// and a cautious one: for a Gaussian wave cut at 80 % of its height the
// parabola restores about half of the cut (TestClipApex; the two
// strokes' straight lines, tried first, overshot by 15–20 % of the
// wave's height and put a 3.75 mV V4 at 4.8 mV), so the record says
// where it was extrapolated. The steepest synthetic R waves, cut a few
// columns from their apex, have flanks too steep and far apart for a
// parabola to turn past the edge; those stretches are left as read, and
// count as not read from the lead's own ink all the same, so that the
// limb-lead checks do not take them for a clear reading (overlap 6x2 seed
// 3, I cut at every beat: the others could then be re-read, aVR 15.8 →
// 25.6 and aVL 15.2 → 23.9 dB). Where it
// applies (12x1 seed 1 lead I, 17 complexes, up to 0.67 mV past the
// edge: 5.8 → 6.9 dB) it moves few leads of the 168-page evaluation.

// clipFitPx is how many columns on each side of a cut stretch the
// parabola is fitted to.
const clipFitPx = 3

// extrapolateClipped replaces, in the paths of panels, the points of
// each stretch that ran along the page's edge (clippedColumns) by the
// parabola through the path's points on both sides (clipApex), where it
// turns within the stretch, towards the edge.
// It reports per panel whether its path changed and, for those, how far
// past the edge its extrapolated complexes reach at most, px.
func extrapolateClipped(panels []Panel, ink *image.Gray) (changed []bool, pastPx []float64, stretches []int) {
	changed, pastPx, stretches = make([]bool, len(panels)), make([]float64, len(panels)), make([]int, len(panels))
	x0, spans, runs := pathRuns(panels, ink)
	top, bot := clippedColumns(x0, runs, spans, ink)
	for i := range panels {
		for _, up := range [2]bool{true, false} {
			m := top[i]
			if !up {
				m = bot[i]
			}
			for k0 := 0; k0 < len(m); k0++ {
				if !m[k0] {
					continue
				}
				k1 := k0
				for k1+1 < len(m) && m[k1+1] {
					k1++
				}
				if path, past, ok := clipApex(panels[i].Path, float64(x0[i]+k0), float64(x0[i]+k1), up); ok {
					panels[i].Path = path
					panels[i].clipped = append(panels[i].clipped, [2]int{x0[i] + k0, x0[i] + k1})
					changed[i] = true
					pastPx[i] = math.Max(pastPx[i], past)
					stretches[i]++
				}
				k0 = k1
			}
		}
	}
	return changed, pastPx, stretches
}

// clipApex extrapolates one stretch [xa, xb] (image columns) of path that
// ran along the page's top edge (up) or bottom edge. It returns the new
// path (a copy), how far its apex reaches past the edge (the stretch's
// outermost point as read), px, and whether it applied: the parabola
// must turn within the stretch, towards the edge, and past it.
func clipApex(path []Point, xa, xb float64, up bool) ([]Point, float64, bool) {
	// Least squares y = c0 + c1·u + c2·u², u = x − xm, through the points
	// of the clipFitPx columns on each side.
	xm := (xa + xb) / 2
	var m [3][4]float64
	nl, nr := 0, 0
	for _, p := range path {
		left := p.X >= xa-clipFitPx && p.X < xa
		right := p.X > xb && p.X <= xb+clipFitPx
		if !left && !right {
			continue
		}
		if left {
			nl++
		} else {
			nr++
		}
		u := p.X - xm
		f := [3]float64{1, u, u * u}
		for r := range 3 {
			for c := range 3 {
				m[r][c] += f[r] * f[c]
			}
			m[r][3] += f[r] * p.Y
		}
	}
	if nl < 2 || nr < 2 {
		return nil, 0, false
	}
	for c := range 3 { // Gauss–Jordan with partial pivoting
		piv := c
		for r := c + 1; r < 3; r++ {
			if math.Abs(m[r][c]) > math.Abs(m[piv][c]) {
				piv = r
			}
		}
		m[c], m[piv] = m[piv], m[c]
		if math.Abs(m[c][c]) < 1e-12 {
			return nil, 0, false
		}
		for r := range 3 {
			if r != c {
				f := m[r][c] / m[c][c]
				for k := c; k < 4; k++ {
					m[r][k] -= f * m[c][k]
				}
			}
		}
	}
	c0, c1, c2 := m[0][3]/m[0][0], m[1][3]/m[1][1], m[2][3]/m[2][2]
	// A peak (y smallest at the vertex) at the top edge, a trough at the
	// bottom.
	if up && c2 <= 0 || !up && c2 >= 0 {
		return nil, 0, false
	}
	if uv := -c1 / (2 * c2); uv < xa-xm-1 || uv > xb-xm+1 {
		return nil, 0, false
	}
	out := append([]Point(nil), path...)
	// The edge: the stretch's outermost point as read.
	edge := math.Inf(1)
	if !up {
		edge = math.Inf(-1)
	}
	for _, p := range path {
		if p.X >= xa && p.X <= xb {
			if up {
				edge = math.Min(edge, p.Y)
			} else {
				edge = math.Max(edge, p.Y)
			}
		}
	}
	past := 0.0
	for k, p := range out {
		if p.X < xa || p.X > xb {
			continue
		}
		u := p.X - xm
		y := c0 + c1*u + c2*u*u
		if up {
			y = math.Min(y, p.Y)
			past = math.Max(past, edge-y)
		} else {
			y = math.Max(y, p.Y)
			past = math.Max(past, y-edge)
		}
		out[k].Y = y
	}
	// A parabola turning short of the edge (flanks too steep and far
	// apart for its curve) restores nothing: the stretch is left as read.
	if past < 1 {
		return nil, 0, false
	}
	return out, past, true
}

// clipWarning says where a lead's complexes were extrapolated past the
// page's edge.
func clipWarning(p *Panel, n int, pastPx, pxPerMV float64) string {
	return fmt.Sprintf("lead %v: %d complexes ran along the page's edge (from %.2f s); their apexes are extrapolated past it by a parabola through the strokes on both sides, by up to %.2f mV", p.Lead, n, p.T0, pastPx/math.Abs(pxPerMV))
}
