package imageproc

import (
	"image"
	"math"
	"slices"
)

// structureSplit separates a grey page (already upright) into grid lines
// and ink by structure: in each of several vertical strips, rows whose mean
// darkness stands far above the strip's typical row are grid lines (and
// likewise columns in horizontal bands). Line pixels go to grd and are
// removed from ink unless the ink continues just beyond the line's
// thickness (a trace crossing the line) or is much darker than the line.
func structureSplit(gray, ink, grd *image.Gray) {
	w, h := gray.Rect.Dx(), gray.Rect.Dy()
	if w < 16 || h < 16 {
		return
	}
	fl := flagLines(gray)
	const strips = lineStrips
	rowLine, colLine := fl.row, fl.col
	rowLevel, colLevel := fl.rowLevel, fl.colLevel
	dark := func(x, y int) bool {
		if x < 0 || y < 0 || x >= w || y >= h {
			return false
		}
		return ink.Pix[y*ink.Stride+x] > 96
	}
	for y := 0; y < h; y++ {
		b := min(strips-1, y*strips/h)
		for x := 0; x < w; x++ {
			s := min(strips-1, x*strips/w)
			onRow := rowLine[s*h+y]
			onCol := colLine[b*w+x]
			if !onRow && !onCol {
				continue
			}
			i := y*gray.Stride + x
			d := 255 - int(gray.Pix[i])
			grd.Pix[y*grd.Stride+x] = uint8(d)
			if ink.Pix[y*ink.Stride+x] == 0 {
				continue
			}
			level := 0.0
			if onRow {
				level = rowLevel[s*h+y]
			}
			if onCol {
				level = max(level, colLevel[b*w+x])
			}
			if float64(d) > level+0.5*(255-level) && level < 170 {
				continue // much darker than this (light) line: ink on top
			}
			keep := false
			if onRow {
				ya, yb := y, y
				for ya > 0 && rowLine[s*h+ya-1] && y-ya < 6 {
					ya--
				}
				for yb < h-1 && rowLine[s*h+yb+1] && yb-y < 6 {
					yb++
				}
				keep = dark(x, ya-1) || dark(x, yb+1)
			}
			if !keep && onCol {
				xa, xb := x, x
				for xa > 0 && colLine[b*w+xa-1] && x-xa < 6 {
					xa--
				}
				for xb < w-1 && colLine[b*w+xb+1] && xb-x < 6 {
					xb++
				}
				keep = dark(xa-1, y) || dark(xb+1, y)
			}
			if !keep {
				ink.Pix[y*ink.Stride+x] = 0
			}
		}
	}
	if max(fl.rowMedian, fl.colMedian) >= blackLines {
		markFringe(gray, ink, fl)
		if fl.rowPitch == 0 && fl.colPitch == 0 {
			markSpecks(gray, ink)
		}
	}
}

// maxSpecks is the share of a page's pixels up to which the marks left
// outside the ink of a binarised page without any grid lattice count as
// specks (see markSpecks): 1 in 5000. A grid of dots or broken lines that
// the split did not flag covers far more (a 1 px dot per 5 mm at 204 dpi
// alone is 1 in 1600).
const maxSpecks = 0.0002

// markSpecks gives the few marks left outside the ink of a binarised page
// without any grid lattice (specks of noise, stray dots of a grid that
// did not survive the binarisation) the weak strength fringeInk when
// they are fewer than maxSpecks of the page. Grid measures the period of
// the darkness outside the ink; from a few hundred scattered dots it read
// fax 6x2 seed 13 at 0.1 % off along x (13.4 dB median against 18.5 dB
// from the page's resolution tags, which it falls back to when nothing
// is left).
func markSpecks(gray, ink *image.Gray) {
	w, h := gray.Rect.Dx(), gray.Rect.Dy()
	n := 0
	for y := 0; y < h; y++ {
		grow := gray.Pix[y*gray.Stride : y*gray.Stride+w]
		irow := ink.Pix[y*ink.Stride : y*ink.Stride+w]
		for x, v := range grow {
			if v < 255-30 && irow[x] < fringeInk {
				n++
			}
		}
	}
	if float64(n) > maxSpecks*float64(w*h) {
		return
	}
	for y := 0; y < h; y++ {
		grow := gray.Pix[y*gray.Stride : y*gray.Stride+w]
		irow := ink.Pix[y*ink.Stride : y*ink.Stride+w]
		for x, v := range grow {
			if v < 255 && irow[x] < fringeInk {
				irow[x] = fringeInk
			}
		}
	}
}

// fringeInk is the ink strength given to the fringe of a trace (see
// markFringe): above the 40 up to which grid's darkness map still counts a
// pixel as paper or grid, below the level at which trace and pulse
// detection count ink (96 and more).
const fringeInk = 48

// markFringe gives the faint pixels near trace ink (within 2 px of a
// pixel of strength 96 or more) the weak strength fringeInk, on binarised
// pages (black lines, see blackLines). Such a page, resampled to square
// pixels and deskewed, has a grey rim along every stroke, in short dashes regular with the resampling and the
// stairs of a slightly tilted line; left out of the ink, on a page
// without a grid they formed a periodic 'grid' of their own in the
// darkness map that grid measures. Pixels of flagged grid lines are left
// alone.
func markFringe(gray, ink *image.Gray, fl lineFlags) {
	w, h := gray.Rect.Dx(), gray.Rect.Dy()
	const strips, r = lineStrips, 2
	// near: strong ink within r px along x, then along y.
	horiz := make([]bool, w*h)
	for y := 0; y < h; y++ {
		row := ink.Pix[y*ink.Stride : y*ink.Stride+w]
		last := -r - 1 // last strong x
		for x := 0; x < w; x++ {
			if row[x] >= 96 {
				last = x
				for k := max(0, x-r); k < x; k++ {
					horiz[y*w+k] = true
				}
			}
			if x-last <= r {
				horiz[y*w+x] = true
			}
		}
	}
	for y := 0; y < h; y++ {
		b := min(strips-1, y*strips/h)
		row := ink.Pix[y*ink.Stride : y*ink.Stride+w]
		grow := gray.Pix[y*gray.Stride : y*gray.Stride+w]
		for x, v := range row {
			if v >= fringeInk || grow[x] == 255 {
				continue
			}
			near := false
			for yy := max(0, y-r); yy <= min(h-1, y+r) && !near; yy++ {
				near = horiz[yy*w+x]
			}
			if !near {
				continue
			}
			if s := min(strips-1, x*strips/w); fl.row[s*h+y] || fl.col[b*w+x] {
				continue
			}
			row[x] = fringeInk
		}
	}
}

// onLevel returns the mean darkness of the dark (> 30) pixels of a grey
// row or column segment read with the given step: how dark the line's own
// pixels are, whatever its coverage (solid, dashed or dotted).
func onLevel(pix []uint8, step int) float64 {
	sum, n := 0, 0
	for i := 0; i < len(pix); i += step {
		if d := 255 - int(pix[i]); d > 30 {
			sum += d
			n++
		}
	}
	if n == 0 {
		return 0
	}
	return float64(sum) / float64(n)
}

// markLines flags entries of prof (mean darkness per row or column) that
// stand out from the typical level as grid lines.
func markLines(prof []float64, line []bool) {
	n := len(prof)
	sorted := slices.Clone(prof)
	slices.Sort(sorted)
	med := sorted[n/2]
	mad := 0.0
	for _, v := range prof {
		mad += math.Abs(v - med)
	}
	mad /= float64(n)
	// A line row is much darker on average than the paper rows between
	// lines, which are the majority.
	thr := med + max(12, 3*mad)
	for i, v := range prof {
		if v > thr {
			line[i] = true
		}
	}
}

// unflagDark clears line flags whose on-level is far darker than the
// median line's (only when lines are grey, not black).
func unflagDark(line []bool, level []float64) {
	var lv []float64
	for i, l := range line {
		if l {
			lv = append(lv, level[i])
		}
	}
	if len(lv) == 0 {
		return
	}
	slices.Sort(lv)
	g := lv[len(lv)/2]
	if g > 190 {
		return
	}
	lim := g + 0.4*(255-g)
	for i, l := range line {
		if l && level[i] > lim {
			line[i] = false
		}
	}
}

// isStroke reports whether a row or column segment flagged as a grid line
// is rather a pen stroke: one long dark run (a fifth of the segment or
// more) without the near-full coverage of a printed line. Grid lines are
// either solid across the segment or broken into short dashes or dots;
// trace baselines and calibration-pulse edges are long partial runs.
func isStroke(pix []uint8, step int) bool {
	n, dark, run, longest := 0, 0, 0, 0
	for i := 0; i < len(pix); i += step {
		n++
		if 255-int(pix[i]) > 30 {
			dark++
			run++
			longest = max(longest, run)
		} else {
			run = 0
		}
	}
	return longest*5 >= n && dark*4 <= 3*n
}

// lineStrips is the number of vertical strips (and horizontal bands) in
// which structureSplit looks for line rows (and columns).
const lineStrips = 8

// lineFlags are the grid-line flags of a grey page: row[s·h+y] flags row
// y within vertical strip s, col[b·w+x] column x within horizontal band
// b; the levels are the flagged lines' on-levels (onLevel).
type lineFlags struct {
	row, col           []bool
	rowLevel, colLevel []float64
	// rowMedian, colMedian are the median on-levels of the lines flagged
	// before the lattice test (0 when none).
	rowMedian, colMedian float64
	// rowPitch, colPitch are the lattice pitches (px) of binarised pages,
	// 0 when none (or the lines are grey).
	rowPitch, colPitch float64
}

// blackLines is the median on-level (darkness 0..255 of a line's dark
// pixels) from which a family of flagged lines counts as printed as black
// as the trace, as on a binarised page (a fax: 172–185 for rows on the
// corpus) or one without any grid, where only trace baselines, strokes
// and text stand out: there the flags must form a lattice (keepLattice).
// Grey lines of scans and photos (on-levels about 55–130) are told from
// traces by their lightness instead (unflagDark), and a photo's
// perspective bends their lattice.
const blackLines = 165

// flagLines flags the rows (per vertical strip) and columns (per
// horizontal band) of gray whose mean darkness stands far above the
// typical row or column, less pen strokes (isStroke) and lines far darker
// than the typical line (unflagDark).
func flagLines(gray *image.Gray) lineFlags {
	w, h := gray.Rect.Dx(), gray.Rect.Dy()
	const strips = lineStrips
	rowLine := make([]bool, h*strips) // [strip][y]
	colLine := make([]bool, w*strips) // [band][x]
	rowLevel := make([]float64, h*strips)
	colLevel := make([]float64, w*strips)
	prof := make([]float64, max(w, h))
	for s := 0; s < strips; s++ {
		x0, x1 := s*w/strips, (s+1)*w/strips
		for y := 0; y < h; y++ {
			sum := 0
			for _, v := range gray.Pix[y*gray.Stride+x0 : y*gray.Stride+x1] {
				sum += 255 - int(v)
			}
			prof[y] = float64(sum) / float64(x1-x0)
		}
		markLines(prof[:h], rowLine[s*h:(s+1)*h])
		for y := 0; y < h; y++ {
			if rowLine[s*h+y] {
				seg := gray.Pix[y*gray.Stride+x0 : y*gray.Stride+x1]
				rowLevel[s*h+y] = onLevel(seg, 1)
				rowLine[s*h+y] = !isStroke(seg, 1)
			}
		}
	}
	colSum := make([]float64, w)
	for b := 0; b < strips; b++ {
		y0, y1 := b*h/strips, (b+1)*h/strips
		clear(colSum)
		for y := y0; y < y1; y++ {
			for x, v := range gray.Pix[y*gray.Stride : y*gray.Stride+w] {
				colSum[x] += float64(255 - int(v))
			}
		}
		for x := range colSum {
			prof[x] = colSum[x] / float64(y1-y0)
		}
		markLines(prof[:w], colLine[b*w:(b+1)*w])
		for x := 0; x < w; x++ {
			if colLine[b*w+x] {
				seg := gray.Pix[y0*gray.Stride+x : (y1-1)*gray.Stride+x+1]
				colLevel[b*w+x] = onLevel(seg, gray.Stride)
				colLine[b*w+x] = !isStroke(seg, gray.Stride)
			}
		}
	}
	// Grid lines share one darkness; rows or columns much darker than the
	// typical line are trace baselines or text, not grid.
	unflagDark(rowLine, rowLevel)
	unflagDark(colLine, colLevel)
	// Grid lines repeat at one pitch: at most a 40th of the page's long
	// side (7.4 mm on A4; major lines are 5 mm apart, common practice),
	// or 32 px on small images (a 5 mm pitch up to 160 dpi), well short
	// of the spacing of trace rows (15 mm or more on a 12-row page).
	maxPitch := max(float64(max(w, h))/40, 32)
	fl := lineFlags{row: rowLine, col: colLine, rowLevel: rowLevel, colLevel: colLevel,
		rowMedian: medianLevel(rowLine, rowLevel), colMedian: medianLevel(colLine, colLevel)}
	if max(fl.rowMedian, fl.colMedian) >= blackLines {
		// Black lines in one direction: a binarised page, whose other
		// direction's levels the resampling of a 98-dpi fax to square
		// pixels may have lightened (149–156 on the corpus).
		fl.rowPitch = keepLattice(rowLine, h, maxPitch)
		fl.colPitch = keepLattice(colLine, w, maxPitch)
	}
	return fl
}

// lineCentres returns the centre of each run of flagged entries of line
// (one grid line, a pen width or more thick), in increasing order.
func lineCentres(line []bool, dst []float64) []float64 {
	dst = dst[:0]
	a := -1
	for i := 0; i <= len(line); i++ {
		if i < len(line) && line[i] {
			if a < 0 {
				a = i
			}
			continue
		}
		if a >= 0 {
			dst = append(dst, float64(a+i-1)/2)
			a = -1
		}
	}
	return dst
}

// latticeTol is the tolerance (px) for a distance d between two lines of
// one lattice: the lines' centres are rounded to pixels, and the printed
// pitch drifts a little over many periods.
func latticeTol(d float64) float64 { return 1.5 + 0.02*d }

// minChain is the number of lines, each one pitch from the next, that a
// run of grid lines holds at least. A grid's lines repeat at one pitch (1
// or 5 mm, common practice) across the page; the up- and down-strokes of
// a QRS complex or the rows of a trace baseline flagged as lines make at
// most three or four.
const minChain = 5

// onChain marks the centres of c (increasing) that belong to a run of at
// least minChain lines spaced pitch apart (each within latticeTol), and
// returns how many it marked. keep has len(c) entries.
func onChain(c []float64, pitch float64, keep []bool) int {
	n := len(c)
	t := latticeTol(pitch)
	next := make([]int, n)
	prev := make([]int, n)
	for i := range prev {
		prev[i] = -1
	}
	for i := range c {
		next[i] = -1
		want := c[i] + pitch
		j, _ := slices.BinarySearch(c, want-t)
		bestD := t
		for ; j < n && c[j] <= want+t; j++ {
			if d := math.Abs(c[j] - want); d <= bestD {
				next[i], bestD = j, d
			}
		}
		if next[i] >= 0 && prev[next[i]] < 0 {
			prev[next[i]] = i
		}
	}
	// Lengths of the runs ahead of and behind each line.
	ahead := make([]int, n)
	for i := n - 1; i >= 0; i-- {
		ahead[i] = 1
		if next[i] >= 0 {
			ahead[i] += ahead[next[i]]
		}
	}
	behind := make([]int, n)
	kept := 0
	for i := range c {
		behind[i] = 1
		if prev[i] >= 0 {
			behind[i] += behind[prev[i]]
		}
		keep[i] = ahead[i]+behind[i]-1 >= minChain
		if keep[i] {
			kept++
		}
	}
	return kept
}

// latticePitch returns the spacing (px) of the lattice that the line
// centres of the segments (strips or bands) form, or 0 when they form
// none: among the common distances between two lines (up to maxPitch, at
// least 3 px), the one that puts the most lines on runs of minChain
// (ties: the shorter), refined to the mean spacing along those runs.
// Fewer than four such lines per segment on average are no lattice.
func latticePitch(centres [][]float64, maxPitch float64) float64 {
	if maxPitch < 3 {
		return 0
	}
	// Pair distances in quarter-pixel bins.
	nb := int(4*maxPitch) + 1
	hist := make([]int, nb)
	for _, c := range centres {
		for i := range c {
			for j := i + 1; j < len(c) && c[j]-c[i] <= maxPitch; j++ {
				hist[int(4*(c[j]-c[i]))]++
			}
		}
	}
	cnt := make([]int, nb)
	best := 0
	for b := 12; b < nb; b++ {
		p := float64(b) / 4
		t := latticeTol(p)
		for k := max(0, int(math.Ceil(4*(p-t)))); k <= min(nb-1, int(4*(p+t))); k++ {
			cnt[b] += hist[k]
		}
		best = max(best, cnt[b])
	}
	if best == 0 {
		return 0
	}
	var keep []bool
	bestP, bestKept := 0.0, 0
	for b := 12; b < nb; b++ {
		// Candidates: local maxima of the pair count, not rare.
		if 10*cnt[b] < 3*best || (b > 12 && cnt[b-1] > cnt[b]) || (b+1 < nb && cnt[b+1] >= cnt[b]) {
			continue
		}
		p := float64(b) / 4
		kept := 0
		for _, c := range centres {
			keep = slices.Grow(keep[:0], len(c))[:len(c)]
			kept += onChain(c, p, keep)
		}
		if kept > bestKept {
			bestP, bestKept = p, kept
		}
	}
	// A grid runs across the page: on average four lattice lines or more
	// per segment (a stray run of five QRS strokes is not one).
	if bestKept < 4*len(centres) {
		return 0
	}
	// Refine: the mean spacing of consecutive chained lines.
	sum, n := 0.0, 0
	t := latticeTol(bestP)
	for _, c := range centres {
		keep = slices.Grow(keep[:0], len(c))[:len(c)]
		onChain(c, bestP, keep)
		for i := 1; i < len(c); i++ {
			if d := c[i] - c[i-1]; keep[i] && keep[i-1] && math.Abs(d-bestP) <= t {
				sum += d
				n++
			}
		}
	}
	if n == 0 {
		return bestP
	}
	return sum / float64(n)
}

// keepLattice clears the flags of one family of lines (rows per strip or
// columns per band; n entries per segment) that are not on a run of
// minChain lines at the family's pitch, and all of them when there is no
// lattice. It returns the pitch (px, 0 for none).
func keepLattice(line []bool, n int, maxPitch float64) float64 {
	segs := len(line) / n
	centres := make([][]float64, segs)
	for s := range segs {
		centres[s] = lineCentres(line[s*n:(s+1)*n], nil)
	}
	pitch := latticePitch(centres, maxPitch)
	var keep []bool
	for s := range segs {
		seg := line[s*n : (s+1)*n]
		if pitch == 0 {
			clear(seg)
			continue
		}
		c := centres[s]
		keep = slices.Grow(keep[:0], len(c))[:len(c)]
		onChain(c, pitch, keep)
		for i := range c {
			if keep[i] {
				continue
			}
			// Clear the run around centre i.
			for k := int(c[i]); k >= 0 && seg[k]; k-- {
				seg[k] = false
			}
			for k := int(c[i]) + 1; k < n && seg[k]; k++ {
				seg[k] = false
			}
		}
	}
	return pitch
}

// medianLevel returns the median on-level of the flagged lines (0 when
// none is flagged).
func medianLevel(line []bool, level []float64) float64 {
	var lv []float64
	for i, l := range line {
		if l {
			lv = append(lv, level[i])
		}
	}
	if len(lv) == 0 {
		return 0
	}
	slices.Sort(lv)
	return lv[len(lv)/2]
}
