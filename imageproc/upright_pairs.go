package imageproc

import "math"

// Separate first, then resample: the upright pass of a deskewed colour
// page separates each input row once, in the input's own frame and with
// the background's gains at the input's pixels, into the linear parts of
// the two maps the page keeps (ink and grid strength), resamples those
// into the upright frame in two one-dimensional passes (shear) and clips
// them there. (Grey pages
// keep the luminance, which their structural split and calibration read,
// and are resampled first.) Sampling the
// colours first and separating every upright pixel (affineSepRow)
// interpolated three channels and separated each pixel of the larger
// upright page; here two values are interpolated and the conversion,
// gains and separation run once per input pixel. The maps are linear in
// the gained colours up to their final clipping, which both paths apply
// after interpolating, so they differ only where a colour channel
// saturates under its gain (paper brighter than its background estimate),
// by rounding, and by the two passes' geometry (a fraction of the skew's
// sine of a pixel): a few levels (TestPairPathNearColourPath).

// pairLimit bounds the stored linear values, so that the fixed-point
// interpolation stays inside int32; far beyond the 0..255 the maps clip
// to.
const pairLimit = 16383

// pairSource makes the input rows of a pair window: row y converted to
// NRGBA (scratch row), its gains (g, in the input's frame) and the two
// linear map values into d (the ink values of the row, then its grid
// values).
type pairSource struct {
	src *source
	f   *sepFixed
	bg  *background // in input px
	row []uint8
	g   []uint32
	sc  gainScratch
}

func newPairSource(src *source, f *sepFixed, bg *background) *pairSource {
	return &pairSource{src: src, f: f, bg: bg, row: make([]uint8, 4*src.w), g: make([]uint32, 3*src.w)}
}

// filler returns the function that separates input rows: fillYCbCr for
// subsampled Y′CbCr input, fill otherwise.
func (ps *pairSource) filler() func(d []int16, y int) {
	if ps.src.ycc != nil && ps.src.hs == 1 {
		return ps.fillYCbCr
	}
	return ps.fill
}

// fill separates input row y into d (2·w values).
func (ps *pairSource) fill(d []int16, y int) {
	w := ps.src.w
	row := ps.src.row(ps.row, y)
	ps.bg.gainRowFixedInto(ps.g, &ps.sc, y, w)
	ps.f.pairRow(row, ps.g, d[:2*w])
}

// pairRow is row for the pair layout of a colour separator, before the
// final clipping: d[x] and d[w+x] (w = len(d)/2) receive the linear ink
// and grid strength of the NRGBA pixels of row with the gains g (3 per
// pixel, 8.8 fixed point); sampleShearedRow clips them as row does.
func (f *sepFixed) pairRow(row []uint8, g []uint32, d []int16) {
	w := len(d) / 2
	row = row[:4*w]
	g = g[:3*w]
	di, dg := d[:w], d[w:2*w]
	ka, kb, off := f.ka, f.kb, f.off
	for x := 0; x < w; x++ {
		p := row[4*x : 4*x+3 : 4*x+3]
		k := g[3*x : 3*x+3 : 3*x+3]
		rr := min(255, (uint32(p[0])*k[0]+128)>>8)
		gg := min(255, (uint32(p[1])*k[1]+128)>>8)
		bb := min(255, (uint32(p[2])*k[2]+128)>>8)
		a0, a1, a2 := 255-int32(rr), 255-int32(gg), 255-int32(bb)
		di[x] = int16(min(max((kb[0]*a0+kb[1]*a1+kb[2]*a2)>>10-off, -pairLimit), pairLimit))
		dg[x] = int16(min(max((ka[0]*a0+ka[1]*a1+ka[2]*a2)>>10, -pairLimit), pairLimit))
	}
}

// paperPair is what pairRow gives white paper (outside the input).
func (f *sepFixed) paperPair() [2]int16 {
	var d [2]int16
	f.pairRow([]uint8{255, 255, 255, 255}, []uint32{256, 256, 256}, d[:])
	return d
}

// shear splits the affine map hm (upright px → input px: x = a·X + b·Y
// + t0, y = c·X + d·Y + t1, d > 0) into two one-dimensional resamplings:
// the upright pixel (X, Y) lies on input row v = c·X + d·Y + t1, where the
// line of upright column X crosses it at x = (det/d)·X + (b/d)·v + t0 −
// b·t1/d. So each input row is resampled once along x onto the upright
// columns (shearPairRow: start rowStart(v), step det/d), and each upright
// pixel interpolates between the two made rows around v in its own column
// (sampleShearedRow). Against bilinear sampling this reads the row below
// at a point |b/d| (the sine of the skew: 0.02 px at 1°) further along,
// and rounds once in between; it interpolates two values where bilinear
// sampling interpolates three, with no per-pixel address arithmetic.
type shear struct {
	x0, xv   float64 // row start x = x0 + xv·v, input px
	step     int64   // x step per upright column, 32.32
	paper    [2]int16
	paperRow []int16 // a made row of paper, 2 values per upright column
}

func newShear(hm Homography, paper [2]int16, w int) shear {
	a, b, t0, c, d, t1 := hm[0], hm[1], hm[2], hm[3], hm[4], hm[5]
	s := shear{x0: t0 - b*t1/d, xv: b / d, step: toFix32((a*d - b*c) / d), paper: paper, paperRow: make([]int16, 2*w)}
	for x := 0; x < w; x++ {
		s.paperRow[x], s.paperRow[w+x] = paper[0], paper[1]
	}
	return s
}

// rowStart is the input x of upright column 0 on input row v, 32.32.
func (s *shear) rowStart(v int) int64 { return toFix32(s.x0 + s.xv*float64(v)) }

// shearPairRow is the first half of the upright pass's resampling: one
// input row of separated pairs (row: the sw ink values, then the sw grid
// values) resampled along x into d (the same layout, one value per
// upright column): d holds row's values at x = sx + X·step (32.32 fixed
// point), interpolated linearly with weights rounded to 1/256 and
// rounded to whole levels; outside the row, paper.
func shearPairRow(d, row []int16, sx, step int64, paper [2]int16) {
	w, sw := len(d)/2, len(row)/2
	xa, xb := interiorRun(w, sw, 2, sx, 0, step, 0)
	xb = max(xa, xb)
	for k := 0; k < 2; k++ {
		src, dst, pk := row[k*sw:(k+1)*sw], d[k*w:(k+1)*w], int32(paper[k])
		edge := func(x int) {
			p := sx + int64(x)*step
			i := int(p >> 32) // floor, also left of the row
			f := int32(((p & (fixOne - 1)) + 1<<23) >> 24)
			a, b := pk, pk
			if i >= 0 && i < sw {
				a = int32(src[i])
			}
			if i+1 >= 0 && i+1 < sw {
				b = int32(src[i+1])
			}
			dst[x] = int16((a<<8 + f*(b-a) + 128) >> 8)
		}
		for x := 0; x < xa; x++ {
			edge(x)
		}
		// Inside, x maps to input pixel x + k with k constant over long
		// segments (the step is 1/cos of the skew): each is one lerpI16.
		de := step - fixOne
		for x := xa; x < xb; {
			e := sx + int64(x)*step - int64(x)<<32 // x's source point less x
			k := int(e >> 32)
			n := xb - x
			switch {
			case de > 0:
				n = int(min(int64(n), (int64(k+1)<<32-e+de-1)/de))
			case de < 0:
				n = int(min(int64(n), (e-int64(k)<<32)/-de+1))
			}
			lerpI16(dst[x:x+n], src[x+k:x+k+n], src[x+k+1:x+k+1+n], uint32(e), uint32(step))
			x += n
		}
		for x := xb; x < w; x++ {
			edge(x)
		}
	}
}

// sampleShearedRow is the second half: it fills a and b (one upright row
// each) from the rows shearPairRow made, interpolating along each column
// and clipping to 0..255. Pixel X reads made rows v>>32 and the one below
// at column X, v = sv + X·step (32.32); made row r is at sp[(r−lo)·ss]
// for 0 ≤ r < sh, and rows outside the input are paperRow. Along a row v
// moves by the sine of the skew a pixel, so the two rows read stay the
// same over runs of a few dozen pixels.
func sampleShearedRow(a, b []uint8, sp []int16, ss, sh, lo int, sv, step int64, paperRow []int16) {
	w := len(a)
	b = b[:w]
	st := newLerpSteps(uint32(step))
	rowAt := func(r int) []int16 {
		if r < 0 || r >= sh {
			return paperRow[:2*w]
		}
		return sp[(r-lo)*ss : (r-lo)*ss+2*w]
	}
	for x := 0; x < w; {
		r := int(sv >> 32)
		n := w - x
		switch {
		case step > 0:
			n = int(min(int64(n), (int64(r+1)<<32-sv+step-1)/step))
		case step < 0:
			n = int(min(int64(n), (sv-int64(r)<<32)/-step+1))
		}
		r0, r1 := rowAt(r), rowAt(r+1)
		lerp2U8(a[x:x+n], b[x:x+n], r0[x:x+n], r1[x:x+n], r0[w+x:w+x+n], r1[w+x:w+x+n], uint32(sv), &st)
		sv += int64(n) * step
		x += n
	}
}

// clip8 is sat8 without branches.
func clip8(v int32) uint8 { return uint8(min(max(v, 0), 255)) }

// ycbcrSegment is the run of pixels (an even number) over which
// fillYCbCr holds the background's gains constant: they are interpolated
// between blocks of a 24th of the page (≈ 115 px at 300 dpi), so across
// a segment they change by about a quarter of the difference between
// neighbouring blocks (a fraction of a level on scanned paper).
const ycbcrSegment = 32

// fillYCbCr is fill for 4:2:0 and 4:2:2 Y′CbCr input (hs = 1) and a
// colour separator, straight from the planes: the JFIF conversion (ITU-T
// T.871 §7, image/color's constants) with the chroma terms once per pixel
// pair, each channel clipped to 0..255 and to the level its gain takes to
// white (255/gain), and the separation applied to the clipped channels
// with the gains folded into its coefficients, which are constant over a
// segment. The same sums as fill in finer fixed point: no converted row
// is written, and three products a pixel are saved. The clipping matters:
// JPEG ringing beside red grid lines pushes red past 255, which the
// separation's negative red weight would read as grid.
func (ps *pairSource) fillYCbCr(d []int16, y int) {
	m := ps.src.ycc
	w := ps.src.w
	f := ps.f
	bg := ps.bg
	bg.blockGainsInto(&ps.sc, y, 255)
	col := ps.sc
	yr := m.Y[y*m.YStride : y*m.YStride+w]
	c0 := m.COffset(0, y)
	cw := (w + 1) / 2
	cbr, crr := m.Cb[c0:c0+cw], m.Cr[c0:c0+cw]
	di, dg := d[:w], d[w:2*w]
	// Constant parts, 16 fractional bits more than the coefficients'
	// 10: Σ k·255 (absorption of black) less the ink offset.
	var aInk, aGrid int64
	for j := 0; j < 3; j++ {
		aInk += 255 * int64(f.kb[j])
		aGrid += 255 * int64(f.ka[j])
	}
	aInk = (aInk - int64(f.off)<<10) << 16
	aGrid <<= 16
	inv := 1 / bg.cell
	for xs := 0; xs < w; xs += ycbcrSegment {
		xe := min(w, xs+ycbcrSegment)
		// The gains at the segment's centre (gainRowFixed's
		// interpolation between block centres).
		fx := (float64(xs+xe-1)/2+0.5)*inv - 0.5
		x0 := int(max(fx, 0))
		if x0 >= bg.nx-1 {
			x0, fx = bg.nx-1, float64(bg.nx-1)
		}
		x1 := min(x0+1, bg.nx-1)
		ax := max(fx, 0) - float64(x0)
		var kb, ka [3]int64
		var top [3]int64 // 255/gain in 16.16: the channel level the gain takes to white
		for j := 0; j < 3; j++ {
			g := (1-ax)*col[j][x0] + ax*col[j][x1]
			kb[j] = int64(math.Round(float64(f.kb[j]) * g))
			ka[j] = int64(math.Round(float64(f.ka[j]) * g))
			top[j] = min(255<<16, int64(math.Round(255/g*65536)))
		}
		kb0, kb1, kb2, ka0, ka1, ka2 := kb[0], kb[1], kb[2], ka[0], ka[1], ka[2]
		t0, t1, t2 := top[0], top[1], top[2]
		px := func(x int, yv uint8, kr, kg, kB int64) {
			y16 := int64(yv) << 16
			r := min(max(y16+kr, 0), t0)
			g := min(max(y16+kg, 0), t1)
			b := min(max(y16+kB, 0), t2)
			di[x] = int16(min(max((aInk-kb0*r-kb1*g-kb2*b)>>26, -pairLimit), pairLimit))
			dg[x] = int16(min(max((aGrid-ka0*r-ka1*g-ka2*b)>>26, -pairLimit), pairLimit))
		}
		x := xs
		for ; x+1 < xe; x += 2 {
			kr, kg, kB := chromaTerms(cbr[x>>1], crr[x>>1])
			p := yr[x : x+2 : x+2]
			px(x, p[0], int64(kr), int64(kg), int64(kB))
			px(x+1, p[1], int64(kr), int64(kg), int64(kB))
		}
		if x < xe {
			kr, kg, kB := chromaTerms(cbr[x>>1], crr[x>>1])
			px(x, yr[x], int64(kr), int64(kg), int64(kB))
		}
	}
}
