package imageproc

import (
	"image"
	"math"
	"slices"
)

// Grid colour families reported in Page.GridColor.
const (
	GridRed    = "red"
	GridPink   = "pink"
	GridOrange = "orange"
	GridGreen  = "green"
	GridBlue   = "blue"
	GridGrey   = "grey"
	GridNone   = "none"
)

// separator splits normalised pixels into grid and ink strengths.
type separator struct {
	family string
	colour bool
	// Least-squares solution rows: α = ka·a, β = kb·a for absorption a
	// (255 − channel); α in units of the grid's own absorption, β in
	// per-channel absorption of neutral ink.
	ka, kb [3]float64
	inkLo  float64 // absorption below which a pixel is not ink
	inkHi  float64 // absorption at which it is certainly ink
}

// analyseColour finds the grid's colour family on a background-normalised
// page: hue histogram of chromatic, not-too-dark pixels.
func analyseColour(m *image.NRGBA, mask []bool, block int) *separator {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	nbx := (w + block - 1) / block
	const bins = 36
	var hist [bins]float64
	var sum [bins][3]float64
	total, chrom := 0, 0
	for y := 0; y < h; y++ {
		row := m.Pix[y*m.Stride : y*m.Stride+4*w]
		for i := 0; i < len(row); i += 4 {
			if mask != nil && !mask[(y/block)*nbx+i/4/block] {
				continue
			}
			r, g, b := float64(row[i]), float64(row[i+1]), float64(row[i+2])
			total++
			mx, mn := max(r, g, b), min(r, g, b)
			if mx-mn < 28 || mx < 70 {
				continue
			}
			chrom++
			k := int(hue(r, g, b)/360*bins) % bins
			hist[k]++
			sum[k][0] += r
			sum[k][1] += g
			sum[k][2] += b
		}
	}
	s := &separator{family: GridGrey, inkLo: 50, inkHi: 150}
	if total == 0 || float64(chrom) < 0.004*float64(total) {
		return s
	}
	// Dominant hue with its neighbours.
	best, bk := -1.0, 0
	for k := range hist {
		v := hist[(k+bins-1)%bins] + hist[k] + hist[(k+1)%bins]
		if v > best {
			best, bk = v, k
		}
	}
	if best < 0.5*float64(chrom) {
		return s // many hues: a photo of something, or colour labels only
	}
	// A printed grid covers the whole sheet: its colour must appear in
	// most blocks, not only along an edge, a shadow or a header.
	if !spread(m, mask, block, bk, bins) {
		return s
	}
	var c [3]float64
	n := 0.0
	for _, k := range []int{(bk + bins - 1) % bins, bk, (bk + 1) % bins} {
		for j := 0; j < 3; j++ {
			c[j] += sum[k][j]
		}
		n += hist[k]
	}
	for j := range c {
		c[j] /= n
	}
	hdeg := hue(c[0], c[1], c[2])

	switch {
	case hdeg >= 330 || hdeg < 18:
		if min(c[0], c[1], c[2]) < 120 {
			s.family = GridRed
		} else {
			s.family = GridPink
		}
	case hdeg < 50:
		s.family = GridOrange
	case hdeg >= 70 && hdeg < 170:
		s.family = GridGreen
	case hdeg >= 170 && hdeg < 260:
		s.family = GridBlue
	case hdeg >= 260:
		s.family = GridPink // magenta-ish
	default:
		s.family = GridOrange // yellowish
	}
	s.colour = true
	// Absorption direction of the grid colour and of neutral ink.
	u := [3]float64{255 - c[0], 255 - c[1], 255 - c[2]}
	nu := math.Sqrt(u[0]*u[0] + u[1]*u[1] + u[2]*u[2])
	if nu < 1 {
		s.colour = false
		s.family = GridGrey
		return s
	}
	nn := [3]float64{1, 1, 1}
	// Normal equations for a ≈ α·u + β·nn.
	uu := u[0]*u[0] + u[1]*u[1] + u[2]*u[2]
	un := u[0] + u[1] + u[2]
	const nnn = 3.0
	det := uu*nnn - un*un
	if det < 1e-6*uu*nnn {
		s.colour = false
		s.family = GridGrey
		return s
	}
	for j := 0; j < 3; j++ {
		s.ka[j] = (nnn*u[j] - un*nn[j]) / det
		s.kb[j] = (uu*nn[j] - un*u[j]) / det
	}
	s.inkLo, s.inkHi = 45, 140
	return s
}

// hue returns the HSV hue of (r, g, b) in degrees [0, 360).
func hue(r, g, b float64) float64 {
	mx, mn := max(r, g, b), min(r, g, b)
	d := mx - mn
	if d == 0 {
		return 0
	}
	var h float64
	switch mx {
	case r:
		h = math.Mod((g-b)/d, 6)
	case g:
		h = (b-r)/d + 2
	default:
		h = (r-g)/d + 4
	}
	h *= 60
	if h < 0 {
		h += 360
	}
	return h
}

// maps computes luminance, ink and grid strength of src normalised by bg.
// In grey mode the grid map is filled by structureSplit afterwards. The
// arithmetic is fixed point: gains in 1/256, coefficients in 1/1024.
func (s *separator) maps(src *image.NRGBA, bg *background) (gray, ink, grd *image.Gray) {
	w, h := src.Rect.Dx(), src.Rect.Dy()
	r := image.Rect(0, 0, w, h)
	gray, ink, grd = image.NewGray(r), image.NewGray(r), image.NewGray(r)
	g := make([]uint32, 3*w)
	f := s.fixed()
	for y := 0; y < h; y++ {
		bg.gainRowFixed(g, y, w)
		f.row(src.Pix[y*src.Stride:y*src.Stride+4*w], g, gray.Pix[y*gray.Stride:y*gray.Stride+w],
			ink.Pix[y*ink.Stride:y*ink.Stride+w], grd.Pix[y*grd.Stride:y*grd.Stride+w])
	}
	return gray, ink, grd
}

// sat8 clamps v to 0..255.
func sat8(v int32) uint8 {
	if v <= 0 {
		return 0
	}
	if v >= 255 {
		return 255
	}
	return uint8(v)
}

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

// spread reports whether chromatic pixels of hue bin bk (±1) occur in at
// least half of the (paper) blocks.
func spread(m *image.NRGBA, mask []bool, block, bk, bins int) bool {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	nbx, nby := (w+block-1)/block, (h+block-1)/block
	cnt := make([]int, nbx*nby)
	for y := 0; y < h; y++ {
		row := m.Pix[y*m.Stride : y*m.Stride+4*w]
		for x := 0; x < w; x++ {
			r, g, b := float64(row[4*x]), float64(row[4*x+1]), float64(row[4*x+2])
			mx, mn := max(r, g, b), min(r, g, b)
			if mx-mn < 28 || mx < 70 {
				continue
			}
			k := int(hue(r, g, b)/360*float64(bins)) % bins
			if d := (k - bk + bins) % bins; d <= 1 || d == bins-1 {
				cnt[(y/block)*nbx+x/block]++
			}
		}
	}
	paper, with := 0, 0
	for i, c := range cnt {
		if mask != nil && !mask[i] {
			continue
		}
		paper++
		if c >= 3 {
			with++
		}
	}
	return paper > 0 && 2*with >= paper
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
