package imageproc

import (
	"encoding/binary"
	"image"
	"math"
)

// source is the decoded input as Prepare reads it: row by row or sampled
// bilinearly, straight from the decoder's own pixel layout where that is
// 8-bit RGBA, 8-bit grey or JPEG's Y′CbCr, so that no full-page NRGBA
// copy of such input is made. Y′CbCr rows are converted where they are
// read: one at a time for the work copy, and into a sliding window of
// rows for the upright page (rowWindow), so each row is converted twice
// — about 5 ns a pixel, less than writing a 4-byte copy of the page and
// reading it back (35 MB for an A4 page at 300 dpi). Sampling the planes
// and converting the samples instead is not equivalent: the conversion
// clips (a red grid's red channel saturates on white paper) and that
// moved the grid colour estimate.
type source struct {
	w, h int
	rgb  *image.NRGBA // NRGBA input, opaque RGBA read as NRGBA, or a conversion
	gray *image.Gray  // Rect.Min at the origin
	ycc  *image.YCbCr // Rect.Min at the origin, a known subsampling
	hs   uint         // ycc's horizontal chroma shift (column x>>hs)
	img  image.Image  // the input, for the general conversion
}

// newSource wraps img. Inputs of other types (paletted, 16-bit, images
// whose Rect does not start at the origin, RGBA with transparency) are
// converted to NRGBA once, here.
func newSource(img image.Image) *source {
	b := img.Bounds()
	s := &source{w: b.Dx(), h: b.Dy(), img: img}
	switch m := img.(type) {
	case *image.NRGBA:
		if b.Min == (image.Point{}) {
			s.rgb = m
			return s
		}
	case *image.RGBA:
		// Opaque RGBA has the bytes of NRGBA (premultiplying by 255
		// changes nothing): read it in place.
		if b.Min == (image.Point{}) && opaque(m) {
			s.rgb = &image.NRGBA{Pix: m.Pix, Stride: m.Stride, Rect: m.Rect}
			return s
		}
	case *image.Gray:
		if b.Min == (image.Point{}) {
			s.gray = m
			return s
		}
	case *image.YCbCr:
		if hs, ok := chromaShift(m.SubsampleRatio); ok && b.Min == (image.Point{}) {
			s.ycc, s.hs = m, hs
			return s
		}
	}
	s.rgb = toNRGBA(img)
	return s
}

// opaque reports whether every alpha byte of m is 255.
func opaque(m *image.RGBA) bool {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	for y := 0; y < h; y++ {
		row := m.Pix[y*m.Stride : y*m.Stride+4*w]
		for i := 3; i < len(row); i += 4 {
			if row[i] != 255 {
				return false
			}
		}
	}
	return true
}

// nrgba returns the input as an *image.NRGBA (the input itself when it
// already is one; a Y′CbCr input converted on the first call and kept,
// for the photo registration and the general warps; otherwise a
// conversion, made on every call). Not safe for concurrent first calls.
func (s *source) nrgba() *image.NRGBA {
	if s.rgb != nil {
		return s.rgb
	}
	if s.ycc != nil {
		s.rgb = image.NewNRGBA(image.Rect(0, 0, s.w, s.h))
		ycbcrRows(s.rgb, s.ycc, s.hs)
		return s.rgb
	}
	return toNRGBA(s.img)
}

// row returns the NRGBA bytes of row y (4·w): a slice of the input when
// it is NRGBA, otherwise converted into buf (len ≥ 4·w).
func (s *source) row(buf []uint8, y int) []uint8 {
	w := s.w
	switch {
	case s.rgb != nil:
		return s.rgb.Pix[y*s.rgb.Stride : y*s.rgb.Stride+4*w]
	case s.ycc != nil:
		ycbcrRow(buf, s.ycc, s.hs, y)
	default:
		d := buf[:4*w]
		for x, v := range s.gray.Pix[y*s.gray.Stride : y*s.gray.Stride+w] {
			o := d[4*x : 4*x+4 : 4*x+4]
			o[0], o[1], o[2], o[3] = v, v, v, 255
		}
	}
	return buf[:4*w]
}

// ycbcrRow converts row y of m (Rect.Min at the origin) into d (4 bytes
// per pixel): the JFIF full-range conversion (ITU-T T.871 §7) in the
// 16-bit fixed point of image/color's YCbCrToRGB, which gives identical
// bytes. With 2:1 horizontal chroma (4:2:0, 4:2:2) the chroma terms are
// computed once per pixel pair (measured 15 % faster) and the pair is
// stored as one 8-byte word, clipped without branches (clipTo8; paper
// near white clips its red or blue channel at random, which defeated the
// branch predictor: 15 % faster again).
func ycbcrRow(d []uint8, m *image.YCbCr, hs uint, y int) {
	w := m.Rect.Dx()
	yr := m.Y[y*m.YStride : y*m.YStride+w]
	c0 := m.COffset(0, y)
	cw := (w-1)>>hs + 1
	cbr := m.Cb[c0 : c0+cw]
	crr := m.Cr[c0 : c0+cw]
	d = d[:4*w]
	x0 := 0
	if hs == 1 {
		n := w / 2
		cbr, crr = cbr[:n], crr[:n]
		for c, cb := range cbr {
			kr, kg, kb := chromaTerms(cb, crr[c])
			p := yr[2*c : 2*c+2 : 2*c+2]
			y0, y1 := int32(p[0])*0x10101, int32(p[1])*0x10101
			v := uint64(clipTo8(y0+kr)|clipTo8(y0+kg)<<8|clipTo8(y0+kb)<<16|0xff000000) |
				uint64(clipTo8(y1+kr)|clipTo8(y1+kg)<<8|clipTo8(y1+kb)<<16|0xff000000)<<32
			binary.LittleEndian.PutUint64(d[8*c:8*c+8], v)
		}
		x0 = 2 * n
		cbr, crr = m.Cb[c0:c0+cw], m.Cr[c0:c0+cw]
	}
	for x := x0; x < w; x++ {
		yy1 := int32(yr[x]) * 0x10101
		kr, kg, kb := chromaTerms(cbr[x>>hs], crr[x>>hs])
		o := d[4*x : 4*x+4 : 4*x+4]
		o[0] = clip16(yy1 + kr)
		o[1] = clip16(yy1 + kg)
		o[2] = clip16(yy1 + kb)
		o[3] = 255
	}
}

// chromaTerms returns the red, green and blue chroma terms of the JFIF
// conversion in 16.16 fixed point (image/color's YCbCrToRGB).
func chromaTerms(cb, cr uint8) (kr, kg, kb int32) {
	cb1, cr1 := int32(cb)-128, int32(cr)-128
	return 91881 * cr1, -22554*cb1 - 46802*cr1, 116130 * cb1
}

// clipTo8 is clip16 without a branch: v >> 16 clamped to 0..255.
func clipTo8(v int32) uint32 {
	return uint32(min(max(v>>16, 0), 255))
}

// affineRow fills d (4 bytes per pixel, one dst row) by sampling the
// source bilinearly along a line: the source point starts at (sx, sy)
// and advances by (stepX, stepY) per pixel, all in 32.32 fixed point.
// Samples outside the source are white paper. The bytes equal
// warpAffineNRGBA's on the converted input.
func (s *source) affineRow(d []uint8, sx, sy, stepX, stepY int64) {
	if s.rgb != nil {
		affineRowNRGBA(d, s.rgb.Pix, s.rgb.Stride, s.w, s.h, 0, sx, sy, stepX, stepY)
		return
	}
	affineRowGray(d, s.gray, sx, sy, stepX, stepY)
}

const fixOne = 1 << 32

// toFix32 converts v to 32.32 fixed point, rounded.
func toFix32(v float64) int64 { return int64(math.Round(v * fixOne)) }

// affineRowNRGBA is one row of warpAffineNRGBA for a sw×sh NRGBA input
// whose row y starts at sp[(y−lo)·ss] (lo > 0: a band of rows).
func affineRowNRGBA(d []uint8, sp []uint8, ss, sw, sh, lo int, sx, sy, stepX, stepY int64) {
	loX, loY := int64(-fixOne), int64(-fixOne)
	hiX, hiY := int64(sw)<<32, int64(sh)<<32
	var white = [4]uint8{255, 255, 255, 255}
	pick := func(xx, yy int) []uint8 {
		if xx < 0 || yy < 0 || xx >= sw || yy >= sh {
			return white[:]
		}
		i := (yy-lo)*ss + 4*xx
		return sp[i : i+4 : i+4]
	}
	dw := len(d) / 4
	for x := 0; x < dw; x, sx, sy = x+1, sx+stepX, sy+stepY {
		o := d[4*x : 4*x+4 : 4*x+4]
		if !(sx > loX && sy > loY && sx < hiX && sy < hiY) {
			o[0], o[1], o[2], o[3] = 255, 255, 255, 255
			continue
		}
		x0, y0 := int(sx>>32), int(sy>>32)
		// Rounded 8-bit weights, as round(frac·256).
		ax := uint32(((sx & (fixOne - 1)) + 1<<23) >> 24)
		ay := uint32(((sy & (fixOne - 1)) + 1<<23) >> 24)
		w00 := (256 - ax) * (256 - ay)
		w10 := ax * (256 - ay)
		w01 := (256 - ax) * ay
		w11 := ax * ay
		if x0 >= 0 && y0 >= 0 && x0+1 < sw && y0+1 < sh {
			i := (y0-lo)*ss + 4*x0
			c0 := sp[i : i+8 : i+8]
			c1 := sp[i+ss : i+ss+8 : i+ss+8]
			o[0] = uint8((w00*uint32(c0[0]) + w10*uint32(c0[4]) + w01*uint32(c1[0]) + w11*uint32(c1[4]) + 32768) >> 16)
			o[1] = uint8((w00*uint32(c0[1]) + w10*uint32(c0[5]) + w01*uint32(c1[1]) + w11*uint32(c1[5]) + 32768) >> 16)
			o[2] = uint8((w00*uint32(c0[2]) + w10*uint32(c0[6]) + w01*uint32(c1[2]) + w11*uint32(c1[6]) + 32768) >> 16)
			o[3] = 255
			continue
		}
		c00, c10, c01, c11 := pick(x0, y0), pick(x0+1, y0), pick(x0, y0+1), pick(x0+1, y0+1)
		o[0] = uint8((w00*uint32(c00[0]) + w10*uint32(c10[0]) + w01*uint32(c01[0]) + w11*uint32(c11[0]) + 32768) >> 16)
		o[1] = uint8((w00*uint32(c00[1]) + w10*uint32(c10[1]) + w01*uint32(c01[1]) + w11*uint32(c11[1]) + 32768) >> 16)
		o[2] = uint8((w00*uint32(c00[2]) + w10*uint32(c10[2]) + w01*uint32(c01[2]) + w11*uint32(c11[2]) + 32768) >> 16)
		o[3] = 255
	}
}

// affineRowGray is affineRowNRGBA for a grey input (one channel, copied
// to the three colour bytes).
func affineRowGray(d []uint8, src *image.Gray, sx, sy, stepX, stepY int64) {
	sw, sh := src.Rect.Dx(), src.Rect.Dy()
	sp := src.Pix
	ss := src.Stride
	loX, loY := int64(-fixOne), int64(-fixOne)
	hiX, hiY := int64(sw)<<32, int64(sh)<<32
	pick := func(xx, yy int) uint32 {
		if xx < 0 || yy < 0 || xx >= sw || yy >= sh {
			return 255
		}
		return uint32(sp[yy*ss+xx])
	}
	dw := len(d) / 4
	for x := 0; x < dw; x, sx, sy = x+1, sx+stepX, sy+stepY {
		o := d[4*x : 4*x+4 : 4*x+4]
		if !(sx > loX && sy > loY && sx < hiX && sy < hiY) {
			o[0], o[1], o[2], o[3] = 255, 255, 255, 255
			continue
		}
		x0, y0 := int(sx>>32), int(sy>>32)
		ax := uint32(((sx & (fixOne - 1)) + 1<<23) >> 24)
		ay := uint32(((sy & (fixOne - 1)) + 1<<23) >> 24)
		var c00, c10, c01, c11 uint32
		if x0 >= 0 && y0 >= 0 && x0+1 < sw && y0+1 < sh {
			i := y0*ss + x0
			c0 := sp[i : i+2 : i+2]
			c1 := sp[i+ss : i+ss+2 : i+ss+2]
			c00, c10, c01, c11 = uint32(c0[0]), uint32(c0[1]), uint32(c1[0]), uint32(c1[1])
		} else {
			c00, c10, c01, c11 = pick(x0, y0), pick(x0+1, y0), pick(x0, y0+1), pick(x0+1, y0+1)
		}
		v := uint8(((256-ax)*(256-ay)*c00 + ax*(256-ay)*c10 + (256-ax)*ay*c01 + ax*ay*c11 + 32768) >> 16)
		o[0], o[1], o[2], o[3] = v, v, v, 255
	}
}

// rowWindow holds consecutive input rows, converted to NRGBA bytes or
// separated into pairs of linear map values (pairSource), for a band of
// upright rows that sample them in order: rows [lo, lo+n) of the input at
// buf[(y−lo)·rs]. It slides down as the rows ask for lower input rows
// (rows no longer needed are dropped by moving the kept ones to the
// front), so each input row is made once per band.
type rowWindow[T uint8 | int16] struct {
	fill  func(d []T, y int) // makes input row y in d (rs values)
	buf   []T
	rs, h int // values per row, input rows
	lo, n int
	k     int // capacity in rows
}

// newRowWindow is a window of k converted NRGBA rows of src.
func newRowWindow(src *source, k int) *rowWindow[uint8] {
	return newWindow(func(d []uint8, y int) {
		if r := src.row(d, y); &r[0] != &d[0] {
			copy(d, r)
		}
	}, 4*src.w, src.h, k)
}

func newWindow[T uint8 | int16](fill func(d []T, y int), rs, h, k int) *rowWindow[T] {
	k = min(k, h)
	return &rowWindow[T]{fill: fill, buf: make([]T, k*rs), rs: rs, h: h, k: k}
}

// cover makes the window hold the input rows [r0, r1] (clipped to the
// input; r1 − r0 < k) and returns its values, stride and first row, as
// affineSepRow and samplePairRow read them.
func (wd *rowWindow[T]) cover(r0, r1 int) (sp []T, ss, lo int) {
	rs := wd.rs
	r0, r1 = max(r0, 0), min(r1, wd.h-1)
	switch {
	case r1 < r0:
		// Nothing of the input under this row.
	case r0 < wd.lo || r0 >= wd.lo+wd.n:
		wd.lo, wd.n = r0, 0
	case r1 >= wd.lo+wd.k:
		d := r0 - wd.lo
		copy(wd.buf, wd.buf[d*rs:wd.n*rs])
		wd.lo, wd.n = r0, wd.n-d
	}
	for ; wd.lo+wd.n <= r1; wd.n++ {
		wd.fill(wd.buf[wd.n*rs:(wd.n+1)*rs], wd.lo+wd.n)
	}
	return wd.buf, rs, wd.lo
}

// windowSpan returns the number of input rows one upright row of width
// w crosses under the affine map hm (upright px → input px) when bands of
// upright rows can read them through a rowWindow: hm[4] > 0 (input rows
// advance with upright rows) and the span is below an eighth of the
// input's h rows; otherwise 0.
func windowSpan(hm Homography, w, h int) int {
	if hm[4] <= 0 {
		return 0
	}
	span := int(math.Ceil(math.Abs(hm[3])*float64(w-1))) + 3
	if 8*span > h {
		return 0
	}
	return span
}
