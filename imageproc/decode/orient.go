package decode

import (
	"image"
	"image/color"
	"image/draw"
)

// Orient returns img turned to be viewed upright according to the
// Exif/TIFF Orientation tag value o (TIFF 6.0 section 8; Exif 2.3 tag
// 0x0112), which names where the stored 0th row and 0th column lie:
//
//	1 row 0 top,    column 0 left   (unchanged)
//	2 row 0 top,    column 0 right  (mirror left–right)
//	3 row 0 bottom, column 0 right  (turn 180°)
//	4 row 0 bottom, column 0 left   (mirror top–bottom)
//	5 row 0 left,   column 0 top    (transpose)
//	6 row 0 right,  column 0 top    (turn 90° clockwise)
//	7 row 0 right,  column 0 bottom (transverse)
//	8 row 0 left,   column 0 bottom (turn 90° anticlockwise)
//
// Values outside 1–8, and 1, return img itself. Otherwise a new image with
// bounds starting at (0, 0) is returned; *image.Gray, *image.Gray16,
// *image.Paletted, *image.RGBA, *image.NRGBA, *image.RGBA64,
// *image.NRGBA64 and *image.CMYK keep their type, anything else (such as
// *image.YCbCr) becomes *image.NRGBA.
func Orient(img image.Image, o int) image.Image {
	if o < 2 || o > 8 {
		return img
	}
	b := img.Bounds()
	sw, sh := b.Dx(), b.Dy()
	dw, dh := orientedSize(sw, sh, o)
	dr := image.Rect(0, 0, dw, dh)
	m := orientMap(o, sw, sh)
	switch s := img.(type) {
	case *image.Gray:
		d := image.NewGray(dr)
		remap(d.Pix, d.Stride, s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride, 1, dw, dh, m)
		return d
	case *image.Paletted:
		d := image.NewPaletted(dr, s.Palette)
		remap(d.Pix, d.Stride, s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride, 1, dw, dh, m)
		return d
	case *image.Gray16:
		d := image.NewGray16(dr)
		remap(d.Pix, d.Stride, s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride, 2, dw, dh, m)
		return d
	case *image.RGBA:
		d := image.NewRGBA(dr)
		remap(d.Pix, d.Stride, s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride, 4, dw, dh, m)
		return d
	case *image.NRGBA:
		d := image.NewNRGBA(dr)
		remap(d.Pix, d.Stride, s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride, 4, dw, dh, m)
		return d
	case *image.CMYK:
		d := image.NewCMYK(dr)
		remap(d.Pix, d.Stride, s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride, 4, dw, dh, m)
		return d
	case *image.RGBA64:
		d := image.NewRGBA64(dr)
		remap(d.Pix, d.Stride, s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride, 8, dw, dh, m)
		return d
	case *image.NRGBA64:
		d := image.NewNRGBA64(dr)
		remap(d.Pix, d.Stride, s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride, 8, dw, dh, m)
		return d
	case *image.YCbCr:
		if b.Min.X < 0 || b.Min.Y < 0 {
			break // the fast converter assumes non-negative coordinates
		}
		d := image.NewNRGBA(dr)
		orientYCbCr(d, s, m)
		return d
	}
	// Rare types: convert once to NRGBA, then remap.
	n := image.NewNRGBA(image.Rect(0, 0, sw, sh))
	draw.Draw(n, n.Rect, img, b.Min, draw.Src)
	return Orient(n, o)
}

// affine maps a destination pixel (dx, dy) to the source pixel
// sx = ax·dx + bx·dy + cx, sy = ay·dx + by·dy + cy.
type affine struct{ ax, bx, cx, ay, by, cy int }

// orientMap returns the destination→source map for orientation o of a
// source of sw × sh pixels.
func orientMap(o, sw, sh int) affine {
	switch o {
	case 2:
		return affine{-1, 0, sw - 1, 0, 1, 0}
	case 3:
		return affine{-1, 0, sw - 1, 0, -1, sh - 1}
	case 4:
		return affine{1, 0, 0, 0, -1, sh - 1}
	case 5:
		return affine{0, 1, 0, 1, 0, 0}
	case 6:
		return affine{0, 1, 0, -1, 0, sh - 1}
	case 7:
		return affine{0, -1, sw - 1, -1, 0, sh - 1}
	case 8:
		return affine{0, -1, sw - 1, 1, 0, 0}
	}
	return affine{1, 0, 0, 0, 1, 0}
}

// remap fills dst (dw × dh pixels of bpp bytes, row stride dstStride) from
// src (origin at src[0], row stride srcStride) through m.
func remap(dst []byte, dstStride int, src []byte, srcStride, bpp, dw, dh int, m affine) {
	stepX := m.ay*srcStride + m.ax*bpp // source byte step per destination column
	stepY := m.by*srcStride + m.bx*bpp // per destination row
	base := m.cy*srcStride + m.cx*bpp
	for dy := 0; dy < dh; dy++ {
		so := base + dy*stepY
		row := dst[dy*dstStride : dy*dstStride+dw*bpp]
		if bpp == 1 {
			for dx := range row {
				row[dx] = src[so]
				so += stepX
			}
			continue
		}
		if bpp == 4 {
			for do := 0; do < len(row); do += 4 {
				d, s := row[do:do+4:do+4], src[so:so+4:so+4]
				d[0], d[1], d[2], d[3] = s[0], s[1], s[2], s[3]
				so += stepX
			}
			continue
		}
		for do := 0; do < len(row); do += bpp {
			copy(row[do:do+bpp], src[so:so+bpp])
			so += stepX
		}
	}
}

// orientYCbCr converts s to RGB while remapping it through m, in one
// pass without an intermediate RGB copy (chroma indexed by shifts, valid
// for non-negative coordinates).
func orientYCbCr(d *image.NRGBA, s *image.YCbCr, m affine) {
	hx, hy := chromaShifts(s.SubsampleRatio)
	minX, minY := s.Rect.Min.X, s.Rect.Min.Y
	cx0, cy0 := minX>>hx, minY>>hy
	dw, dh := d.Rect.Dx(), d.Rect.Dy()
	for dy := 0; dy < dh; dy++ {
		row := d.Pix[dy*d.Stride : dy*d.Stride+4*dw]
		sx := minX + m.bx*dy + m.cx
		sy := minY + m.by*dy + m.cy
		for do := 0; do < len(row); do += 4 {
			yy := s.Y[(sy-minY)*s.YStride+sx-minX]
			ci := (sy>>hy-cy0)*s.CStride + sx>>hx - cx0
			r, g, b := color.YCbCrToRGB(yy, s.Cb[ci], s.Cr[ci])
			p := row[do : do+4 : do+4]
			p[0], p[1], p[2], p[3] = r, g, b, 0xFF
			sx += m.ax
			sy += m.ay
		}
	}
}

// chromaShifts returns the horizontal and vertical chroma subsampling of
// a YCbCr ratio as bit shifts.
func chromaShifts(r image.YCbCrSubsampleRatio) (hx, hy int) {
	switch r {
	case image.YCbCrSubsampleRatio422:
		return 1, 0
	case image.YCbCrSubsampleRatio420:
		return 1, 1
	case image.YCbCrSubsampleRatio440:
		return 0, 1
	case image.YCbCrSubsampleRatio411:
		return 2, 0
	case image.YCbCrSubsampleRatio410:
		return 2, 1
	}
	return 0, 0
}
