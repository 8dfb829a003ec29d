package trace

import (
	"image"
	"math"
	"slices"

	"gonum.org/v1/gonum/stat"
)

// apexesInBlocks reads the apexes of the two traces of neighbouring rows
// whose QRS strokes merge into one block of ink: the upper row's deep S
// wave (a V) coming down over the lower row's tall R wave (a Λ) rising in
// the same columns.
//
// Per column the block is one run of ink, from the top of the V's arms to
// the foot of the Λ's, and neither path can tell where inside it its own
// stroke turns: both level off part-way (overlap 3x4+1 seed 2: aVL read
// 0.67 of a 1.34 mV R wave at every beat). The arms outside the block
// tell it: scanning the image rows from 1 mm inside the V towards the
// block, its two arms stand apart with paper between them until the Λ
// joins them; the straight lines through the arms' centres (to a fraction
// of a pixel, from the ink's grey levels) meet where the pen turned, the
// V's trough, whatever ink the Λ adds there. Scanned from the Λ's side,
// its arms meet at its apex. A meeting point on paper (straight arms
// meet beyond a rounded turn) is moved back along its column onto the
// ink.
//
// It applies where both paths lie on one run of ink over at most
// blockMaxMM of columns and on separate runs either side, the lower path
// rising into the block and falling out of it and the upper one the
// reverse, each blockDipMM or more into its wave, and only where a path
// is taken blockGainMM further than it went. Telling where the arms'
// gap closes instead (the other stroke filling it) was worse: a steep
// stroke's arms merge by themselves a pen's width times their slope short
// of their turn, up to 7 mm at 10 mm/mV, and 17 leads of the 10 mm/mV
// pages of records 1–9 lost 0.5–7 dB.
//
// Records 1–9 under every condition (504 pages): 38 leads up by 0.5–7 dB
// (overlap 3x4+1 seed 5 aVL 6.9 → 13.9, 3x4 seed 1 aVL 11.6 → 16.2,
// 3x4+3 rhythm V1 on scan, pen-mark and photo pages of record 2 +4 dB),
// 15 down (12 × 1 aVR and aVL at 10 mm/mV, most of them on fax pages,
// whose black-and-white ink gives the arms no sub-pixel centres, by
// 0.5–1.6 dB; photo 12 × 1 seed 2 aVR 23.0 → 11.9 dB, clean 12 × 1 seed
// 8 V2 17.2 → 14.3 dB); no swap more or less; overlap median 14.3 →
// 14.5 dB (records 1–3: 12.6 → 13.3 dB), the other conditions' medians
// within 0.1 dB.
//
// Rows less than minOrderPitchMV apart (pxPerMV px per mV) are left as
// they are (strokes there cross several rows).
func apexesInBlocks(ink *image.Gray, pj [][]panelJob, pxY, pxPerMV float64) {
	for p := range neighbourPanels(pj, pxPerMV, 8) {
		readBlocks(ink, &pj[p.r][p.a], &pj[p.r+1][p.b], p.x0, p.x1, pxY)
	}
}

// blockMaxMM is the widest block, mm of x, apexesInBlocks reads (the
// lensMaxMM of untangleCrossings: a wide QRS complex); blockEdgeMM how far
// inside both panels it must lie (lensEdgeMM).
//
// blockDipMM is how far, mm, each path must stand from its baseline in and
// beside the block.
//
// blockGainMM is how much further, mm, a path must be taken (a small
// complex touching a neighbour's is read as it was followed); blockSideMM
// how far, mm, the scanned rows reach either side of the block; blockFitMM
// the fewest rows, mm, the arms' lines are fitted on (the last half of
// the rows where they stand apart otherwise).
const (
	blockSideMM = 1.0
	blockFitMM  = 1.0
	blockGainMM = 2.0
	blockDipMM  = 1.0
	blockMaxMM  = 3.0
	blockEdgeMM = 1.0
)

func readBlocks(ink *image.Gray, U, L *panelJob, x0, x1 int, pxY float64) {
	n := x1 - x0
	yu := columnLevels(U.pr.points, x0, n)
	yl := columnLevels(L.pr.points, x0, n)
	merged := make([]bool, n)
	for i := range n {
		merged[i] = yu[i] == yu[i] && yl[i] == yl[i] && yu[i] <= yl[i]+1 && inkBetween(ink, x0+i, math.Min(yu[i], yl[i]), math.Max(yu[i], yl[i]))
	}
	maxW := int(blockMaxMM * pxY)
	edge := int(blockEdgeMM * pxY)
	for i := 0; i < n; i++ {
		if !merged[i] {
			continue
		}
		j := i
		for j < n && merged[j] {
			j++
		}
		// The block is [i, j); the paths are apart at i−1 and j.
		a, b := i, j
		i = j
		if a < edge || b > n-edge || b-a > maxW || a == 0 || b >= n {
			continue
		}
		if yu[a-1] != yu[a-1] || yl[a-1] != yl[a-1] || yu[b] != yu[b] || yl[b] != yl[b] {
			continue
		}
		m := (a + b - 1) / 2
		// A V over a Λ: the upper path comes down into the block from
		// above it and leaves upwards; the lower path the reverse.
		// Both in their waves: the upper path blockDipMM or more below
		// its baseline there, the lower one as far above its own (a flat
		// trace that a neighbour's apex touches is no V: there the
		// neighbour's arms close by themselves).
		dip := blockDipMM * pxY
		if !(yu[a-1] < yu[m] && yu[b] < yu[m] && yl[a-1] > yl[m] && yl[b] > yl[m]) ||
			math.Min(math.Min(yu[a-1], yu[b]), yu[m]) < U.base+dip || math.Max(math.Max(yl[a-1], yl[b]), yl[m]) > L.base-dip {
			continue
		}
		side := int(math.Ceil(math.Max(2*U.pr.penPx, blockSideMM*pxY)))
		lo, hi := x0+a-side, x0+b-1+side
		// The V's arms, scanned down from blockDipMM below the upper
		// baseline, meet at its trough; the Λ's, scanned up, at its apex.
		mid := int(math.Round((yu[m] + yl[m]) / 2))
		fit := max(4, int(math.Round(blockFitMM*pxY)))
		troughX, yv, ok1 := armsMeet(ink, lo, hi, int(math.Ceil(U.base+dip)), mid, +1, fit)
		apexX, ya, ok2 := armsMeet(ink, lo, hi, int(math.Floor(L.base-dip)), mid, -1, fit)
		if !ok1 || !ok2 || yv > L.base || ya < U.base {
			continue
		}
		// Straight arms meet beyond a rounded turn: a point on paper is
		// moved back along its column onto the ink.
		yv = ontoInk(ink, troughX, yv, -1, mid)
		ya = ontoInk(ink, apexX, ya, +1, mid)
		// Only further than the paths went.
		xa, xb := float64(x0+a)-0.5, float64(x0+b)-0.5
		gain := blockGainMM * pxY
		if lTop, _ := yRange(L.pr.points, xa, xb); ya < lTop-gain {
			L.pr.points = throughPoint(L.pr.points, xa, xb, Point{apexX, ya})
		}
		if _, uBot := yRange(U.pr.points, xa, xb); yv > uBot+gain {
			U.pr.points = throughPoint(U.pr.points, xa, xb, Point{troughX, yv})
		}
	}
}

// armsMeet scans the image rows from y0 towards end (dir +1: down, −1:
// up) over the columns [lo, hi]: from the first row where their ink
// stands in two runs with paper between them (the two arms of a V, or of
// a Λ) to the last before it does not, or before one run grows wider
// (another stroke joining it). The arms' ink-weighted centres over the
// last half of those rows (fitRows at least), each fitted by a straight
// line in y (gonum's stat.LinearRegression), meet at the stroke's turning
// point (x, y): where the pen turned, whatever other stroke merges with
// the arms beyond. ok is false with fewer rows, arms that do not close
// in, or a meeting point behind the scan.
func armsMeet(ink *image.Gray, lo, hi, y0, end, dir, fitRows int) (x, y float64, ok bool) {
	lo, hi = max(lo, ink.Rect.Min.X), min(hi, ink.Rect.Max.X-1)
	var ys, c1, c2, widths []float64
	width := 0.0
	for yy := y0; (dir < 0 && yy >= end) || (dir > 0 && yy <= end); yy += dir {
		if yy < ink.Rect.Min.Y || yy >= ink.Rect.Max.Y {
			return 0, 0, false
		}
		row := ink.Pix[(yy-ink.Rect.Min.Y)*ink.Stride:]
		// Runs of the row, their ink-weighted centres and widths.
		var cs, ws []float64
		var w, wx float64
		n := 0
		for xx := lo; xx <= hi+1; xx++ {
			v := 0.0
			if xx <= hi {
				v = float64(row[xx-ink.Rect.Min.X])
			}
			if v >= inkThreshold {
				w, wx, n = w+v, wx+v*float64(xx), n+1
				continue
			}
			if n > 0 {
				// The run's soft edges (ink below the threshold on
				// either side) count too: they carry the sub-pixel
				// position of a steep stroke.
				for _, e := range [2]int{xx - n - 1, xx} {
					if e >= ink.Rect.Min.X && e < ink.Rect.Max.X {
						v := float64(row[e-ink.Rect.Min.X])
						w, wx = w+v, wx+v*float64(e)
					}
				}
				cs, ws = append(cs, wx/w), append(ws, float64(n))
			}
			w, wx, n = 0, 0, 0
		}
		// Two arms, neither grown wider than it was (a stroke merging
		// with one of them).
		if len(cs) == 2 && (len(ys) < 3 || max(ws[0], ws[1]) <= 1.5*width+1) {
			ys, c1, c2 = append(ys, float64(yy)), append(c1, cs[0]), append(c2, cs[1])
			widths = append(widths, ws[0], ws[1])
			width = median(widths)
			continue
		}
		if len(ys) > 0 {
			break
		}
	}
	if len(ys) < max(fitRows, 3) {
		return 0, 0, false
	}
	k := len(ys) - max(fitRows, len(ys)/2)
	a1, b1 := stat.LinearRegression(ys[k:], c1[k:], nil, false)
	a2, b2 := stat.LinearRegression(ys[k:], c2[k:], nil, false)
	if b1 == b2 {
		return 0, 0, false
	}
	y = (a2 - a1) / (b1 - b2)
	last := ys[len(ys)-1]
	if (y-last)*float64(dir) < 0 || math.IsNaN(y) {
		return 0, 0, false
	}
	return a1 + b1*y, y, true
}

// throughPoint replaces the points of pts with x in (xa, xb) by two
// straight stretches from the last point before xa through p to the first
// point from xb on, one point per column.
func throughPoint(pts []Point, xa, xb float64, p Point) []Point {
	i := 0
	for i < len(pts) && pts[i].X <= xa {
		i++
	}
	j := i
	for j < len(pts) && pts[j].X < xb {
		j++
	}
	if i == 0 || j >= len(pts) {
		return pts
	}
	s, e := pts[i-1], pts[j]
	var mid []Point
	for x := math.Floor(s.X) + 1; x < e.X; x++ {
		var y float64
		switch {
		case x <= p.X && p.X > s.X:
			y = s.Y + (p.Y-s.Y)*(x-s.X)/(p.X-s.X)
		case x > p.X && e.X > p.X:
			y = p.Y + (e.Y-p.Y)*(x-p.X)/(e.X-p.X)
		default:
			y = p.Y
		}
		mid = append(mid, Point{x, y})
	}
	// The apex itself, so that resampling keeps its height.
	k := 0
	for k < len(mid) && mid[k].X < p.X {
		k++
	}
	mid = append(mid[:k], append([]Point{p}, mid[k:]...)...)
	out := append(append(append([]Point(nil), pts[:i]...), mid...), pts[j:]...)
	return out
}

// yRange is the smallest and largest y of the points with x in (x0, x1).
func yRange(pts []Point, x0, x1 float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, p := range pts {
		if p.X > x0 && p.X < x1 {
			lo, hi = math.Min(lo, p.Y), math.Max(hi, p.Y)
		}
	}
	return lo, hi
}

// median is the median of xs (not empty), sorting a copy.
func median(xs []float64) float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	return s[len(s)/2]
}

// ontoInk moves y along column x in direction dir (+1 down, −1 up), by
// whole pixels, to the first ink pixel, at most to row end.
func ontoInk(ink *image.Gray, x, y float64, dir, end int) float64 {
	xi, yi := int(math.Round(x)), int(math.Round(y))
	if xi < ink.Rect.Min.X || xi >= ink.Rect.Max.X {
		return y
	}
	for ; (dir > 0 && yi <= end) || (dir < 0 && yi >= end); yi += dir {
		if yi >= ink.Rect.Min.Y && yi < ink.Rect.Max.Y && ink.Pix[(yi-ink.Rect.Min.Y)*ink.Stride+xi-ink.Rect.Min.X] >= inkThreshold {
			if yi == int(math.Round(y)) {
				return y
			}
			return float64(yi)
		}
	}
	return y
}
