package decode

import (
	"fmt"
	"image"
	"image/color"
	"testing"
)

// Every pixel type Orient keeps (TIFF 6.0 section 8 / Exif tag 0x0112
// positions, through displayed) comes back with its type and every
// stored pixel where the orientation tag puts it.
func TestOrientKeepsType(t *testing.T) {
	const w, h = 5, 3
	g := grayPattern(w, h)
	r := g.Rect
	fill := func(m interface{ Set(x, y int, c color.Color) }) {
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				v := g.GrayAt(x, y).Y
				m.Set(x, y, color.RGBA64{uint16(v) * 257, uint16(255-v) * 257, uint16(v/2)*257 + 7, 0xffff})
			}
		}
	}
	imgs := []image.Image{image.NewGray(r), image.NewGray16(r), image.NewRGBA(r), image.NewNRGBA(r),
		image.NewRGBA64(r), image.NewNRGBA64(r), image.NewCMYK(r), image.NewPaletted(r, color.Palette{color.Black, color.White, color.Gray{Y: 0x80}})}
	for _, m := range imgs {
		fill(m.(interface{ Set(x, y int, c color.Color) }))
		for o := 1; o <= 8; o++ {
			d := Orient(m, o)
			if got, want := fmt.Sprintf("%T", d), fmt.Sprintf("%T", m); got != want {
				t.Fatalf("%T o=%d: got %s", m, o, got)
			}
			for y := 0; y < h; y++ {
				for x := 0; x < w; x++ {
					dx, dy := displayed(o, x, y, w, h)
					if d.At(dx, dy) != m.At(x, y) {
						t.Fatalf("%T o=%d: stored (%d,%d) = %v, displayed (%d,%d) = %v", m, o, x, y, m.At(x, y), dx, dy, d.At(dx, dy))
					}
				}
			}
		}
	}
}

// orientDirs, which reads a PDF image placement as an orientation, agrees
// with Orient: one stored column (row) further on lands one step in
// orientDirs' column (row) direction on the upright image.
func TestOrientDirsMatchOrient(t *testing.T) {
	const w, h = 5, 3
	for o := 1; o <= 8; o++ {
		col, row := orientDirs(o)
		x0, y0 := displayed(o, 1, 1, w, h)
		xc, yc := displayed(o, 2, 1, w, h)
		xr, yr := displayed(o, 1, 2, w, h)
		if [2]int{xc - x0, yc - y0} != col || [2]int{xr - x0, yr - y0} != row {
			t.Errorf("o=%d: orientDirs col %v row %v; displayed steps col (%d,%d) row (%d,%d)", o, col, row, xc-x0, yc-y0, xr-x0, yr-y0)
		}
	}
	// Out-of-range values read as upright, as Orient leaves them.
	if col, row := orientDirs(0); col != [2]int{1, 0} || row != [2]int{0, 1} {
		t.Errorf("orientDirs(0) = %v, %v", col, row)
	}
}
