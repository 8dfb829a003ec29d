package trace

import (
	"image"
	"math"

	"tracelift/ecg"
	"tracelift/grid"
)

// A lead's quality says how much to trust its samples. The path finder's
// own score (ink under the path, smoothness) is near 1 whenever the path
// runs on ink, and on a page whose rows overlap it runs on ink everywhere,
// its neighbours' included: measured over the eval corpus it stayed at
// 0.99–1.00 for leads read at 0 dB as for leads at 25 dB. What a path on
// another row's strokes cannot be told from its own is where the two rows'
// strokes meet: there the ink belongs to both, and at most one of them
// reads it right. So the quality a lead reports is the path's score times
// the share of the lead's trace energy (its excursion from 0 mV, squared,
// column by column) printed clear of every other row's stroke, times the
// share of its printed window it returned (stretches a self-check withheld
// are not known). A column is not clear where the path's extent, grown to
// the run of ink it lies on, comes within half a millimetre of another
// row's path (merged strokes), or where that run leaves the lead's search
// band (a stroke cut at the band: the lead's own apex, or another row's
// stroke).

// contestGapMM is how close two rows' strokes come, in mm, before their
// ink is taken as touching: a pen's width (0.3–0.4 mm on recorder paper,
// common practice) and a little more for blur.
const contestGapMM = 0.5

// contestFloorMV is the excursion every column counts at least, mV, so
// that a flat lead's share is not decided by the noise of its baseline.
const contestFloorMV = 0.1

// colSpan is the vertical extent of a path in one image column, px.
type colSpan struct{ lo, hi float64 }

// pathSpans returns the extent of path in each image column it covers,
// spans[x − x0], from the segments between consecutive points as the pen
// drew them (a steep stroke covers its whole height in its columns).
func pathSpans(path []Point) (x0 int, spans []colSpan) {
	if len(path) == 0 {
		return 0, nil
	}
	x0 = int(math.Round(path[0].X))
	x1 := int(math.Round(path[len(path)-1].X))
	for _, p := range path {
		x0 = min(x0, int(math.Round(p.X)))
		x1 = max(x1, int(math.Round(p.X)))
	}
	spans = make([]colSpan, x1-x0+1)
	for i := range spans {
		spans[i] = colSpan{math.Inf(1), math.Inf(-1)}
	}
	add := func(x int, y float64) {
		s := &spans[x-x0]
		s.lo, s.hi = min(s.lo, y), max(s.hi, y)
	}
	for i, p := range path {
		add(int(math.Round(p.X)), p.Y)
		if i == 0 {
			continue
		}
		a := path[i-1]
		if p.X <= a.X {
			continue
		}
		// The segment a–p over each column it crosses, clipped to the
		// column's width.
		for x := int(math.Round(a.X)); x <= int(math.Round(p.X)); x++ {
			for _, xe := range [2]float64{float64(x) - 0.5, float64(x) + 0.5} {
				t := min(max((xe-a.X)/(p.X-a.X), 0), 1)
				add(x, a.Y+t*(p.Y-a.Y))
			}
		}
	}
	return x0, spans
}

// contestedColumns marks, for each panel, the columns of its path
// (marks[i][x − x0[i]]) where its stroke meets another row's: their
// extents come within gap px, or one lies on the run of ink (in ink, when
// given) the other's extent is part of, where the two strokes have merged
// into one. A column whose run of ink reaches past the panel's search band
// counts too: the stroke there may be the lead's own, cut at the band, or
// another row's; so does one that ends on the edge where the page cut
// the traces off (clippedColumns), or where the complex cut there was
// extrapolated (Panel.clipped). spans are the paths' extents (pathSpans).
func contestedColumns(panels []Panel, gap float64, ink *image.Gray) (x0 []int, spans [][]colSpan, marks [][]bool) {
	return contestedColumnsClip(panels, gap, ink, true)
}

// contestedColumnsClip is contestedColumns, the columns that end on the
// page's edge (found or extrapolated) marked only when clips is true.
func contestedColumnsClip(panels []Panel, gap float64, ink *image.Gray, clips bool) (x0 []int, spans [][]colSpan, marks [][]bool) {
	x0, spans, runs := pathRuns(panels, ink)
	marks = make([][]bool, len(panels))
	var top, bot [][]bool
	if clips {
		top, bot = clippedColumns(x0, runs, spans, ink)
	}
	for i, p := range panels {
		marks[i] = make([]bool, len(spans[i]))
		for k, s := range spans[i] {
			if ink != nil && !math.IsInf(s.lo, 1) {
				if b := p.Bounds; !b.Empty() && (runs[i][k].lo < float64(b.Min.Y) || runs[i][k].hi > float64(b.Max.Y-1)) {
					marks[i][k] = true
				}
			}
			if clips && (top[i][k] || bot[i][k]) {
				marks[i][k] = true
			}
		}
		if !clips {
			continue
		}
		for _, c := range p.clipped {
			for x := max(c[0], x0[i]); x <= min(c[1], x0[i]+len(marks[i])-1); x++ {
				marks[i][x-x0[i]] = true
			}
		}
	}
	for i, p := range panels {
		for k, s := range spans[i] {
			if math.IsInf(s.lo, 1) || marks[i][k] {
				continue
			}
			x, r := x0[i]+k, runs[i][k]
			for j, q := range panels {
				if q.Row == p.Row || x < x0[j] || x >= x0[j]+len(spans[j]) {
					continue
				}
				t := spans[j][x-x0[j]]
				if t.lo-gap <= r.hi && r.lo <= t.hi+gap {
					marks[i][k] = true
					break
				}
			}
		}
	}
	return x0, spans, marks
}

// clipMinCols is the number of the paths' columns whose ink ends on one
// and the same row beyond all other ink of the traces that makes that row
// the paper's (or the scan's) edge, where the printer cut the strokes off.
const clipMinCols = 6

// clipTolPx: a run ending this close to the edge row ends on it (a page
// straightened from a skewed scan has its edge wander by a pixel).
const clipTolPx = 1

// clipMinGroups: the edge is reached in this many separate stretches at
// least: the complexes of every beat, not the apexes of a few that happen
// to top the page within clipTolPx (synthetic beats repeat to the pixel:
// at 2 px and three stretches the S waves of a photo's bottom row, which
// the paper holds, were taken for cut).
const clipMinGroups = 4

// pathRuns returns, per panel, its path's extent in each column
// (pathSpans, from x0) and that extent grown to its run of ink (the
// extent itself where ink is nil or the column has none).
func pathRuns(panels []Panel, ink *image.Gray) (x0 []int, spans, runs [][]colSpan) {
	x0, spans, runs = make([]int, len(panels)), make([][]colSpan, len(panels)), make([][]colSpan, len(panels))
	for i, p := range panels {
		x0[i], spans[i] = pathSpans(p.Path)
		runs[i] = make([]colSpan, len(spans[i]))
		for k, s := range spans[i] {
			runs[i][k] = s
			if ink != nil && !math.IsInf(s.lo, 1) {
				runs[i][k] = inkRun(ink, x0[i]+k, s)
			}
		}
	}
	return x0, spans, runs
}

// clippedColumns marks the columns whose run of ink (runs, grown from
// the paths' extents spans; pathRuns) ends on the edge where the page cut
// the traces: the topmost (bottommost, in bot) row any path's run
// reaches, when at least clipMinCols columns, in two complexes at least,
// end exactly there and ink (when given) has nothing beyond that row over
// the paths' columns (x0: each path's first column). A complex printed
// taller than the paper reaches it at every beat and runs flat along it;
// the samples there are the edge, not the lead.
func clippedColumns(x0 []int, runs, spans [][]colSpan, ink *image.Gray) (topMarks, botMarks [][]bool) {
	topMarks, botMarks = make([][]bool, len(runs)), make([][]bool, len(runs))
	for i := range runs {
		topMarks[i], botMarks[i] = make([]bool, len(runs[i])), make([]bool, len(runs[i]))
	}
	for _, top := range [2]bool{true, false} {
		marks := topMarks
		if !top {
			marks = botMarks
		}
		edge := math.Inf(1)
		if !top {
			edge = math.Inf(-1)
		}
		for i := range runs {
			for k, r := range runs[i] {
				if math.IsInf(spans[i][k].lo, 1) {
					continue
				}
				if top {
					edge = math.Min(edge, r.lo)
				} else {
					edge = math.Max(edge, r.hi)
				}
			}
		}
		if math.IsInf(edge, 0) {
			continue
		}
		at := func(i, k int) bool {
			if math.IsInf(spans[i][k].lo, 1) {
				return false
			}
			if top {
				return runs[i][k].lo <= edge+clipTolPx
			}
			return runs[i][k].hi >= edge-clipTolPx
		}
		n, groups := 0, 0
		for i := range runs {
			for k := range runs[i] {
				if at(i, k) {
					n++
					if k == 0 || !at(i, k-1) {
						groups++
					}
				}
			}
		}
		if n < clipMinCols || groups < clipMinGroups || ink != nil && inkBeyond(ink, x0, runs, edge, top) {
			continue
		}
		for i := range runs {
			for k := range runs[i] {
				if at(i, k) {
					marks[i][k] = true
				}
			}
		}
	}
	return topMarks, botMarks
}

// inkBeyond reports whether ink holds any ink above row edge (below it,
// when !top) over the columns of the paths (x0, runs).
func inkBeyond(ink *image.Gray, x0 []int, runs [][]colSpan, edge float64, top bool) bool {
	xa, xb := math.MaxInt, math.MinInt
	for i := range runs {
		if len(runs[i]) > 0 {
			xa, xb = min(xa, x0[i]), max(xb, x0[i]+len(runs[i])-1)
		}
	}
	b := ink.Rect
	xa, xb = max(xa, b.Min.X), min(xb, b.Max.X-1)
	y0, y1 := b.Min.Y, int(math.Floor(edge))-1
	if !top {
		y0, y1 = int(math.Ceil(edge))+1, b.Max.Y-1
	}
	for y := y0; y <= y1; y++ {
		row := ink.Pix[(y-b.Min.Y)*ink.Stride:]
		for x := xa; x <= xb; x++ {
			if row[x-b.Min.X] >= inkThreshold {
				return true
			}
		}
	}
	return false
}

// bridgeGapPx is the widest step, px, between consecutive path points
// that counts as read from the page: the path finder leaves one point per
// column, so a wider step is a stretch bridged without ink or an
// excursion dropped (dropExcursions).
const bridgeGapPx = 1.5

// contestedSamples marks, per panel and record sample (n samples at fs
// Hz; xStart[k] the x of panel k's time T0, px), where the panel's path
// was not read from its own ink alone: its stroke meets another row's
// (contestedColumns) or the path bridges the column without a point (an
// excursion dropped, a gap in the ink), widened by padS on each side.
func contestedSamples(ink *image.Gray, cal grid.Calibration, fs float64, n int, panels []*Panel, xStart []float64, padS float64) [][]bool {
	ps := make([]Panel, len(panels))
	for k, pn := range panels {
		ps[k] = *pn
	}
	x0, _, marks := contestedColumns(ps, contestGapMM*cal.PxPerMMY.V, ink)
	for k, pn := range panels {
		for j := 1; j < len(pn.Path); j++ {
			a, b := pn.Path[j-1].X, pn.Path[j].X
			if b-a <= bridgeGapPx {
				continue
			}
			for c := int(math.Floor(a)) + 1; c < int(math.Ceil(b)); c++ {
				if c-x0[k] >= 0 && c-x0[k] < len(marks[k]) {
					marks[k][c-x0[k]] = true
				}
			}
		}
	}
	pxPerS := cal.SpeedMMPerS.V * cal.PxPerMMX.V
	pad := max(1, int(math.Round(padS*fs)))
	out := make([][]bool, len(panels))
	raw := make([]bool, n)
	for k, pn := range panels {
		out[k] = make([]bool, n)
		any := false
		for i := range n {
			c := int(math.Round(xStart[k]+(float64(i)/fs-pn.T0)*pxPerS)) - x0[k]
			raw[i] = c >= 0 && c < len(marks[k]) && marks[k][c]
			any = any || raw[i]
		}
		if !any {
			continue
		}
		for _, sp := range markedSpans(raw, 1, pad) {
			for i := sp.s0; i <= sp.s1; i++ {
				out[k][i] = true
			}
		}
	}
	return out
}

// inkRun grows the extent s of column x to the run of ink it lies on: up
// from its top and down from its bottom while the pixels are ink.
func inkRun(ink *image.Gray, x int, s colSpan) colSpan {
	b := ink.Rect
	if x < b.Min.X || x >= b.Max.X {
		return s
	}
	at := func(y int) bool {
		return y >= b.Min.Y && y < b.Max.Y && ink.Pix[(y-b.Min.Y)*ink.Stride+x-b.Min.X] >= inkThreshold
	}
	lo, hi := int(math.Floor(s.lo)), int(math.Ceil(s.hi))
	for at(lo - 1) {
		lo--
	}
	for at(hi + 1) {
		hi++
	}
	return colSpan{min(s.lo, float64(lo)), max(s.hi, float64(hi))}
}

// contestedShares returns, for each panel, its trace energy in columns
// where it comes within gap px of another row's trace, and its energy in
// all (floor: the excursion, px, every column counts at least).
func contestedShares(panels []Panel, gap, floor float64, ink *image.Gray) (contested, total []float64) {
	_, spans, marks := contestedColumns(panels, gap, ink)
	contested, total = make([]float64, len(panels)), make([]float64, len(panels))
	for i, p := range panels {
		for k, s := range spans[i] {
			if math.IsInf(s.lo, 1) {
				continue
			}
			ex := max(math.Abs(s.lo-p.ZeroY), math.Abs(s.hi-p.ZeroY), floor)
			total[i] += ex * ex
			if marks[i][k] {
				contested[i] += ex * ex
			}
		}
	}
	return contested, total
}

// CrossedFlagShare is the share of a lead's trace energy where other
// rows' strokes meet it from which the lead is listed in
// Result.CrossedLeads: a tenth of the energy read ambiguously bounds the
// lead's SNR near 10 dB if that part is wrong. Over the eval's 21
// overlapping pages (a project measurement, 2026-12-02) 136 of 219 leads
// are so listed, median 7.5 dB, among them 78 of the 83 leads read below
// 10 dB; the 83 others read a median of 18.3 dB. On clean, scanned and
// faxed pages 6–8 % of the leads are listed (tall complexes of 12 × 1 and
// rhythm-strip pages that reach a neighbouring row).
const CrossedFlagShare = 0.1

// crossedShares sums each lead's contested and total energy over its
// panels and returns the contested share (0 for a lead without energy).
func crossedShares(panels []Panel, contested, total []float64) map[ecg.Lead]float64 {
	con, tot := map[ecg.Lead]float64{}, map[ecg.Lead]float64{}
	for i, p := range panels {
		con[p.Lead] += contested[i]
		tot[p.Lead] += total[i]
	}
	out := make(map[ecg.Lead]float64, len(tot))
	for l, t := range tot {
		if t > 0 {
			out[l] = con[l] / t
		}
	}
	return out
}

// leadConfidence returns each lead's quality as the record reports it:
// qual (the path's score) times the share of the lead's trace energy
// clear of other rows' strokes (1 − crossed) times the share of its
// printed windows it returned (covered).
func leadConfidence(qual, crossed, covered map[ecg.Lead]float64) map[ecg.Lead]float64 {
	out := make(map[ecg.Lead]float64, len(qual))
	for l, q := range qual {
		c, ok := covered[l]
		if !ok {
			c = 1
		}
		out[l] = q * (1 - crossed[l]) * c
	}
	return out
}

// CrossedLeads returns the leads of r whose Crossed share reaches
// CrossedFlagShare, in the standard order.
func (r *Result) CrossedLeads() []ecg.Lead {
	var out []ecg.Lead
	for _, l := range ecg.Standard12 {
		if r.Record.Signal(l) != nil && r.Crossed[l] >= CrossedFlagShare {
			out = append(out, l)
		}
	}
	return out
}

// coveredShares returns, for each lead of rec, the share of its printed
// windows (its panels' time spans) that holds a value.
func coveredShares(rec *ecg.Record, panels []Panel) map[ecg.Lead]float64 {
	windows := map[ecg.Lead][][2]float64{}
	for _, p := range panels {
		windows[p.Lead] = append(windows[p.Lead], [2]float64{p.T0, p.T1})
	}
	out := map[ecg.Lead]float64{}
	for _, s := range rec.Signals {
		if w, ok := windows[s.Lead]; ok {
			out[s.Lead] = validFraction(s.Samples, w, s.SampleRate)
		}
	}
	return out
}
