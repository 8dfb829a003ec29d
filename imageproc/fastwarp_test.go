package imageproc

import (
	"image"
	"math/rand/v2"
	"testing"
)

// TestAffineRowMatchesWarp: the row sampler of the one-pass front end
// gives the bytes of the whole-image affine warp, inside, at the edges and
// outside the input.
func TestAffineRowMatchesWarp(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	src := image.NewNRGBA(image.Rect(0, 0, 61, 47))
	for i := range src.Pix {
		src.Pix[i] = uint8(rng.IntN(256))
		if i%4 == 3 {
			src.Pix[i] = 255
		}
	}
	for k := 0; k < 20; k++ {
		th := (rng.Float64() - 0.5) * 0.6
		hm, w, h := rotation(th, 61, 47)
		hm[2] += rng.Float64()*4 - 2
		hm[5] += rng.Float64()*4 - 2
		want := image.NewNRGBA(image.Rect(0, 0, w, h))
		warpAffineNRGBA(want, src, hm)
		got := make([]uint8, 4*w)
		for y := 0; y < h; y++ {
			fy := float64(y)
			affineRowNRGBA(got, src.Pix, src.Stride, 61, 47, 0, toFix32(hm[1]*fy+hm[2]), toFix32(hm[4]*fy+hm[5]), toFix32(hm[0]), toFix32(hm[3]))
			for x := 0; x < 4*w; x++ {
				if got[x] != want.Pix[y*want.Stride+x] {
					t.Fatalf("case %d row %d byte %d: %d, want %d", k, y, x, got[x], want.Pix[y*want.Stride+x])
				}
			}
		}
	}
}
