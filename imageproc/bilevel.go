package imageproc

import "image"

// twoLevels reports whether every pixel of img is pure black or pure
// white (a fax, a 1-bit scan). It stops at the first pixel that is
// neither, so colour and grey pages cost a few rows at most.
func twoLevels(img image.Image) bool {
	b := img.Bounds()
	if b.Empty() {
		return false
	}
	switch m := img.(type) {
	case *image.Gray:
		for y := b.Min.Y; y < b.Max.Y; y++ {
			o := m.PixOffset(b.Min.X, y)
			for _, v := range m.Pix[o : o+b.Dx()] {
				if v != 0 && v != 255 {
					return false
				}
			}
		}
		return true
	case *image.Paletted:
		bw := make([]bool, len(m.Palette))
		for i, c := range m.Palette {
			bw[i] = blackOrWhite(c.RGBA())
		}
		for y := b.Min.Y; y < b.Max.Y; y++ {
			o := m.PixOffset(b.Min.X, y)
			for _, v := range m.Pix[o : o+b.Dx()] {
				if int(v) >= len(bw) || !bw[v] {
					return false
				}
			}
		}
		return true
	case *image.NRGBA:
		for y := b.Min.Y; y < b.Max.Y; y++ {
			o := m.PixOffset(b.Min.X, y)
			row := m.Pix[o : o+4*b.Dx()]
			for i := 0; i < len(row); i += 4 {
				if v := row[i]; (v != 0 && v != 255) || row[i+1] != v || row[i+2] != v || row[i+3] != 255 {
					return false
				}
			}
		}
		return true
	}
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			if !blackOrWhite(img.At(x, y).RGBA()) {
				return false
			}
		}
	}
	return true
}

// blackOrWhite reports whether an opaque colour (16-bit channels, alpha
// premultiplied) is pure black or pure white.
func blackOrWhite(r, g, b, a uint32) bool {
	if a != 0xffff {
		return false
	}
	return r == g && g == b && (r == 0 || r == 0xffff)
}
