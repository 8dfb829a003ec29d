package imageproc

import (
	"image"
	"image/color"
	"runtime"
	"sync"
)

// toNRGBA returns img as an *image.NRGBA whose Rect starts at (0,0). It
// shares memory with img when img already is such an image.
func toNRGBA(img image.Image) *image.NRGBA {
	b := img.Bounds()
	w, h := b.Dx(), b.Dy()
	if m, ok := img.(*image.NRGBA); ok && b.Min == (image.Point{}) {
		return m
	}
	dst := image.NewNRGBA(image.Rect(0, 0, w, h))
	switch m := img.(type) {
	case *image.Gray:
		for y := 0; y < h; y++ {
			si := m.PixOffset(b.Min.X, b.Min.Y+y)
			row := m.Pix[si : si+w]
			di := y * dst.Stride
			for x, v := range row {
				d := dst.Pix[di+4*x : di+4*x+4 : di+4*x+4]
				d[0], d[1], d[2], d[3] = v, v, v, 255
			}
		}
	case *image.NRGBA:
		for y := 0; y < h; y++ {
			si := m.PixOffset(b.Min.X, b.Min.Y+y)
			copy(dst.Pix[y*dst.Stride:y*dst.Stride+4*w], m.Pix[si:si+4*w])
		}
	case *image.RGBA:
		for y := 0; y < h; y++ {
			si := m.PixOffset(b.Min.X, b.Min.Y+y)
			s := m.Pix[si : si+4*w]
			d := dst.Pix[y*dst.Stride : y*dst.Stride+4*w]
			for i := 0; i < len(s); i += 4 {
				a := s[i+3]
				if a == 255 {
					d[i], d[i+1], d[i+2], d[i+3] = s[i], s[i+1], s[i+2], 255
					continue
				}
				// Composite on white paper: premultiplied c + (255 − a).
				d[i] = s[i] + (255 - a)
				d[i+1] = s[i+1] + (255 - a)
				d[i+2] = s[i+2] + (255 - a)
				d[i+3] = 255
			}
		}
	case *image.YCbCr:
		if hs, ok := chromaShift(m.SubsampleRatio); ok && m.Rect.Min == (image.Point{}) {
			ycbcrRows(dst, m, hs)
			break
		}
		for y := 0; y < h; y++ {
			d := dst.Pix[y*dst.Stride : y*dst.Stride+4*w]
			for x := 0; x < w; x++ {
				yi := m.YOffset(b.Min.X+x, b.Min.Y+y)
				ci := m.COffset(b.Min.X+x, b.Min.Y+y)
				r, g, bl := color.YCbCrToRGB(m.Y[yi], m.Cb[ci], m.Cr[ci])
				d[4*x], d[4*x+1], d[4*x+2], d[4*x+3] = r, g, bl, 255
			}
		}
	case *image.Paletted:
		pal := make([][4]uint8, len(m.Palette))
		for i, c := range m.Palette {
			pal[i] = flatten(c)
		}
		for y := 0; y < h; y++ {
			si := m.PixOffset(b.Min.X, b.Min.Y+y)
			d := dst.Pix[y*dst.Stride : y*dst.Stride+4*w]
			for x, ix := range m.Pix[si : si+w] {
				var c [4]uint8
				if int(ix) < len(pal) {
					c = pal[ix]
				} else {
					c = [4]uint8{255, 255, 255, 255}
				}
				copy(d[4*x:4*x+4], c[:])
			}
		}
	default:
		for y := 0; y < h; y++ {
			d := dst.Pix[y*dst.Stride : y*dst.Stride+4*w]
			for x := 0; x < w; x++ {
				c := flatten(img.At(b.Min.X+x, b.Min.Y+y))
				copy(d[4*x:4*x+4], c[:])
			}
		}
	}
	return dst
}

// flatten composites c on white and returns opaque 8-bit RGBA.
func flatten(c color.Color) [4]uint8 {
	r, g, b, a := c.RGBA()
	white := 0xffff - a
	return [4]uint8{uint8((r + white) >> 8), uint8((g + white) >> 8), uint8((b + white) >> 8), 255}
}

// downscale returns src shrunk by the integer factor f with a box filter.
// f ≤ 1 returns a copy.
func downscale(src *image.NRGBA, f int) *image.NRGBA {
	if f < 1 {
		f = 1
	}
	sw, sh := src.Rect.Dx(), src.Rect.Dy()
	w, h := (sw+f-1)/f, (sh+f-1)/f
	dst := image.NewNRGBA(image.Rect(0, 0, w, h))
	acc := make([]uint32, 4*w)
	cnt := make([]uint32, w)
	for oy := 0; oy < h; oy++ {
		clear(acc)
		clear(cnt)
		for sy := oy * f; sy < min(sh, oy*f+f); sy++ {
			// Block by block: the sums stay in registers (no division
			// or accumulator access per source pixel).
			accumulateRow(acc, cnt, src.Pix[sy*src.Stride:sy*src.Stride+4*sw], f, w, sw)
		}
		finishRow(dst.Pix[oy*dst.Stride:oy*dst.Stride+4*w], acc, cnt)
	}
	return dst
}

// downscaleGray shrinks a grey map by the integer factor f (box filter).
func downscaleGray(src *image.Gray, f int) *image.Gray {
	sw, sh := src.Rect.Dx(), src.Rect.Dy()
	w, h := (sw+f-1)/f, (sh+f-1)/f
	dst := image.NewGray(image.Rect(0, 0, w, h))
	acc := make([]uint32, w)
	cnt := make([]uint32, w)
	for oy := 0; oy < h; oy++ {
		clear(acc)
		clear(cnt)
		for sy := oy * f; sy < min(sh, oy*f+f); sy++ {
			row := src.Pix[sy*src.Stride : sy*src.Stride+sw]
			for sx, v := range row {
				acc[sx/f] += uint32(v)
				cnt[sx/f]++
			}
		}
		d := dst.Pix[oy*dst.Stride : oy*dst.Stride+w]
		for ox := range d {
			d[ox] = uint8((acc[ox] + cnt[ox]/2) / cnt[ox])
		}
	}
	return dst
}

// isGrey reports whether every sampled pixel of m has equal channels
// (within tol), i.e. the page carries no colour.
func isGrey(m *image.NRGBA, tol int) bool {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	n, off := 0, 0
	for y := 0; y < h; y += 2 {
		row := m.Pix[y*m.Stride : y*m.Stride+4*w]
		for i := 0; i < len(row); i += 8 {
			r, g, b := int(row[i]), int(row[i+1]), int(row[i+2])
			if max(r, g, b)-min(r, g, b) > tol {
				off++
			}
			n++
		}
	}
	return off*1000 <= n // at most 0.1 % coloured samples
}

// chromaShift returns log2 of the horizontal chroma subsampling of r
// (chroma column = x >> shift), false for an unknown ratio.
func chromaShift(r image.YCbCrSubsampleRatio) (uint, bool) {
	switch r {
	case image.YCbCrSubsampleRatio444, image.YCbCrSubsampleRatio440:
		return 0, true
	case image.YCbCrSubsampleRatio422, image.YCbCrSubsampleRatio420:
		return 1, true
	case image.YCbCrSubsampleRatio411, image.YCbCrSubsampleRatio410:
		return 2, true
	}
	return 0, false
}

// ycbcrRows converts m (Rect.Min at the origin) into dst row by row: the
// chroma row is located once per row and the JFIF full-range conversion
// (ITU-T T.871 §7, in the 16-bit fixed point of image/color's
// YCbCrToRGB, which gives identical bytes) is done inline. Rows are
// independent, so bands of them are shared among GOMAXPROCS workers
// (the bytes do not depend on the number of workers).
func ycbcrRows(dst *image.NRGBA, m *image.YCbCr, hs uint) {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	band := func(y0, y1 int) {
		for y := y0; y < y1; y++ {
			ycbcrRow(dst.Pix[y*dst.Stride:y*dst.Stride+4*w], m, hs, y)
		}
	}
	rowBands(h, band)
}

// rowBands calls band on consecutive bands of the rows [0, h), shared
// among up to GOMAXPROCS goroutines (at least 256 rows a band), and
// returns when all are done. band must write only its own rows.
func rowBands(h int, band func(y0, y1 int)) {
	workers := min(runtime.GOMAXPROCS(0), max(1, h/256))
	if workers == 1 {
		band(0, h)
		return
	}
	var wg sync.WaitGroup
	for k := 0; k < workers; k++ {
		y0, y1 := k*h/workers, (k+1)*h/workers
		wg.Go(func() { band(y0, y1) })
	}
	wg.Wait()
}

// clip16 returns v >> 16 clamped to 0..255 (v in 16.16 fixed point).
func clip16(v int32) uint8 {
	if uint32(v)&0xff000000 == 0 {
		return uint8(v >> 16)
	}
	return uint8(^(v >> 31))
}
