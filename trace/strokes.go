package trace

import (
	"image"
	"iter"
	"math"
)

// untangleCrossings exchanges, between neighbouring rows, the stretches of
// path where two traces' QRS strokes cross each other.
//
// Where the upper row's trace dips below the lower row's and the lower
// row's rises above the upper row's in the same columns (a deep S wave
// meeting a tall R wave), the traces cross twice and enclose a lens. Per
// column the merged strokes are one vertical run, and a path that keeps
// to the ink nearest its own row rides the lens's near edge: each row
// takes the other row's apex, and both bounce where the lens closes (the
// upper path, going down into the lens, turns up inside it, and the lower
// one turns down: a W over an M). Inside a lens whose ends are joined by
// unbroken ink at least lensJoinMM long between the two paths (there the
// strokes merge into one vertical run and neither path passed through the
// crossing) and whose paths make that W over M, the two stretches are
// exchanged: each trace then runs straight through both crossings, as a
// pen does (a stroke does not turn back where another one crosses it).
//
// Rows less than minOrderPitchMV apart (pxPerMV px per mV) are left as
// they are: there one complex crosses several rows, and exchanging
// between two of them handed a third row's stroke on (overlap corpus,
// 12 × 1 pages: V2 taken for V3 twice). pxY is the vertical scale, px/mm;
// the lens width is measured with it too (square pixels).
func untangleCrossings(ink *image.Gray, pj [][]panelJob, pxY, pxPerMV float64) {
	// Lenses are found on the paths as followed, then exchanged; a
	// stretch of path already exchanged is not exchanged again (a stroke
	// is not handed on from row to row).
	type lens struct {
		r, a, b int
		lo, hi  float64
	}
	var found []lens
	for p := range neighbourPanels(pj, pxPerMV, 3) {
		for _, l := range findLenses(ink, pj[p.r][p.a].pr.points, pj[p.r+1][p.b].pr.points, p.x0, p.x1, pxY) {
			found = append(found, lens{p.r, p.a, p.b, l[0], l[1]})
		}
	}
	type key struct{ r, c int }
	done := map[key][][2]float64{}
	overlaps := func(k key, lo, hi float64) bool {
		for _, d := range done[k] {
			if lo <= d[1]+1 && d[0] <= hi+1 {
				return true
			}
		}
		return false
	}
	for _, l := range found {
		ka, kb := key{l.r, l.a}, key{l.r + 1, l.b}
		if overlaps(ka, l.lo, l.hi) || overlaps(kb, l.lo, l.hi) {
			continue
		}
		A, B := &pj[l.r][l.a].pr, &pj[l.r+1][l.b].pr
		A.points, B.points = swapSpan(A.points, B.points, l.lo, l.hi)
		done[ka] = append(done[ka], [2]float64{l.lo, l.hi})
		done[kb] = append(done[kb], [2]float64{l.lo, l.hi})
	}
}

// panelPair is a panel a of row r and a panel b of row r+1 whose columns
// overlap over [x0, x1), px.
type panelPair struct{ r, a, b, x0, x1 int }

// neighbourPanels yields the pairs of panels of neighbouring rows at least
// minOrderPitchMV apart (pxPerMV px per mV), both with a path, whose
// columns overlap over minW px or more.
func neighbourPanels(pj [][]panelJob, pxPerMV float64, minW int) iter.Seq[panelPair] {
	return func(yield func(panelPair) bool) {
		for r := 0; r+1 < len(pj); r++ {
			if len(pj[r]) == 0 || len(pj[r+1]) == 0 || pj[r+1][0].base-pj[r][0].base < minOrderPitchMV*pxPerMV {
				continue
			}
			for a := range pj[r] {
				for b := range pj[r+1] {
					A, B := &pj[r][a], &pj[r+1][b]
					if A.bounds.Empty() || B.bounds.Empty() || len(A.pr.points) == 0 || len(B.pr.points) == 0 {
						continue
					}
					x0, x1 := max(A.bounds.Min.X, B.bounds.Min.X), min(A.bounds.Max.X, B.bounds.Max.X)
					if x1-x0 >= minW && !yield(panelPair{r, a, b, x0, x1}) {
						return
					}
				}
			}
		}
	}
}

// lensJoinMM is the shortest ink, mm, joining the two paths at each end of
// a lens that untangleCrossings exchanges. Where the paths pass through one
// point at the ends they saw the crossing; exchanging such lenses took
// apart what the limb check repairs afterwards (clean 12 × 1 seed 2: aVR
// 29.1 → 13.5 dB, aVL 27.6 → 11.6 dB).
//
// lensEdgeMM is how far inside both panels, mm, a lens must lie: at a
// column boundary the separator tick and the other lead's ends meet the
// paths (overlap 3x4+3 seed 3: a lens 0.5 mm from the V2/V3 boundary took
// V2 from 2.5 to 1.0 dB and V3 from 5.4 to 4.2 dB).
//
// lensMaxMM is the widest lens untangleCrossings exchanges, mm of x (at
// 25 mm/s 3 mm is 120 ms, a wide QRS complex: common practice, from
// memory); lensBulgeMM is how far, mm, each path must bulge inside the lens
// beyond its level at both ends.
const (
	lensJoinMM  = 2.0
	lensMaxMM   = 3.0
	lensBulgeMM = 1.0
	lensEdgeMM  = 1.0
)

// findLenses gives the lenses between the paths of an upper (pa) and a
// lower (pb) panel over the image columns [x0, x1): the x interval, px, of
// the points to exchange inside each one.
func findLenses(ink *image.Gray, pa, pb []Point, x0, x1 int, pxY float64) [][2]float64 {
	n := x1 - x0
	ya := columnLevels(pa, x0, n)
	yb := columnLevels(pb, x0, n)
	// conn[i]: the two paths' points of column x0+i are joined by ink.
	conn := make([]bool, n)
	joined := false
	for i := range n {
		if !math.IsNaN(ya[i]) && !math.IsNaN(yb[i]) && ya[i] < yb[i] {
			conn[i] = inkBetween(ink, x0+i, ya[i], yb[i])
			joined = joined || conn[i]
		}
	}
	if !joined {
		return nil
	}
	var out [][2]float64
	maxW := int(lensMaxMM * pxY)
	bulge := lensBulgeMM * pxY
	edge := int(lensEdgeMM * pxY)
	for i := 0; i < n; i++ {
		if !conn[i] {
			continue
		}
		// The next joined column after at least one apart.
		j := i + 1
		for j < n && !conn[j] {
			j++
		}
		if j >= n {
			break
		}
		if j-i < 2 || j-i > maxW || i < edge || j >= n-edge {
			i = j - 1
			continue
		}
		// Inside (i, j): the upper path bulges up (smaller y) past both
		// ends, the lower path bulges down.
		minA, maxB := math.Inf(1), math.Inf(-1)
		ok := true
		for k := i + 1; k < j; k++ {
			if math.IsNaN(ya[k]) || math.IsNaN(yb[k]) {
				ok = false
				break
			}
			minA = math.Min(minA, ya[k])
			maxB = math.Max(maxB, yb[k])
		}
		join := lensJoinMM * pxY
		if ok && yb[i]-ya[i] >= join && yb[j]-ya[j] >= join && minA < math.Min(ya[i], ya[j])-bulge && maxB > math.Max(yb[i], yb[j])+bulge {
			lo, hi := float64(x0+i)+0.5, float64(x0+j)-0.5
			out = append(out, [2]float64{lo, hi})
		}
		i = j - 1
	}
	return out
}

// columnLevels gives, per column x0+i (i < n), the mean y of the path's
// points within half a column of it, px (NaN where it has none).
func columnLevels(pts []Point, x0, n int) []float64 {
	s := make([]float64, n)
	c := make([]int, n)
	for _, p := range pts {
		i := int(math.Round(p.X)) - x0
		if i >= 0 && i < n {
			s[i] += p.Y
			c[i]++
		}
	}
	for i := range s {
		if c[i] == 0 {
			s[i] = math.NaN()
		} else {
			s[i] /= float64(c[i])
		}
	}
	return s
}

// inkBetween reports whether column x of ink is ink (inkThreshold) at
// every row from ya to yb (ya < yb, px).
func inkBetween(ink *image.Gray, x int, ya, yb float64) bool {
	if x < ink.Rect.Min.X || x >= ink.Rect.Max.X {
		return false
	}
	y0 := max(int(math.Round(ya)), ink.Rect.Min.Y)
	y1 := min(int(math.Round(yb)), ink.Rect.Max.Y-1)
	if y0 > y1 {
		return false
	}
	off := (y0-ink.Rect.Min.Y)*ink.Stride + x - ink.Rect.Min.X
	for y := y0; y <= y1; y++ {
		if ink.Pix[off] < inkThreshold {
			return false
		}
		off += ink.Stride
	}
	return true
}

// swapSpan exchanges the points of a and b whose x lies in [lo, hi]; both
// stay sorted by x.
func swapSpan(a, b []Point, lo, hi float64) ([]Point, []Point) {
	cut := func(p []Point) (pre, mid, post []Point) {
		i := 0
		for i < len(p) && p[i].X < lo {
			i++
		}
		j := i
		for j < len(p) && p[j].X <= hi {
			j++
		}
		return p[:i], p[i:j], p[j:]
	}
	a0, a1, a2 := cut(a)
	b0, b1, b2 := cut(b)
	if len(a1) == len(b1) {
		// One point per column on both: exchange in place.
		for i := range a1 {
			a1[i], b1[i] = b1[i], a1[i]
		}
		return a, b
	}
	na := append(append(append(make([]Point, 0, len(a0)+len(b1)+len(a2)), a0...), b1...), a2...)
	nb := append(append(append(make([]Point, 0, len(b0)+len(a1)+len(b2)), b0...), a1...), b2...)
	return na, nb
}
