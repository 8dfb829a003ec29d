package imageproc

import (
	"image"
	"image/color"
	"testing"

	"github.com/stretchr/testify/assert"
)

// TestTwoLevels: pages of pure black and white (in the image types a
// 1-bit file decodes to) are bilevel; one grey or coloured pixel, or
// transparency, makes a page not bilevel.
func TestTwoLevels(t *testing.T) {
	g := image.NewGray(image.Rect(3, 5, 40, 30))
	for i := range g.Pix {
		g.Pix[i] = uint8(255 * (i % 3 / 2))
	}
	assert.True(t, twoLevels(g), "black and white grey image")
	g.SetGray(20, 20, color.Gray{Y: 128})
	assert.False(t, twoLevels(g), "one grey pixel")

	p := image.NewPaletted(image.Rect(0, 0, 20, 10), color.Palette{color.White, color.Black})
	p.SetColorIndex(4, 4, 1)
	assert.True(t, twoLevels(p), "1-bit paletted image")
	p.Palette = append(p.Palette, color.RGBA{R: 200, A: 255})
	p.SetColorIndex(5, 5, 2)
	assert.False(t, twoLevels(p), "paletted image using a red entry")

	n := image.NewNRGBA(image.Rect(0, 0, 8, 8))
	for i := 0; i < len(n.Pix); i += 4 {
		n.Pix[i], n.Pix[i+1], n.Pix[i+2], n.Pix[i+3] = 255, 255, 255, 255
	}
	n.Set(2, 2, color.Black)
	assert.True(t, twoLevels(n), "black and white NRGBA")
	n.Set(3, 3, color.NRGBA{R: 255, G: 255, B: 255, A: 128})
	assert.False(t, twoLevels(n), "half-transparent pixel")

	assert.False(t, twoLevels(image.NewGray(image.Rectangle{})), "empty image")
}
