package imageproc

import (
	"bytes"
	"image"
	"math/rand/v2"
	"testing"

	"tracelift/internal/cputime"
)

// TestWarpGrayAffineSame: the affine warp without the division gives
// warpGray's bytes (fill 0) for rotations by a range of angles, quarter
// turns and a projective map (which it hands to warpGray).
func TestWarpGrayAffineSame(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 17))
	src := image.NewGray(image.Rect(0, 0, 301, 177))
	for i := range src.Pix {
		src.Pix[i] = uint8(rng.IntN(256))
	}
	maps := []Homography{quarterTurn(1, 301, 177), {1, 0.01, -3, 0.002, 1, 2, 1e-5, 0, 1}}
	for _, deg := range []float64{-11.7, -3.3, -0.05, 0.7, 6.1} {
		m, _, _ := rotation(deg*3.14159265358979/180, 301, 177)
		maps = append(maps, m)
	}
	for i, m := range maps {
		got := image.NewGray(image.Rect(0, 0, 330, 220))
		want := image.NewGray(got.Rect)
		warpGrayAffine(got, src, m)
		warpGray(want, src, m, 0)
		if !bytes.Equal(got.Pix, want.Pix) {
			t.Errorf("map %d %v: warpGrayAffine differs from warpGray", i, m)
		}
	}
}

// BenchmarkOrientationInkA4JPEG times orientationInk (the deskewed work
// ink map orientation reads) for the A4 JPEG scan, turned 2.96°.
func BenchmarkOrientationInkA4JPEG(b *testing.B) {
	img, err := a4JPEG()
	if err != nil {
		b.Fatal(err)
	}
	ink := workLineMap(img) // any work-sized map: the cost is the warp
	toWork, cw, ch := rotation(-2.96*3.14159265358979/180, ink.Rect.Dx(), ink.Rect.Dy())
	b.ResetTimer()
	cpuDone := cputime.Report(b)
	for b.Loop() {
		orientationInk(ink, toWork, cw, ch)
	}
	cpuDone()
}
