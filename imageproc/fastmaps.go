package imageproc

import (
	"encoding/binary"
	"image"
	"math"
)

// sepFixed holds a separator's coefficients in the fixed point of the
// full-page pass: gains in 1/256, coefficients in 1/1024.
type sepFixed struct {
	colour     bool
	ka, kb     [3]int32
	off        int32 // ink offset (colour pages)
	spanG, loG int32 // ink ramp (grey pages)
}

// fixed returns s's coefficients in fixed point.
func (s *separator) fixed() sepFixed {
	span := 255 / (s.inkHi - s.inkLo)
	f := sepFixed{colour: s.colour}
	for j := 0; j < 3; j++ {
		f.ka[j] = int32(math.Round(s.ka[j] * 255 * 1024))
		f.kb[j] = int32(math.Round(s.kb[j] * span * 1024))
	}
	f.off = int32(math.Round(s.inkLo * span))
	f.spanG = int32(math.Round(span * 1024))
	f.loG = int32(math.Round(s.inkLo))
	return f
}

// row separates one row: row holds NRGBA bytes, g the row's gains (3 per
// pixel, 8.8 fixed point); gr, ir, dr receive luminance, ink and grid
// strength. Grey pages leave dr untouched (structureSplit fills it).
func (f *sepFixed) row(row []uint8, g []uint32, gr, ir, dr []uint8) {
	w := len(gr)
	row = row[:4*w]
	g = g[:3*w]
	ir = ir[:w]
	if f.colour {
		dr = dr[:w]
		ka, kb, off := f.ka, f.kb, f.off
		for x := range gr {
			p := row[4*x : 4*x+3 : 4*x+3]
			k := g[3*x : 3*x+3 : 3*x+3]
			rr := min(255, (uint32(p[0])*k[0]+128)>>8)
			gg := min(255, (uint32(p[1])*k[1]+128)>>8)
			bb := min(255, (uint32(p[2])*k[2]+128)>>8)
			gr[x] = uint8((77*rr + 150*gg + 29*bb + 128) >> 8)
			a0, a1, a2 := 255-int32(rr), 255-int32(gg), 255-int32(bb)
			dr[x] = sat8((ka[0]*a0 + ka[1]*a1 + ka[2]*a2) >> 10)
			ir[x] = sat8((kb[0]*a0+kb[1]*a1+kb[2]*a2)>>10 - off)
		}
		return
	}
	loG, spanG := f.loG, f.spanG
	for x := range gr {
		p := row[4*x : 4*x+3 : 4*x+3]
		k := g[3*x : 3*x+3 : 3*x+3]
		rr := min(255, (uint32(p[0])*k[0]+128)>>8)
		gg := min(255, (uint32(p[1])*k[1]+128)>>8)
		bb := min(255, (uint32(p[2])*k[2]+128)>>8)
		lum := (77*rr + 150*gg + 29*bb + 128) >> 8
		gr[x] = uint8(lum)
		ir[x] = sat8(((255 - int32(lum) - loG) * spanG) >> 10)
	}
}

// upright makes the w×h upright page's maps in one pass over its rows:
// each row is sampled from the input through toSrc (upright px → input
// px; a plain copy or conversion when toSrc is the identity) and
// separated. Given bgSrc (the background in input px), a deskewed colour
// page is separated first, row by row in the input's frame with bgSrc's
// gains, and its two maps are sampled (upright_pairs.go); other
// affine samples
// of NRGBA input are separated in the sampling loop (affineSepRow), other
// rows while they are still in cache. No map is read back from memory,
// and 8-bit RGBA or grey input is never copied as a whole. The upright
// colour page col is returned only where it costs nothing more (the
// input itself, or a projective warp made first for photos); otherwise it
// is nil and Page.Upright resamples it on demand (uprightColour, the same
// bytes): only overlays read it, and writing it cost a 35 MB image per A4
// page. gray is nil for a colour separator unless needGray (photos
// register their lattice on it): nothing else reads the luminance of a
// colour page. Rows are independent, so they are shared among GOMAXPROCS
// workers; the result does not depend on their number.
func (s *separator) upright(src *source, toSrc Homography, w, h int, bg, bgSrc *background, needGray bool) (col *image.NRGBA, gray, ink, grd *image.Gray) {
	r := image.Rect(0, 0, w, h)
	ink, grd = image.NewGray(r), image.NewGray(r)
	keepGray := !s.colour || needGray
	if keepGray {
		gray = image.NewGray(r)
	}
	f := s.fixed()
	hm, affine := affineMap(toSrc)
	ident := toSrc == identity && w == src.w && h == src.h
	switch {
	case ident && src.rgb != nil:
		col = src.rgb
	case !affine:
		col = image.NewNRGBA(r)
		warpNRGBA(col, src.nrgba(), toSrc)
	}
	stepX, stepY := toFix32(hm[0]), toFix32(hm[3])
	if pspan := windowSpan(hm, w, src.h); bgSrc != nil && s.colour && !needGray && affine && !ident && col == nil && pspan > 0 {
		sh := newShear(hm, f.paperPair(), w)
		rowBands(h, func(y0, y1 int) {
			fill := newPairSource(src, &f, bgSrc).filler()
			row := make([]int16, 2*src.w)
			win := newWindow(func(d []int16, v int) {
				fill(row, v)
				shearPairRow(d, row, sh.rowStart(v), sh.step, sh.paper)
			}, 2*w, src.h, 2*pspan+8)
			for y := y0; y < y1; y++ {
				_, sv := rowStart(hm, y)
				sp, ss, lo := win.cover(int(min(sv, sv+int64(w-1)*stepY)>>32), int(max(sv, sv+int64(w-1)*stepY)>>32)+1)
				sampleShearedRow(ink.Pix[y*ink.Stride:y*ink.Stride+w], grd.Pix[y*grd.Stride:y*grd.Stride+w],
					sp, ss, src.h, lo, sv, stepY, sh.paperRow)
			}
		})
		return nil, gray, ink, grd
	}
	span := yccSpan(src, hm, affine && !ident, w)
	band := func(y0, y1 int) {
		g := make([]uint32, 3*w)
		buf := make([]uint8, 4*w) // one colour row, when col is not kept
		var grow []uint8          // the luminance row nobody keeps
		if !keepGray {
			grow = make([]uint8, w)
		}
		var sc gainScratch
		var win *rowWindow[uint8]
		if span > 0 {
			win = newRowWindow(src, 2*span+8)
		}
		for y := y0; y < y1; y++ {
			var row []uint8
			if col != nil {
				row = col.Pix[y*col.Stride : y*col.Stride+4*w]
			}
			gr := grow
			if keepGray {
				gr = gray.Pix[y*gray.Stride : y*gray.Stride+w]
			}
			bg.gainRowFixedInto(g, &sc, y, w)
			switch {
			case col != nil:
				// Already in place.
			case ident:
				row = src.row(buf, y)
			case src.rgb != nil || win != nil:
				// Sampled and separated in one loop.
				sx, sy := rowStart(hm, y)
				sp, ss, lo := rowInput(src, win, sy, sy+int64(w-1)*stepY)
				f.affineSepRow(buf, g, gr, ink.Pix[y*ink.Stride:y*ink.Stride+w],
					grd.Pix[y*grd.Stride:y*grd.Stride+w], sp, ss, src.w, src.h, lo, sx, sy, stepX, stepY)
				continue
			default:
				sx, sy := rowStart(hm, y)
				row = buf
				src.affineRow(row, sx, sy, stepX, stepY)
			}
			f.row(row, g, gr, ink.Pix[y*ink.Stride:y*ink.Stride+w], grd.Pix[y*grd.Stride:y*grd.Stride+w])
		}
	}
	rowBands(h, band)
	return col, gray, ink, grd
}

// uprightColour returns the w×h upright colour page that upright samples
// through toSrc when it does not keep it: the same bytes, row by row
// (through a sliding window of converted rows for Y′CbCr input).
func uprightColour(src *source, toSrc Homography, w, h int) *image.NRGBA {
	col := image.NewNRGBA(image.Rect(0, 0, w, h))
	hm, affine := affineMap(toSrc)
	ident := toSrc == identity && w == src.w && h == src.h
	if !affine {
		warpNRGBA(col, src.nrgba(), toSrc)
		return col
	}
	stepX, stepY := toFix32(hm[0]), toFix32(hm[3])
	span := yccSpan(src, hm, !ident, w)
	rowBands(h, func(y0, y1 int) {
		var win *rowWindow[uint8]
		if span > 0 {
			win = newRowWindow(src, 2*span+8)
		}
		for y := y0; y < y1; y++ {
			row := col.Pix[y*col.Stride : y*col.Stride+4*w]
			sx, sy := rowStart(hm, y)
			switch {
			case ident:
				if r := src.row(row, y); &r[0] != &row[0] {
					copy(row, r)
				}
			case src.rgb != nil || win != nil:
				sp, ss, lo := rowInput(src, win, sy, sy+int64(w-1)*stepY)
				affineRowNRGBA(row, sp, ss, src.w, src.h, lo, sx, sy, stepX, stepY)
			default:
				src.affineRow(row, sx, sy, stepX, stepY)
			}
		}
	})
	return col
}

// affineMap returns toSrc scaled so that its last entry is 1 when it is
// affine (last row 0 0 c), and whether it is.
func affineMap(toSrc Homography) (Homography, bool) {
	hm := toSrc
	affine := hm[6] == 0 && hm[7] == 0
	if affine && hm[8] != 1 {
		for i := range hm {
			hm[i] /= toSrc[8]
		}
	}
	return hm, affine
}

// yccSpan returns the rowWindow span (windowSpan) for sampling a Y′CbCr
// input through the affine map hm, 0 when the input is not Y′CbCr, is not
// sampled or cannot be read through a window; in that last case the
// input is converted whole first (src.nrgba), as a quarter turn makes
// every row cross the whole input.
func yccSpan(src *source, hm Homography, sampled bool, w int) int {
	if !sampled || src.rgb != nil || src.ycc == nil {
		return 0
	}
	span := windowSpan(hm, w, src.h)
	if span == 0 {
		src.nrgba()
	}
	return span
}

// rowStart returns the source point of pixel 0 of upright row y under the
// affine map hm, 32.32 fixed point.
func rowStart(hm Homography, y int) (sx, sy int64) {
	fy := float64(y)
	return toFix32(hm[1]*fy + hm[2]), toFix32(hm[4]*fy + hm[5])
}

// rowInput returns the input pixels a row whose source points run from y
// sy0 to sy1 (32.32) reads: the window covering those rows and the row
// below, or the whole NRGBA input (win nil).
func rowInput(src *source, win *rowWindow[uint8], sy0, sy1 int64) (sp []uint8, ss, lo int) {
	if win == nil {
		return src.rgb.Pix, src.rgb.Stride, 0
	}
	return win.cover(int(min(sy0, sy1)>>32), int(max(sy0, sy1)>>32)+1)
}

// downscaleSource is downscale for any source: rows are converted one at
// a time (the same bytes as downscaling the converted input), except that
// 4:2:0 and 4:2:2 Y′CbCr input is converted from tables, a chroma
// sample's terms shared by its pixels (downscaleYCbCr), and grey input is
// averaged as one channel (downscaleGrayNRGBA): the same bytes.
func downscaleSource(src *source, f int) *image.NRGBA {
	if src.rgb != nil {
		return downscale(src.rgb, f)
	}
	if f < 1 {
		f = 1
	}
	if src.ycc != nil && src.hs == 1 {
		return downscaleYCbCr(src.ycc, f)
	}
	if src.gray != nil {
		return downscaleGrayNRGBA(src.gray, f)
	}
	sw, sh := src.w, src.h
	w, h := (sw+f-1)/f, (sh+f-1)/f
	dst := image.NewNRGBA(image.Rect(0, 0, w, h))
	// Bands of work rows among GOMAXPROCS workers (a Y′CbCr page is
	// converted here, row by row).
	rowBands(h, func(o0, o1 int) {
		acc := make([]uint32, 4*w)
		cnt := make([]uint32, w)
		buf := make([]uint8, 4*sw)
		for oy := o0; oy < o1; oy++ {
			clear(acc)
			clear(cnt)
			for sy := oy * f; sy < min(sh, oy*f+f); sy++ {
				accumulateRow(acc, cnt, src.row(buf, sy), f, w, sw)
			}
			finishRow(dst.Pix[oy*dst.Stride:oy*dst.Stride+4*w], acc, cnt)
		}
	})
	return dst
}

// accumulateRow adds the NRGBA row (sw px) block by block (f px per
// block, w blocks) to the colour sums acc and pixel counts cnt. Pixel
// pairs are read as one 64-bit word and added in 16-bit lanes (red and
// blue of both pixels in one word, green and alpha in another; a block
// of up to 512 px adds at most 256 bytes of 255 to a lane): the exact
// sums of adding the bytes one by one (TestAccumulateRowExact).
func accumulateRow(acc, cnt []uint32, row []uint8, f, w, sw int) {
	const lanes = 0x00ff00ff00ff00ff
	for ox := 0; ox < w; ox++ {
		blk := row[4*ox*f : 4*min(sw, ox*f+f)]
		var r, g, b uint32
		i := 0
		if f <= 512 {
			var rb, ga uint64
			for ; i+8 <= len(blk); i += 8 {
				v := binary.LittleEndian.Uint64(blk[i:])
				rb += v & lanes
				ga += v >> 8 & lanes
			}
			r = uint32(rb&0xffff + rb>>32&0xffff)
			b = uint32(rb>>16&0xffff + rb>>48)
			g = uint32(ga&0xffff + ga>>32&0xffff)
		}
		for ; i+3 < len(blk); i += 4 {
			p := blk[i : i+3 : i+3]
			r += uint32(p[0])
			g += uint32(p[1])
			b += uint32(p[2])
		}
		a := acc[4*ox : 4*ox+3 : 4*ox+3]
		a[0] += r
		a[1] += g
		a[2] += b
		cnt[ox] += uint32(len(blk) / 4)
	}
}

// finishRow writes the rounded block means into d (NRGBA, opaque).
func finishRow(d []uint8, acc, cnt []uint32) {
	for ox, n := range cnt {
		d[4*ox] = uint8((acc[4*ox] + n/2) / n)
		d[4*ox+1] = uint8((acc[4*ox+1] + n/2) / n)
		d[4*ox+2] = uint8((acc[4*ox+2] + n/2) / n)
		d[4*ox+3] = 255
	}
}
