package imageproc

import (
	"bytes"
	"image"
	"math/rand/v2"
	"testing"
)

// TestApplyMaskBlocks: zeroing by whole blocks leaves exactly the pixels
// whose block is paper (partial blocks at the right and bottom edges, a
// sub-image whose stride is wider than its rows).
func TestApplyMaskBlocks(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 12))
	const block = 7
	full := image.NewGray(image.Rect(0, 0, 60, 41))
	for i := range full.Pix {
		full.Pix[i] = uint8(1 + rng.IntN(255))
	}
	m := full.SubImage(image.Rect(2, 1, 52, 39)).(*image.Gray)
	w, h := m.Rect.Dx(), m.Rect.Dy()
	nx, ny := (w+block-1)/block, (h+block-1)/block
	mask := make([]bool, nx*ny)
	for i := range mask {
		mask[i] = rng.IntN(3) > 0
	}
	want := make([]uint8, 0, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := m.Pix[y*m.Stride+x]
			if !mask[(y/block)*nx+x/block] {
				v = 0
			}
			want = append(want, v)
		}
	}
	before := append([]uint8(nil), full.Pix...)
	applyMask(mask, block, m)
	got := make([]uint8, 0, w*h)
	for y := 0; y < h; y++ {
		got = append(got, m.Pix[y*m.Stride:y*m.Stride+w]...)
	}
	if !bytes.Equal(got, want) {
		t.Fatal("masked map differs from the per-pixel rule")
	}
	// Pixels outside the sub-image are untouched.
	for y := 0; y < full.Rect.Dy(); y++ {
		for x := 0; x < full.Rect.Dx(); x++ {
			if !(image.Point{x, y}).In(m.Rect) && full.Pix[y*full.Stride+x] != before[y*full.Stride+x] {
				t.Fatalf("pixel (%d,%d) outside the map changed", x, y)
			}
		}
	}
}
