package trace

import (
	"image"
	"math"
)

// panelJob is one panel's search band and followed path while the rows of
// a page are traced.
type panelJob struct {
	bounds         image.Rectangle // search band, px
	base           float64         // baseline (0 mV if known) of the row, px
	upLim, downLim float64         // dropExcursions limits, px
	maxLen         float64         // longest far excursion kept, px
	endLen         float64         // longest far excursion kept at an end of the path, px
	pr             pathResult
	// The band's runs as first scanned (runs, off as in columnRuns), for
	// re-following with a neighbour's ink removed.
	runs []run
	off  []int32
	// penY0, penY1: the rows, px, whose runs the pen width is measured on
	// (penY1 ≤ penY0: the whole band).
	penY0, penY1 int
	penPx        float64 // the pen's width from the row's calibration pulse, px (0 if unknown)
}

// keepRuns keeps a copy of the runs of cr (scanned from the job's band).
func (j *panelJob) keepRuns(cr *columnRuns) {
	j.runs = append([]run(nil), cr.runs...)
	j.off = append([]int32(nil), cr.off...)
}

// follow follows the runs of cr (scanned from the job's band) and drops
// the path's long excursions towards the neighbouring rows.
func (j *panelJob) follow(cr *columnRuns, pxY float64) {
	fp := defaultFollow(pxY, j.base)
	fp.farUp, fp.farDown = j.upLim, j.downLim
	fp.penY0, fp.penY1, fp.pulsePen = j.penY0, j.penY1, j.penPx
	j.pr = follow(cr, fp)
	j.pr.points, j.pr.onInk = dropExcursions(j.pr.points, j.pr.onInk, j.base, j.upLim, j.downLim, j.maxLen, j.endLen)
}

// separateRows re-follows panels whose path meets a neighbouring row's
// path. Where the paths of rows r and r+1 meet, one of them may have taken
// the other's complex (a tall R wave of row r+1 entering row r's band,
// where row r's own R wave shares the columns), or both stopped where
// their strokes merge into single runs. The traces keep their order on the
// page almost everywhere, so two pairs are tried: row r followed again
// with the ink at and below row r+1's paths removed, and row r+1 with the
// ink at and above row r's paths removed. Of these and the pair as first
// followed, the one whose paths' ink runs cover the most pixels over the
// panel is kept (a new pair only when it covers minCoverGain more): the
// wrong pair leaves a whole stroke of the page unexplained.
//
// Rows less than minOrderPitchMV apart (pxPerMV px per mV) are left as
// they are: there complexes cross whole rows and the order does not hold.
func separateRows(ink *image.Gray, pj [][]panelJob, cr *columnRuns, pxY, pxPerMV float64) {
	if len(pj) < 2 {
		return
	}
	s := separator{ink: ink, cr: cr, pxY: pxY, x0: ink.Rect.Min.X, W: ink.Rect.Dx(), margin: math.Max(2, maxPenRadiusMM*pxY)}
	tol := math.Max(2, 0.5*pxY)
	minLen := 1 // contact in one column: merged strokes touch only there
	var et, eb, ft, fb []float32
	for r := 0; r+1 < len(pj); r++ {
		if len(pj[r]) == 0 || len(pj[r+1]) == 0 || pj[r+1][0].base-pj[r][0].base < minOrderPitchMV*pxPerMV {
			continue
		}
		et, eb = rowExtent(pj[r], s.x0, s.W, 0, et, eb)
		ft, fb = rowExtent(pj[r+1], s.x0, s.W, 0, ft, fb)
		// The lower row's panels re-followed against the upper row as it
		// stands (computed when first needed, dropped when the upper row
		// changes).
		memo := map[int]panelJob{}
		for ci := range pj[r] {
			P := pj[r][ci]
			if P.bounds.Empty() || !coincident(et, eb, ft, fb, P.bounds.Min.X-s.x0, P.bounds.Max.X-s.x0, tol, minLen) {
				continue
			}
			var qi []int
			var lower, a []panelJob
			for k, q := range pj[r+1] {
				if q.bounds.Empty() || q.bounds.Max.X <= P.bounds.Min.X || q.bounds.Min.X >= P.bounds.Max.X {
					continue
				}
				m, ok := memo[k]
				if !ok {
					m = s.above([]panelJob{q}, pj[r])[0]
					memo[k] = m
				}
				qi, lower, a = append(qi, k), append(lower, q), append(a, m)
			}
			b := s.below([]panelJob{P}, lower)[0]
			old := s.runCover(P.bounds, []panelJob{P}, lower)
			need := old * (1 + minCoverGain)
			covB := s.runCover(P.bounds, []panelJob{b}, lower)
			covA := s.runCover(P.bounds, []panelJob{P}, a)
			switch {
			case covB > need && covB >= covA:
				pj[r][ci] = b
				et, eb = rowExtent(pj[r], s.x0, s.W, 0, et, eb)
				clear(memo)
			case covA > need:
				for k, i := range qi {
					pj[r+1][i] = a[k]
				}
				ft, fb = rowExtent(pj[r+1], s.x0, s.W, 0, ft, fb)
			}
		}
	}
}

// minOrderPitchMV is the smallest row pitch at which separateRows relies
// on the order of the traces, mV: QRS complexes commonly reach 1–2 mV
// (common practice, from memory), so rows closer than 1 mV (12 × 1 at
// 20 mm/mV: 0.85 mV) are crossed by most complexes. On the overlap corpus
// the 12 × 1 pages had 5 swaps without the pass and 7 with it.
const minOrderPitchMV = 1.0

// minCoverGain is the fraction of ink a re-followed pair of rows must
// cover beyond the pair as first followed to replace it: a few hundred
// pixels more over a 10 s rhythm row were a neighbour's stroke ends.
const minCoverGain = 0.02

// separator holds what separateRows needs to re-follow panels.
type separator struct {
	ink    *image.Gray
	cr     *columnRuns
	buf    *image.Gray
	pxY    float64
	x0, W  int
	margin float64 // px kept clear of the neighbour's path
	et, eb []float32
}

// below re-follows the panels js with the ink at and below the paths of
// the row beneath (nb) removed; above, with the ink at and above the paths
// of the row over them (nb) removed.
func (s *separator) below(js, nb []panelJob) []panelJob { return s.refollow(js, nb, false) }
func (s *separator) above(js, nb []panelJob) []panelJob { return s.refollow(js, nb, true) }

func (s *separator) refollow(js, nb []panelJob, fromAbove bool) []panelJob {
	s.et, s.eb = rowExtent(nb, s.x0, s.W, 2, s.et, s.eb)
	out := make([]panelJob, len(js))
	for k, j := range js {
		var lo, hi []float64
		if fromAbove {
			lo, hi = clipLimits(s.eb, nil, j.bounds, s.x0, s.margin)
		} else {
			lo, hi = clipLimits(nil, s.et, j.bounds, s.x0, s.margin)
		}
		if j.off != nil {
			s.cr.clip(j, lo, hi)
		} else {
			s.buf = clipBand(s.buf, s.ink, j.bounds, lo, hi)
			s.cr.scan(s.buf, j.bounds)
		}
		out[k] = j
		out[k].follow(s.cr, s.pxY)
	}
	return out
}

// coincident reports whether two rows' path extents (per column, px)
// overlap within tol px over at least minLen consecutive columns of
// [c0, c1).
func coincident(at, ab, bt, bb []float32, c0, c1 int, tol float64, minLen int) bool {
	run := 0
	for c := max(c0, 0); c < min(c1, len(at)); c++ {
		if at[c] == at[c] && bt[c] == bt[c] && float64(at[c]) <= float64(bb[c])+tol && float64(bt[c]) <= float64(ab[c])+tol {
			run++
			if run >= minLen {
				return true
			}
		} else {
			run = 0
		}
	}
	return false
}

// rowExtent fills, per image column (x − x0), the smallest and largest y
// of a row's paths there, px (NaN where the row has no path), widened by
// two columns either side. Consecutive points less than 1.5 px apart
// share the y between them, so a steep stroke covers its whole height.
func rowExtent(jobs []panelJob, x0, W, wd int, top, bot []float32) ([]float32, []float32) {
	if cap(top) < W {
		top, bot = make([]float32, W), make([]float32, W)
	}
	top, bot = top[:W], bot[:W]
	nan := float32(math.NaN())
	for i := range top {
		top[i], bot[i] = nan, nan
	}
	put := func(x, y float64) {
		c := int(math.Round(x)) - x0
		if c < 0 || c >= W {
			return
		}
		v := float32(y)
		if !(top[c] <= v) {
			top[c] = v
		}
		if !(bot[c] >= v) {
			bot[c] = v
		}
	}
	for _, j := range jobs {
		pts := j.pr.points
		for i, q := range pts {
			put(q.X, q.Y)
			if i > 0 && q.X-pts[i-1].X <= 1.5 {
				m := (q.Y + pts[i-1].Y) / 2
				put(q.X, m)
				put(pts[i-1].X, m)
			}
		}
	}
	// Widened by wd columns: a narrow apex's centre point lies below the
	// top of its ink in the apex column itself.
	if wd <= 0 {
		return top, bot
	}
	t2, b2 := make([]float32, W), make([]float32, W)
	for c := range top {
		t2[c], b2[c] = nan, nan
		for k := max(0, c-wd); k <= min(W-1, c+wd); k++ {
			if !(t2[c] <= top[k]) && top[k] == top[k] {
				t2[c] = top[k]
			}
			if !(b2[c] >= bot[k]) && bot[k] == bot[k] {
				b2[c] = bot[k]
			}
		}
	}
	copy(top, t2)
	copy(bot, b2)
	return top, bot
}

// clipLimits gives, per column of the band b, the open interval (lo, hi)
// of y a row may use: below the row above's lowest path point (prevBot)
// and above the row below's highest one (nextTop), each by margin px; ±Inf
// where the neighbour is nil or has no path.
func clipLimits(prevBot, nextTop []float32, b image.Rectangle, x0 int, margin float64) (lo, hi []float64) {
	lo, hi = make([]float64, b.Dx()), make([]float64, b.Dx())
	for c := range lo {
		lo[c], hi[c] = math.Inf(-1), math.Inf(1)
		x := b.Min.X + c - x0
		if x >= 0 && x < len(prevBot) {
			if v := prevBot[x]; v == v {
				lo[c] = float64(v) + margin
			}
		}
		if x >= 0 && x < len(nextTop) {
			if v := nextTop[x]; v == v {
				hi[c] = float64(v) - margin
			}
		}
	}
	return lo, hi
}

// clipBand copies the band b of ink into buf (reallocated when too
// small; its Rect is b) with every pixel outside (lo[c], hi[c]) of its
// column c cleared.
func clipBand(buf *image.Gray, ink *image.Gray, b image.Rectangle, lo, hi []float64) *image.Gray {
	w, h := b.Dx(), b.Dy()
	if buf == nil || cap(buf.Pix) < w*h {
		buf = &image.Gray{Pix: make([]uint8, w*h)}
	}
	buf.Pix, buf.Stride, buf.Rect = buf.Pix[:w*h], w, b
	for y := 0; y < h; y++ {
		src := ink.Pix[(b.Min.Y+y-ink.Rect.Min.Y)*ink.Stride+(b.Min.X-ink.Rect.Min.X):]
		dst := buf.Pix[y*w : (y+1)*w]
		fy := float64(b.Min.Y + y)
		for c := 0; c < w; c++ {
			if fy <= lo[c] || fy >= hi[c] {
				dst[c] = 0
			} else {
				dst[c] = src[c]
			}
		}
	}
	return buf
}

// runCover is the number of pixels, over the columns of b, in the union of
// the ink runs on the paths of either row (u above, l below).
func (s *separator) runCover(b image.Rectangle, u, l []panelJob) float64 {
	n := b.Dx()
	ext := func(js []panelJob) ([]float32, []float32) {
		t, bo := make([]float32, n), make([]float32, n)
		nan := float32(math.NaN())
		for i := range t {
			t[i], bo[i] = nan, nan
		}
		for _, j := range js {
			for c := range j.pr.runTop {
				if x := j.bounds.Min.X + c - b.Min.X; x >= 0 && x < n {
					t[x], bo[x] = j.pr.runTop[c], j.pr.runBot[c]
				}
			}
		}
		return t, bo
	}
	ut, ub := ext(u)
	lt, lb := ext(l)
	sum := 0.0
	for c := 0; c < n; c++ {
		t, bo, p, q := ut[c], ub[c], lt[c], lb[c]
		switch {
		case t != t && p != p:
		case t != t:
			sum += float64(q - p + 1)
		case p != p:
			sum += float64(bo - t + 1)
		default:
			sum += float64(bo-t+1) + float64(q-p+1)
			if ov := min(bo, q) - max(t, p) + 1; ov > 0 {
				sum -= float64(ov)
			}
		}
	}
	return sum
}

// clip fills cr with the runs kept by j (keepRuns) cut to the open
// interval (lo[c], hi[c]) of their column c, as scanning the band with the
// pixels outside cleared would give them; the ink-weighted centre of a cut
// run is taken as its middle.
func (cr *columnRuns) clip(j panelJob, lo, hi []float64) {
	w := len(j.off) - 1
	cr.x0 = j.bounds.Min.X
	cr.runs = cr.runs[:0]
	cr.off = append(cr.off[:0], 0)
	for c := 0; c < w; c++ {
		t0, b0 := float64(math.MinInt32), float64(math.MaxInt32)
		if c < len(lo) {
			if !math.IsInf(lo[c], -1) {
				t0 = math.Floor(lo[c]) + 1
			}
			if !math.IsInf(hi[c], 1) {
				b0 = math.Ceil(hi[c]) - 1
			}
		}
		for _, r := range j.runs[j.off[c]:j.off[c+1]] {
			t, b := int32(max(float64(r.top), t0)), int32(min(float64(r.bot), b0))
			if t > b {
				continue
			}
			if t != r.top || b != r.bot {
				f := float32(b-t+1) / float32(r.bot-r.top+1)
				cut := r.cut
				if t != r.top {
					cut |= cutTop
				}
				if b != r.bot {
					cut |= cutBot
				}
				r = run{top: t, bot: b, w: r.w * f, cut: cut}
				r.wy = r.w * float32(t+b) / 2
			}
			cr.runs = append(cr.runs, r)
		}
		cr.off = append(cr.off, int32(len(cr.runs)))
	}
}
