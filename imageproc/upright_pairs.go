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
	src   *source
	f     *sepFixed
	bg    *background // in input px
	row   []uint8
	g     []uint32
	sc    gainScratch
	lanes []ycbcrLanes // fillYCbCr's vector constants, one per segment
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
			n := runLength(e, de, xb-x)
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
		n := runLength(sv, step, w-x)
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
// segment (ycbcrSeg). The same sums as fill, without writing a converted
// row and with three products a pixel saved; the channels are kept to
// 1/128 of a level, so that a pixel fits 16-bit vector lanes (on amd64
// the whole segments go to fillYCbCrSIMD, eight pixels a step). The
// clipping matters: JPEG ringing beside red grid lines pushes red past
// 255, which the separation's negative red weight would read as grid.
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
	nseg := (w + ycbcrSegment - 1) / ycbcrSegment
	if len(ps.lanes) != nseg {
		ps.lanes = make([]ycbcrLanes, nseg)
	}
	a := ycbcrConstants(f)
	// Whole segments go to fillYCbCrSIMD in one call when every sum of
	// the row fits the vector lanes (ycbcrFits); the others to
	// ycbcrSeg.fill.
	vector := haveLerpSIMD && ycbcrFits(f, a, col)
	full := 0
	if vector {
		full = w / ycbcrSegment
	}
	inv := 1 / bg.cell
	var seg ycbcrSeg
	for k := range ps.lanes {
		xs := k * ycbcrSegment
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
		var g [3]float64
		for j := range g {
			g[j] = (1-ax)*col[j][x0] + ax*col[j][x1]
		}
		seg.set(f, g, a)
		if k < full {
			ps.lanes[k].set(&seg)
			continue
		}
		seg.fill(di[xs:xe], dg[xs:xe], yr[xs:xe], cbr[xs/2:], crr[xs/2:])
	}
	if full > 0 {
		n := full * ycbcrSegment
		fillYCbCrSIMD(di[:n], dg[:n], yr[:n], cbr[:n/2], crr[:n/2], ps.lanes[:full], int32(a[0]), int32(a[1]))
	}
}

// ycbcrFits reports whether every segment's sums in a row with the block
// gains col fit fillYCbCrSIMD's 32-bit lanes: each coefficient with its
// gain (at most the row's largest, rounded) within 16 bits, and the
// constant part plus the largest products of the 16-bit channels (at
// most 255·128) within 32 bits. Always, for the separators this package
// estimates (coefficients of a few thousand, gains near 1); otherwise the
// row is computed by ycbcrSeg.fill, whose sums are 64-bit.
func ycbcrFits(f *sepFixed, a [2]int64, col gainScratch) bool {
	var gmax [3]float64
	for j := range gmax {
		for _, v := range col[j] {
			gmax[j] = max(gmax[j], v)
		}
	}
	for c, k := range [2][3]int32{f.kb, f.ka} {
		m := float64(abs64(a[c]))
		for j, v := range k {
			kk := math.Abs(float64(v))*gmax[j] + 1
			if kk > math.MaxInt16 {
				return false
			}
			m += 255 << 7 * kk
		}
		if m > math.MaxInt32 {
			return false
		}
	}
	return true
}

// ycbcrConstants returns the constant parts of fillYCbCr's ink and grid
// sums (17 fractional bits): Σ 255·k, the absorption of black, less the
// ink offset.
func ycbcrConstants(f *sepFixed) [2]int64 {
	var a [2]int64
	for j := 0; j < 3; j++ {
		a[0] += 255 * int64(f.kb[j])
		a[1] += 255 * int64(f.ka[j])
	}
	a[0] = (a[0] - int64(f.off)<<10) << 7
	a[1] <<= 7
	return a
}

// ycbcrSeg holds a segment's constants for fillYCbCr: the ink and grid
// coefficients with the gains folded in (10 fractional bits), the
// constant parts (ycbcrConstants) and each channel's clipping level, the
// level its gain takes to white (7 fractional bits).
type ycbcrSeg struct {
	k   [2][3]int64 // ink, grid
	a   [2]int64
	top [3]int32
}

func (s *ycbcrSeg) set(f *sepFixed, g [3]float64, a [2]int64) {
	s.a = a
	for j := 0; j < 3; j++ {
		s.k[0][j] = roundHalfAway(float64(f.kb[j]) * g[j])
		s.k[1][j] = roundHalfAway(float64(f.ka[j]) * g[j])
		s.top[j] = int32(min(255<<7, roundHalfAway(255<<7/g[j])))
	}
}

// roundHalfAway is math.Round for the moderate values of the separation's
// coefficients, without its branches on special values.
func roundHalfAway(v float64) int64 {
	if v < 0 {
		return -int64(0.5 - v)
	}
	return int64(v + 0.5)
}

// fill separates the segment's pixels (y: their luma, cb and cr: their
// chroma samples, one per pixel pair, the first for y[0]) into di and dg.
// The chroma terms are the JFIF conversion's in 1/128 of a level, each
// product floored, and the channels are clipped in the same units.
func (s *ycbcrSeg) fill(di, dg []int16, y, cb, cr []uint8) {
	di, dg = di[:len(y)], dg[:len(y)]
	t0, t1, t2 := s.top[0], s.top[1], s.top[2]
	ki, kg, ai, ag := s.k[0], s.k[1], s.a[0], s.a[1]
	for x := range y {
		cb1, cr1 := int32(cb[x>>1])-128, int32(cr[x>>1])-128
		y7 := int32(y[x]) << 7
		r := int64(min(max(y7+(91881*cr1)>>9, 0), t0))
		g := int64(min(max(y7+(-22554*cb1)>>9+(-46802*cr1)>>9, 0), t1))
		b := int64(min(max(y7+(116130*cb1)>>9, 0), t2))
		di[x] = int16(min(max((ai-ki[0]*r-ki[1]*g-ki[2]*b)>>17, -pairLimit), pairLimit))
		dg[x] = int16(min(max((ag-kg[0]*r-kg[1]*g-kg[2]*b)>>17, -pairLimit), pairLimit))
	}
}

// ycbcrLanes is a segment's constants as fillYCbCrSIMD reads them
// (offsets fixed in lerp_amd64.s), two 16-bit values to a word, which it
// copies into every lane: the ink and grid coefficients as (red, green)
// and (blue, 0), and each channel's clipping level twice.
type ycbcrLanes struct {
	inkRG, inkB, gridRG, gridB uint32
	top                        [3]uint32
	_                          uint32
}

// set fills l from s, whose sums fit the lanes (ycbcrFits).
func (l *ycbcrLanes) set(s *ycbcrSeg) {
	l.inkRG = uint32(uint16(s.k[0][0])) | uint32(uint16(s.k[0][1]))<<16
	l.inkB = uint32(uint16(s.k[0][2]))
	l.gridRG = uint32(uint16(s.k[1][0])) | uint32(uint16(s.k[1][1]))<<16
	l.gridB = uint32(uint16(s.k[1][2]))
	for j, t := range s.top {
		l.top[j] = uint32(uint16(t)) * 0x10001
	}
}

func abs64(v int64) int64 {
	if v < 0 {
		return -v
	}
	return v
}
