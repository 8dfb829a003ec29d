package imageproc

import (
	"image"
	"math"
	"slices"
)

// background is a smooth per-channel estimate of the paper's brightness:
// the 90th percentile of each channel per block of a downscaled page,
// median-filtered over 3×3 blocks, bilinearly interpolated between block
// centres (common practice for flat-field correction).
type background struct {
	nx, ny int
	cell   float64      // block size in the coordinates of the image it is applied to
	v      [3][]float64 // per channel, ny×nx
	col    [3][]float64 // scratch: one row of interpolated block values
}

// gainScratch holds one row of interpolated block gains per channel, so
// that rows can be processed concurrently (one scratch per worker).
type gainScratch [3][]float64

// estimateBackground measures the background of m with blocks of about
// block px; scale converts m's pixels into those of the image the
// estimate will be applied to (full-resolution px per m px).
func estimateBackground(m *image.NRGBA, block int, scale float64) *background {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	block = max(block, 4)
	nx, ny := max(1, (w+block-1)/block), max(1, (h+block-1)/block)
	bg := &background{nx: nx, ny: ny, cell: float64(block) * scale}
	raw := [3][]float64{}
	for c := range raw {
		raw[c] = make([]float64, nx*ny)
	}
	var hist [3][256]int
	for by := 0; by < ny; by++ {
		for bx := 0; bx < nx; bx++ {
			hist = [3][256]int{}
			n := 0
			for y := by * block; y < min(h, by*block+block); y++ {
				row := m.Pix[y*m.Stride:]
				for x := bx * block; x < min(w, bx*block+block); x++ {
					hist[0][row[4*x]]++
					hist[1][row[4*x+1]]++
					hist[2][row[4*x+2]]++
					n++
				}
			}
			for c := 0; c < 3; c++ {
				// 90th percentile from the top.
				need := n / 10
				acc := 0
				v := 255
				for ; v > 0; v-- {
					acc += hist[c][v]
					if acc > need {
						break
					}
				}
				raw[c][by*nx+bx] = float64(max(v, 24))
			}
		}
	}
	var nb []float64
	for c := 0; c < 3; c++ {
		bg.v[c] = make([]float64, nx*ny)
		for by := 0; by < ny; by++ {
			for bx := 0; bx < nx; bx++ {
				nb = nb[:0]
				for yy := max(0, by-1); yy <= min(ny-1, by+1); yy++ {
					for xx := max(0, bx-1); xx <= min(nx-1, bx+1); xx++ {
						nb = append(nb, raw[c][yy*nx+xx])
					}
				}
				slices.Sort(nb)
				bg.v[c][by*nx+bx] = nb[len(nb)/2]
			}
		}
	}
	return bg
}

// blockGains returns, per colour channel, scale/background at each block
// column for row y, interpolated between the two nearest block rows. The
// slices are bg.col, reused from row to row.
func (bg *background) blockGains(y int, scale float64) [3][]float64 {
	bg.blockGainsInto((*gainScratch)(&bg.col), y, scale)
	return bg.col
}

// blockGainsInto is blockGains writing into sc (resized as needed).
func (bg *background) blockGainsInto(sc *gainScratch, y int, scale float64) {
	fy := (float64(y)+0.5)/bg.cell - 0.5
	y0 := int(fy)
	if fy < 0 {
		y0, fy = 0, 0
	}
	if y0 >= bg.ny-1 {
		y0, fy = bg.ny-1, float64(bg.ny-1)
	}
	y1 := min(y0+1, bg.ny-1)
	ay := fy - float64(y0)
	if len(sc[0]) != bg.nx {
		for c := range sc {
			sc[c] = make([]float64, bg.nx)
		}
	}
	for c := 0; c < 3; c++ {
		for i := 0; i < bg.nx; i++ {
			sc[c][i] = scale * ((1-ay)/bg.v[c][y0*bg.nx+i] + ay/bg.v[c][y1*bg.nx+i])
		}
	}
}

// gainRow fills dst (3 per pixel) with 255/background for row y of a
// w-pixel-wide image (the gain itself is interpolated between blocks).
func (bg *background) gainRow(dst []float32, y, w int) {
	bg.gainRowCols(dst, y, bg.columns(w))
}

// gainCols holds, per pixel column, the two blocks gainRow interpolates
// between and the weight of the second: they depend on x alone, so a
// page's rows share them.
type gainCols struct {
	x0, x1 []int32
	ax     []float64
}

// columns returns the interpolation columns of gainRow for w pixels.
func (bg *background) columns(w int) *gainCols {
	gc := &gainCols{x0: make([]int32, w), x1: make([]int32, w), ax: make([]float64, w)}
	inv := 1 / bg.cell
	for x := 0; x < w; x++ {
		fx := (float64(x)+0.5)*inv - 0.5
		x0 := int(fx)
		if fx < 0 {
			x0, fx = 0, 0
		}
		if x0 >= bg.nx-1 {
			x0, fx = bg.nx-1, float64(bg.nx-1)
		}
		gc.x0[x], gc.x1[x], gc.ax[x] = int32(x0), int32(min(x0+1, bg.nx-1)), fx-float64(x0)
	}
	return gc
}

// gainRowCols is gainRow with the columns precomputed (the same values).
func (bg *background) gainRowCols(dst []float32, y int, gc *gainCols) {
	col := bg.blockGains(y, 255)
	w := len(gc.ax)
	dst = dst[:3*w]
	c0, c1, c2 := col[0], col[1], col[2]
	for x, ax := range gc.ax {
		x0, x1 := gc.x0[x], gc.x1[x]
		d := dst[3*x : 3*x+3 : 3*x+3]
		d[0] = float32((1-ax)*c0[x0] + ax*c0[x1])
		d[1] = float32((1-ax)*c1[x0] + ax*c1[x1])
		d[2] = float32((1-ax)*c2[x0] + ax*c2[x1])
	}
}

// gainRowFixed fills dst (3 per pixel) with the gain of gainRow in 8.8
// fixed point (256 = 1), rounded; the hot loops multiply by it directly.
// The per-block gains are interpolated along x incrementally: within a
// block pair the gain is linear in x, so one add per pixel replaces the
// per-pixel division and clamping of gainRow.
func (bg *background) gainRowFixed(dst []uint32, y, w int) {
	bg.gainRowFixedInto(dst, (*gainScratch)(&bg.col), y, w)
}

// gainRowFixedInto is gainRowFixed with the caller's scratch.
func (bg *background) gainRowFixedInto(dst []uint32, sc *gainScratch, y, w int) {
	bg.blockGainsInto(sc, y, 255*256)
	col := *sc
	inv := 1 / bg.cell
	dst = dst[:3*w]
	for x := 0; x < w; {
		fx := (float64(x)+0.5)*inv - 0.5
		x0 := int(fx)
		if fx < 0 {
			x0 = 0
		}
		if x0 >= bg.nx-1 || fx < 0 {
			// Flat margins: the outermost block's gain.
			xi := x0
			if fx >= 0 {
				xi = bg.nx - 1
			}
			// Extent of the flat run.
			end := w
			if fx < 0 {
				// fx < 0 while x+0.5 < cell/2.
				end = min(w, int(math.Ceil(bg.cell/2-0.5)))
				if end <= x {
					end = x + 1
				}
			}
			g0 := uint32(col[0][xi] + 0.5)
			g1 := uint32(col[1][xi] + 0.5)
			g2 := uint32(col[2][xi] + 0.5)
			for ; x < end; x++ {
				d := dst[3*x : 3*x+3 : 3*x+3]
				d[0], d[1], d[2] = g0, g1, g2
			}
			continue
		}
		// Pixels whose fx lies in [x0, x0+1): x < (x0+1.5)·cell − 0.5.
		end := min(w, int(math.Ceil((float64(x0)+1.5)*bg.cell-0.5)))
		if end <= x {
			end = x + 1
		}
		// Linear in x within the segment: start value and step in 32.32
		// fixed point (a segment is at most a few hundred px, so the
		// accumulated step rounding stays far below one unit).
		x1 := x0 + 1
		ax := (float64(x)+0.5)*inv - 0.5 - float64(x0)
		var v, dv [3]int64
		for c := 0; c < 3; c++ {
			v[c] = int64(math.Round((col[c][x0] + ax*(col[c][x1]-col[c][x0]) + 0.5) * (1 << 32)))
			dv[c] = int64(math.Round((col[c][x1] - col[c][x0]) * inv * (1 << 32)))
		}
		// Scalars rather than the arrays: the loop keeps them in registers.
		v0, v1, v2 := v[0], v[1], v[2]
		seg := dst[3*x : 3*end]
		for i := 0; i+2 < len(seg); i += 3 {
			d := seg[i : i+3 : i+3]
			d[0] = uint32(v0 >> 32)
			d[1] = uint32(v1 >> 32)
			d[2] = uint32(v2 >> 32)
			v0 += dv[0]
			v1 += dv[1]
			v2 += dv[2]
		}
		x = end
	}
}

// normalise returns a copy of m with each channel divided by bg (clamped
// to 255): paper becomes white whatever its tint and lighting.
//
// Each pixel's gains are gainRow's, computed in the same loop (no gain
// row written and read back), and the clamp has no branches: paper near
// white sits at the clamp at random, which defeated the branch predictor.
func normalise(m *image.NRGBA, bg *background) *image.NRGBA {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	dst := image.NewNRGBA(m.Rect)
	gc := bg.columns(w)
	x0s, x1s, axs := gc.x0[:w], gc.x1[:w], gc.ax[:w]
	for y := 0; y < h; y++ {
		col := bg.blockGains(y, 255)
		c0, c1, c2 := col[0], col[1], col[2]
		s := m.Pix[y*m.Stride : y*m.Stride+4*w]
		d := dst.Pix[y*dst.Stride : y*dst.Stride+4*w]
		for x, ax := range axs {
			i0, i1 := x0s[x], x1s[x]
			// gainRowCols' expressions, rounded to float32 as it stores them.
			g0 := float32((1-ax)*c0[i0] + ax*c0[i1])
			g1 := float32((1-ax)*c1[i0] + ax*c1[i1])
			g2 := float32((1-ax)*c2[i0] + ax*c2[i1])
			p := s[4*x : 4*x+3 : 4*x+3]
			o := d[4*x : 4*x+4 : 4*x+4]
			o[0] = clamp8(float32(p[0]) * g0)
			o[1] = clamp8(float32(p[1]) * g1)
			o[2] = clamp8(float32(p[2]) * g2)
			o[3] = 255
		}
	}
	return dst
}

// clamp8 rounds v to the nearest level within 0..255 (v ≥ 255 gives 255,
// v ≤ 0 gives 0). v is not NaN.
func clamp8(v float32) uint8 {
	return uint8(min(max(v, 0), 255) + 0.5)
}

// resample returns the background of a w×h image whose pixels map to
// bg's image through toBG (bg's cell is in those pixels), on blocks of
// block px: each block centre's value is bg interpolated there (paper
// white outside).
func (bg *background) resample(toBG Homography, w, h, block int) *background {
	return bg.resampleFunc(func(x, y float64) (float64, float64) { return Apply(toBG, x, y) }, w, h, block)
}
