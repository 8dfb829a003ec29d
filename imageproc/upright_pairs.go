package imageproc

import "math"

// Separate first, then resample: the upright pass of a deskewed colour
// page separates each input row once, in the input's own frame and with
// the background's gains at the input's pixels, into the linear parts of
// the two maps the page keeps (ink and grid strength), samples those
// bilinearly into the upright frame and clips them there. (Grey pages
// keep the luminance, which their structural split and calibration read,
// and are resampled first.) Sampling the
// colours first and separating every upright pixel (affineSepRow)
// interpolated three channels and separated each pixel of the larger
// upright page; here two values are interpolated and the conversion,
// gains and separation run once per input pixel. The maps are linear in
// the gained colours up to their final clipping, which both paths apply
// after interpolating, so they differ only where a colour channel
// saturates under its gain (paper brighter than its background estimate)
// and by rounding: a few levels (TestPairPathNearColourPath).

// pairLimit bounds the stored linear values, so that the fixed-point
// interpolation stays inside int32; far beyond the 0..255 the maps clip
// to.
const pairLimit = 16383

// pairSource makes the input rows of a pair window: row y converted to
// NRGBA (scratch row), its gains (g, in the input's frame) and the two
// linear map values interleaved into d (2 per pixel).
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
// final clipping: d[2x], d[2x+1] receive the linear ink and grid strength
// of the NRGBA pixels of row with the gains g (3 per pixel, 8.8 fixed
// point); samplePairRow clips them as row does.
func (f *sepFixed) pairRow(row []uint8, g []uint32, d []int16) {
	w := len(d) / 2
	row = row[:4*w]
	g = g[:3*w]
	ka, kb, off := f.ka, f.kb, f.off
	for x := 0; x < w; x++ {
		p := row[4*x : 4*x+3 : 4*x+3]
		k := g[3*x : 3*x+3 : 3*x+3]
		rr := min(255, (uint32(p[0])*k[0]+128)>>8)
		gg := min(255, (uint32(p[1])*k[1]+128)>>8)
		bb := min(255, (uint32(p[2])*k[2]+128)>>8)
		a0, a1, a2 := 255-int32(rr), 255-int32(gg), 255-int32(bb)
		o := d[2*x : 2*x+2 : 2*x+2]
		o[0] = int16(min(max((kb[0]*a0+kb[1]*a1+kb[2]*a2)>>10-off, -pairLimit), pairLimit))
		o[1] = int16(min(max((ka[0]*a0+ka[1]*a1+ka[2]*a2)>>10, -pairLimit), pairLimit))
	}
}

// paperPair is what pairRow gives white paper (outside the input).
func (f *sepFixed) paperPair() [2]int16 {
	var d [2]int16
	f.pairRow([]uint8{255, 255, 255, 255}, []uint32{256, 256, 256}, d[:])
	return d
}

// samplePairRow fills a and b (one upright row each) by sampling the
// interleaved linear maps bilinearly along a line and clipping the
// samples to 0..255: the source point starts at (sx, sy) and advances by
// (stepX, stepY) per pixel (32.32 fixed point); the maps are rows of ss
// values, input row y at sp[(y−lo)·ss], sw×sh pairs in all; outside them
// they hold paper. The weights are affineRowNRGBA's (rounded to 1/256
// along each axis).
func samplePairRow(a, b []uint8, sp []int16, ss, sw, sh, lo int, sx, sy, stepX, stepY int64, paper [2]int16) {
	w := len(a)
	b = b[:w]
	xa, xb := interiorRun(w, sw, sh, sx, sy, stepX, stepY)
	edge := func(x int) {
		px, py := sx+int64(x)*stepX, sy+int64(x)*stepY
		if !(px > -fixOne && py > -fixOne && px < int64(sw)<<32 && py < int64(sh)<<32) {
			a[x], b[x] = sat8(int32(paper[0])), sat8(int32(paper[1]))
			return
		}
		// Floor, also just left of or above the input.
		x0, y0 := int(px>>32), int(py>>32)
		ax := int32(((px & (fixOne - 1)) + 1<<23) >> 24)
		ay := int32(((py & (fixOne - 1)) + 1<<23) >> 24)
		pick := func(xx, yy, k int) int32 {
			if xx < 0 || yy < 0 || xx >= sw || yy >= sh {
				return int32(paper[k])
			}
			return int32(sp[(yy-lo)*ss+2*xx+k])
		}
		for k, o := range [2][]uint8{a, b} {
			t0 := pick(x0, y0, k)<<8 + ax*(pick(x0+1, y0, k)-pick(x0, y0, k))
			t1 := pick(x0, y0+1, k)<<8 + ax*(pick(x0+1, y0+1, k)-pick(x0, y0+1, k))
			o[x] = sat8((t0<<8 + ay*(t1-t0) + 32768) >> 16)
		}
	}
	for x := 0; x < xa; x++ {
		edge(x)
	}
	if xb > xa {
		samplePairs(a[xa:xb], b[xa:xb], sp, ss, sx+int64(xa)*stepX, sy+int64(xa)*stepY-int64(lo)<<32, stepX, stepY)
	}
	for x := xb; x < w; x++ {
		edge(x)
	}
}

// samplePairs is samplePairRow's inner run: every source point has its
// four neighbours inside the maps (sy relative to the first row of sp).
// (Skipping pixels whose four neighbours are all paper in both maps
// measured no faster: on a scan about half the pixels are not.)
func samplePairs(a, b []uint8, sp []int16, ss int, sx, sy, stepX, stepY int64) {
	b = b[:len(a)]
	for x := range a {
		i := int(sy>>32)*ss + 2*int(sx>>32)
		ax := int32(((sx & (fixOne - 1)) + 1<<23) >> 24)
		ay := int32(((sy & (fixOne - 1)) + 1<<23) >> 24)
		sx += stepX
		sy += stepY
		c0 := sp[i : i+4 : i+4]
		c1 := sp[i+ss : i+ss+4 : i+ss+4]
		t0 := int32(c0[0])<<8 + ax*(int32(c0[2])-int32(c0[0]))
		t1 := int32(c1[0])<<8 + ax*(int32(c1[2])-int32(c1[0]))
		a[x] = clip8((t0<<8 + ay*(t1-t0) + 32768) >> 16)
		u0 := int32(c0[1])<<8 + ax*(int32(c0[3])-int32(c0[1]))
		u1 := int32(c1[1])<<8 + ax*(int32(c1[3])-int32(c1[1]))
		b[x] = clip8((u0<<8 + ay*(u1-u0) + 32768) >> 16)
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
	d = d[:2*w]
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
		px := func(o []int16, yv uint8, kr, kg, kB int64) {
			y16 := int64(yv) << 16
			r := min(max(y16+kr, 0), t0)
			g := min(max(y16+kg, 0), t1)
			b := min(max(y16+kB, 0), t2)
			o[0] = int16(min(max((aInk-kb0*r-kb1*g-kb2*b)>>26, -pairLimit), pairLimit))
			o[1] = int16(min(max((aGrid-ka0*r-ka1*g-ka2*b)>>26, -pairLimit), pairLimit))
		}
		x := xs
		for ; x+1 < xe; x += 2 {
			kr, kg, kB := chromaTerms(cbr[x>>1], crr[x>>1])
			p := yr[x : x+2 : x+2]
			o := d[2*x : 2*x+4 : 2*x+4]
			px(o[0:2], p[0], int64(kr), int64(kg), int64(kB))
			px(o[2:4], p[1], int64(kr), int64(kg), int64(kB))
		}
		if x < xe {
			kr, kg, kB := chromaTerms(cbr[x>>1], crr[x>>1])
			px(d[2*x:2*x+2], yr[x], int64(kr), int64(kg), int64(kB))
		}
	}
}
