package imageproc

import "image"

// downscaleYCbCr is downscaleSource for a 4:2:0 or 4:2:2 Y′CbCr input m
// (Rect.Min at the origin) and a block width f: the box means of the
// converted pixels, byte for byte, without converting the pixels one by
// one. The conversion is the JFIF full-range one (ITU-T T.871 §7) in the
// 16.16 fixed point of image/color's YCbCrToRGB: a channel is
// clamp((Y′·0x10101 + k) >> 16) with k the channel's chroma term. The red
// term depends on Cr alone and the blue on Cb alone, so red and blue are
// read from 256 × 256 tables (yccTables); the green term k = 65536·q + r
// (0 ≤ r < 65536) gives Y′ + q, plus 1 where 257·Y′ + r carries into the
// next unit, that is where Y′ ≥ ⌈(65536 − r)/257⌉, clamped. The pixels
// that share a chroma sample (2 × 2 in 4:2:0, 2 × 1 in 4:2:2) share its
// table rows and green terms: whole samples for an even f (blocks start
// on even rows and columns, so a sample never straddles two blocks),
// columns of two rows for an odd f. Measured against converting each
// pixel pair: 38 → 25.5 ms CPU at f = 4 and 49–71 → 24 ms at f = 7 on an
// A4 JPEG (BenchmarkWorkCopyA4JPEG, …Odd; loaded machine). Converting
// each sample's mean instead is not equivalent: where some pixels of a
// sample clip and others do not (a pink grid's red channel on white
// paper), the means differ, and that moved the separator's ink
// coefficients by up to 10 % on JPEG pages of the synthetic corpus. Bands
// of work rows are shared among GOMAXPROCS workers; the bytes do not
// depend on their number.
func downscaleYCbCr(m *image.YCbCr, f int) *image.NRGBA {
	sw, sh := m.Rect.Dx(), m.Rect.Dy()
	w, h := (sw+f-1)/f, (sh+f-1)/f
	dst := image.NewNRGBA(image.Rect(0, 0, w, h))
	pairs := m.SubsampleRatio == image.YCbCrSubsampleRatio420
	t := newYCCTables()
	rowBands(h, func(o0, o1 int) {
		acc := make([]uint32, 4*w)
		cnt := make([]uint32, w)
		for oy := o0; oy < o1; oy++ {
			clear(acc)
			clear(cnt)
			end := min(sh, oy*f+f)
			for y := oy * f; y < end; {
				rows := 1
				if pairs && y%2 == 0 && y+1 < end {
					rows = 2
				}
				if f%2 == 0 {
					t.accumulate(acc, cnt, m, y, rows, f)
				} else {
					t.accumulateOdd(acc, cnt, m, y, rows, f)
				}
				y += rows
			}
			finishRow(dst.Pix[oy*dst.Stride:oy*dst.Stride+4*w], acc, cnt)
		}
	})
	return dst
}

// yccTables holds the converted red and blue channels of every (chroma,
// luma) pair, red[Cr·256 + Y′] and blue[Cb·256 + Y′], and the clamp of
// the green sum Y′ + q + carry (offset by greenOff).
type yccTables struct {
	red, blue [256 * 256]uint8
	clampG    [1024]uint8 // indices greenOff−136 … greenOff+391 used
}

// greenOff bounds |q| + 1 for the green term q = k >> 16, |k| ≤
// (22554 + 46802)·128 < 136·65536.
const greenOff = 138

// newYCCTables fills the tables (about 0.2 ms).
func newYCCTables() *yccTables {
	t := new(yccTables)
	for c := 0; c < 256; c++ {
		kr, _, kb := chromaTerms(uint8(c), uint8(c))
		for y := 0; y < 256; y++ {
			yy := int32(y) * 0x10101
			t.red[c<<8|y] = uint8(clipTo8(yy + kr))
			t.blue[c<<8|y] = uint8(clipTo8(yy + kb))
		}
	}
	for i := range t.clampG {
		t.clampG[i] = uint8(min(max(i-greenOff, 0), 255))
	}
	return t
}

// accumulate adds rows y … y+rows−1 of m (rows 1 or 2; two rows share
// their chroma row), converted, block by block (f px per block, an even
// f) to the colour sums acc (4 per block, as accumulateRow) and pixel
// counts cnt.
func (t *yccTables) accumulate(acc, cnt []uint32, m *image.YCbCr, y, rows, f int) {
	sw := m.Rect.Dx()
	ya, yb, cbr, crr := yccRows(m, y, rows)
	two := rows == 2
	start := 0
	if two && f == 4 {
		// The A4 or Letter page at 300 dpi: whole 4 × 2 blocks of two
		// samples each, written out (half the loop overhead per pixel).
		start = t.blocks4(acc, cnt, ya, yb, cbr, crr)
	}
	for ox := start; ox < len(cnt); ox++ {
		x0, x1 := ox*f, min(sw, ox*f+f)
		a, b := ya[x0:x1], yb[x0:x1]
		cb, cr := cbr[x0/2:(x1+1)/2], crr[x0/2:(x1+1)/2]
		var sr, sg, sb uint32
		j := 0
		if two {
			// Whole 2 × 2 samples, written out.
			for ; 2*j+1 < len(a); j++ {
				p, u := a[2*j:2*j+2:2*j+2], b[2*j:2*j+2:2*j+2]
				r, g, bl := t.quad(cb[j], cr[j], p[0], p[1], u[0], u[1])
				sr, sg, sb = sr+r, sg+g, sb+bl
			}
		}
		for ; j < len(cb); j++ {
			// One row (4:2:2, or the last row of an odd-height 4:2:0
			// page), or the odd last column: the same rule pixel by pixel.
			cbj, crj := uint16(cb[j])<<8, uint16(cr[j])<<8
			_, kg, _ := chromaTerms(cb[j], cr[j])
			q := kg>>16 + greenOff + 1
			thr := (65536 - kg&0xffff + 256) / 257
			add := func(v uint8) {
				sr += uint32(t.red[crj|uint16(v)])
				sb += uint32(t.blue[cbj|uint16(v)])
				sg += uint32(t.clampG[(int32(v)+q+(int32(v)-thr)>>31)&1023])
			}
			for _, v := range a[2*j : min(len(a), 2*j+2)] {
				add(v)
			}
			if two {
				for _, v := range b[2*j : min(len(b), 2*j+2)] {
					add(v)
				}
			}
		}
		d := acc[4*ox : 4*ox+3 : 4*ox+3]
		d[0] += sr
		d[1] += sg
		d[2] += sb
		cnt[ox] += uint32(rows * (x1 - x0))
	}
}

// blocks4 is accumulate for two rows (ya, yb) sharing the chroma rows
// cbr, crr and f = 4, over the whole blocks of the row; it returns how
// many it did.
func (t *yccTables) blocks4(acc, cnt []uint32, ya, yb, cbr, crr []uint8) int {
	n := min(len(ya), len(yb)) / 4
	n = min(n, len(cbr)/2, len(crr)/2, len(cnt), len(acc)/4)
	start := 0
	if haveBlocksSIMD {
		// Pairs of blocks in vector code (the same sums: TestBlocks4MatchesGo).
		start = n &^ 1
		if start > 0 {
			blocks4SIMD(acc[:4*start], ya[:4*start], yb[:4*start], cbr[:2*start], crr[:2*start])
			for ox := range start {
				cnt[ox] += 8
			}
		}
	}
	for ox := start; ox < n; ox++ {
		a, b := ya[4*ox:4*ox+4:4*ox+4], yb[4*ox:4*ox+4:4*ox+4]
		cb, cr := cbr[2*ox:2*ox+2:2*ox+2], crr[2*ox:2*ox+2:2*ox+2]
		var sr, sg, sb uint32
		for j := range 2 {
			r, g, bl := t.quad(cb[j], cr[j], a[2*j], a[2*j+1], b[2*j], b[2*j+1])
			sr, sg, sb = sr+r, sg+g, sb+bl
		}
		d := acc[4*ox : 4*ox+3 : 4*ox+3]
		d[0] += sr
		d[1] += sg
		d[2] += sb
		cnt[ox] += 8
	}
	return n
}

// yccRows returns the luma rows y and y+rows−1 of m (rows 1 or 2) and
// the chroma rows they share (4:2:0 and 4:2:2: one sample per pixel pair).
func yccRows(m *image.YCbCr, y, rows int) (ya, yb, cb, cr []uint8) {
	sw := m.Rect.Dx()
	ya = m.Y[y*m.YStride : y*m.YStride+sw]
	yb = m.Y[(y+rows-1)*m.YStride : (y+rows-1)*m.YStride+sw]
	c0 := m.COffset(0, y)
	return ya, yb, m.Cb[c0 : c0+(sw+1)/2], m.Cr[c0 : c0+(sw+1)/2]
}

// quad returns the red, green and blue sums of the four pixels v0…v3
// that share the chroma sample (cb, cr), converted from the tables (the
// bytes of image/color's YCbCrToRGB).
func (t *yccTables) quad(cb, cr, v0, v1, v2, v3 uint8) (sr, sg, sb uint32) {
	cbj, crj := uint16(cb)<<8, uint16(cr)<<8
	_, kg, _ := chromaTerms(cb, cr)
	q := kg>>16 + greenOff + 1
	thr := (65536 - kg&0xffff + 256) / 257
	sr = uint32(t.red[crj|uint16(v0)]) + uint32(t.red[crj|uint16(v1)]) +
		uint32(t.red[crj|uint16(v2)]) + uint32(t.red[crj|uint16(v3)])
	sb = uint32(t.blue[cbj|uint16(v0)]) + uint32(t.blue[cbj|uint16(v1)]) +
		uint32(t.blue[cbj|uint16(v2)]) + uint32(t.blue[cbj|uint16(v3)])
	sg = uint32(t.clampG[(int32(v0)+q+(int32(v0)-thr)>>31)&1023]) +
		uint32(t.clampG[(int32(v1)+q+(int32(v1)-thr)>>31)&1023]) +
		uint32(t.clampG[(int32(v2)+q+(int32(v2)-thr)>>31)&1023]) +
		uint32(t.clampG[(int32(v3)+q+(int32(v3)-thr)>>31)&1023])
	return sr, sg, sb
}

// accumulateOdd is accumulate for an odd block width f, whose blocks
// start on odd columns too (a chroma sample may straddle two blocks):
// column by column, the chroma terms computed once for the column's one
// or two rows.
func (t *yccTables) accumulateOdd(acc, cnt []uint32, m *image.YCbCr, y, rows, f int) {
	sw := m.Rect.Dx()
	ya, yb, cbr, crr := yccRows(m, y, rows)
	for ox := range cnt {
		x0, x1 := ox*f, min(sw, ox*f+f)
		var sr, sg, sb uint32
		for x := x0; x < x1; x++ {
			cb, cr := cbr[x>>1], crr[x>>1]
			cbj, crj := uint16(cb)<<8, uint16(cr)<<8
			_, kg, _ := chromaTerms(cb, cr)
			q := kg>>16 + greenOff + 1
			thr := (65536 - kg&0xffff + 256) / 257
			v := ya[x]
			sr += uint32(t.red[crj|uint16(v)])
			sb += uint32(t.blue[cbj|uint16(v)])
			sg += uint32(t.clampG[(int32(v)+q+(int32(v)-thr)>>31)&1023])
			if rows == 2 {
				v = yb[x]
				sr += uint32(t.red[crj|uint16(v)])
				sb += uint32(t.blue[cbj|uint16(v)])
				sg += uint32(t.clampG[(int32(v)+q+(int32(v)-thr)>>31)&1023])
			}
		}
		d := acc[4*ox : 4*ox+3 : 4*ox+3]
		d[0] += sr
		d[1] += sg
		d[2] += sb
		cnt[ox] += uint32(rows * (x1 - x0))
	}
}

// downscaleGrayNRGBA is downscaleSource for a grey input g (Rect.Min at
// the origin): the rounded box means of the grey values as the three
// channels, the bytes of downscaling g converted to NRGBA (each channel
// of which is the grey value), without the 4-byte copy of each row.
func downscaleGrayNRGBA(g *image.Gray, f int) *image.NRGBA {
	sw, sh := g.Rect.Dx(), g.Rect.Dy()
	w, h := (sw+f-1)/f, (sh+f-1)/f
	dst := image.NewNRGBA(image.Rect(0, 0, w, h))
	rowBands(h, func(o0, o1 int) {
		acc := make([]uint32, w)
		for oy := o0; oy < o1; oy++ {
			clear(acc)
			end := min(sh, oy*f+f)
			for y := oy * f; y < end; y++ {
				row := g.Pix[y*g.Stride : y*g.Stride+sw]
				for ox := range acc {
					s := uint32(0)
					for _, v := range row[ox*f : min(sw, ox*f+f)] {
						s += uint32(v)
					}
					acc[ox] += s
				}
			}
			d := dst.Pix[oy*dst.Stride : oy*dst.Stride+4*w]
			for ox, s := range acc {
				n := uint32((min(sw, ox*f+f) - ox*f) * (end - oy*f))
				v := uint8((s + n/2) / n)
				o := d[4*ox : 4*ox+4 : 4*ox+4]
				o[0], o[1], o[2], o[3] = v, v, v, 255
			}
		}
	})
	return dst
}
