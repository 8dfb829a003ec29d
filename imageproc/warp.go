package imageproc

import (
	"image"
	"math"
)

// warpNRGBA fills dst by sampling src bilinearly at toSrc(x, y) for every
// dst pixel; samples outside src are white paper.
func warpNRGBA(dst, src *image.NRGBA, toSrc Homography) {
	dw, dh := dst.Rect.Dx(), dst.Rect.Dy()
	sw, sh := src.Rect.Dx(), src.Rect.Dy()
	affine := toSrc[6] == 0 && toSrc[7] == 0
	h := toSrc
	if affine && h[8] != 1 {
		for i := range h {
			h[i] /= toSrc[8]
		}
	}
	sp := src.Pix
	ss := src.Stride
	white := []uint8{255, 255, 255, 255}
	pick := func(xx, yy int) []uint8 {
		if xx < 0 || yy < 0 || xx >= sw || yy >= sh {
			return white
		}
		i := yy*ss + 4*xx
		return sp[i : i+4 : i+4]
	}
	if affine {
		warpAffineNRGBA(dst, src, h)
		return
	}
	for y := 0; y < dh; y++ {
		fy := float64(y)
		// x, y, w of the source point are linear along the row.
		px := h[1]*fy + h[2]
		py := h[4]*fy + h[5]
		pw := h[7]*fy + h[8]
		d := dst.Pix[y*dst.Stride : y*dst.Stride+4*dw]
		for x := 0; x < dw; x++ {
			fx := float64(x)
			sx := h[0]*fx + px
			sy := h[3]*fx + py
			if !affine {
				w := h[6]*fx + pw
				sx /= w
				sy /= w
			}
			o := d[4*x : 4*x+4 : 4*x+4]
			if !(sx > -1 && sy > -1 && sx < float64(sw) && sy < float64(sh)) {
				o[0], o[1], o[2], o[3] = 255, 255, 255, 255
				continue
			}
			x0f, y0f := math.Floor(sx), math.Floor(sy)
			x0, y0 := int(x0f), int(y0f)
			// 8-bit fixed-point weights.
			ax := uint32((sx-x0f)*256 + 0.5)
			ay := uint32((sy-y0f)*256 + 0.5)
			var c00, c10, c01, c11 []uint8
			if x0 >= 0 && y0 >= 0 && x0+1 < sw && y0+1 < sh {
				i := y0*ss + 4*x0
				c00 = sp[i : i+4 : i+4]
				c10 = sp[i+4 : i+8 : i+8]
				c01 = sp[i+ss : i+ss+4 : i+ss+4]
				c11 = sp[i+ss+4 : i+ss+8 : i+ss+8]
			} else {
				c00, c10, c01, c11 = pick(x0, y0), pick(x0+1, y0), pick(x0, y0+1), pick(x0+1, y0+1)
			}
			w00 := (256 - ax) * (256 - ay)
			w10 := ax * (256 - ay)
			w01 := (256 - ax) * ay
			w11 := ax * ay
			o[0] = uint8((w00*uint32(c00[0]) + w10*uint32(c10[0]) + w01*uint32(c01[0]) + w11*uint32(c11[0]) + 32768) >> 16)
			o[1] = uint8((w00*uint32(c00[1]) + w10*uint32(c10[1]) + w01*uint32(c01[1]) + w11*uint32(c11[1]) + 32768) >> 16)
			o[2] = uint8((w00*uint32(c00[2]) + w10*uint32(c10[2]) + w01*uint32(c01[2]) + w11*uint32(c11[2]) + 32768) >> 16)
			o[3] = 255
		}
	}
}

// warpAffineNRGBA is warpNRGBA for an affine h (h[6] = h[7] = 0,
// h[8] = 1): the source point advances by a constant step along each dst
// row, so each row is one affineRowNRGBA (32.32 fixed point, one add per
// pixel; the accumulated rounding over a row of 10⁵ px stays below 10⁻⁴
// px; 8-bit weights from the fraction bits).
func warpAffineNRGBA(dst, src *image.NRGBA, h Homography) {
	dw, dh := dst.Rect.Dx(), dst.Rect.Dy()
	sw, sh := src.Rect.Dx(), src.Rect.Dy()
	stepX, stepY := toFix32(h[0]), toFix32(h[3])
	for y := 0; y < dh; y++ {
		fy := float64(y)
		affineRowNRGBA(dst.Pix[y*dst.Stride:y*dst.Stride+4*dw], src.Pix, src.Stride, sw, sh, 0,
			toFix32(h[1]*fy+h[2]), toFix32(h[4]*fy+h[5]), stepX, stepY)
	}
}

// warpGray samples src bilinearly at toSrc(x, y) for every dst pixel;
// outside samples are fill.
func warpGray(dst, src *image.Gray, toSrc Homography, fill uint8) {
	dw, dh := dst.Rect.Dx(), dst.Rect.Dy()
	sw, sh := src.Rect.Dx(), src.Rect.Dy()
	for y := 0; y < dh; y++ {
		d := dst.Pix[y*dst.Stride : y*dst.Stride+dw]
		for x := range d {
			sx, sy := Apply(toSrc, float64(x), float64(y))
			if !(sx >= 0 && sy >= 0 && sx <= float64(sw-1) && sy <= float64(sh-1)) {
				d[x] = fill
				continue
			}
			d[x] = grayAt(src, sx, sy)
		}
	}
}

// grayAt samples src bilinearly at (sx, sy), a point inside it (0 ≤ sx ≤
// w−1, 0 ≤ sy ≤ h−1), rounded to the nearest level.
func grayAt(src *image.Gray, sx, sy float64) uint8 {
	x0, y0 := int(sx), int(sy)
	ax, ay := sx-float64(x0), sy-float64(y0)
	x1, y1 := min(x0+1, src.Rect.Dx()-1), min(y0+1, src.Rect.Dy()-1)
	r0 := src.Pix[y0*src.Stride:]
	r1 := src.Pix[y1*src.Stride:]
	v := (1-ay)*((1-ax)*float64(r0[x0])+ax*float64(r0[x1])) + ay*((1-ax)*float64(r1[x0])+ax*float64(r1[x1]))
	return uint8(v + 0.5)
}

// quarterTurn returns the homography mapping a pixel of the image turned
// q×90° counter-clockwise back to the w×h input it was turned from.
func quarterTurn(q, w, h int) Homography {
	W, H := float64(w-1), float64(h-1)
	switch q & 3 {
	case 1: // upright (ux,uy) ← source (W−uy, ux)
		return Homography{0, -1, W, 1, 0, 0, 0, 0, 1}
	case 2:
		return Homography{-1, 0, W, 0, -1, H, 0, 0, 1}
	case 3: // source (uy, H−ux)
		return Homography{0, 1, 0, -1, 0, H, 0, 0, 1}
	}
	return identity
}

// turnedSize returns the size of a w×h image after q quarter turns.
func turnedSize(q, w, h int) (int, int) {
	if q&1 == 1 {
		return h, w
	}
	return w, h
}

// turnGray returns src turned q×90° counter-clockwise.
func turnGray(src *image.Gray, q int) *image.Gray {
	w, h := src.Rect.Dx(), src.Rect.Dy()
	tw, th := turnedSize(q, w, h)
	dst := image.NewGray(image.Rect(0, 0, tw, th))
	m := quarterTurn(q, w, h)
	for y := 0; y < th; y++ {
		for x := 0; x < tw; x++ {
			sx := int(m[0]*float64(x) + m[1]*float64(y) + m[2])
			sy := int(m[3]*float64(x) + m[4]*float64(y) + m[5])
			dst.Pix[y*dst.Stride+x] = src.Pix[sy*src.Stride+sx]
		}
	}
	return dst
}

// Warp fills dst by sampling src bilinearly at toSrc(x, y) for every dst
// pixel (pixel centres at integer coordinates); samples outside src are
// white paper. It is the resampler Prepare uses, exported for overlays
// and for simulating scans in tests.
func Warp(dst *image.NRGBA, src image.Image, toSrc Homography) {
	if dst.Rect.Min != (image.Point{}) {
		panic("imageproc: Warp: dst must start at (0,0)")
	}
	warpNRGBA(dst, toNRGBA(src), toSrc)
}
