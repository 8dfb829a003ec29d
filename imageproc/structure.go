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
	const strips = 8
	rowLine := make([]bool, w*0+h*strips) // [strip][y]
	colLine := make([]bool, w*strips)     // [band][x]
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
