package imageproc

import (
	"image"
	"math"
	"math/rand/v2"
	"testing"
)

// TestAffineWarpMatchesBilinear: the fixed-point affine warp (one
// affineRowNRGBA per row, as the one-pass front end samples) agrees with
// a direct floating-point bilinear interpolation (white paper outside the
// input), inside, at the edges and outside. Bound: the weights are
// rounded to 1/256 along each axis (≤ 1/512 each, so ≤ 255·(1/512 + 1/512)
// ≈ 1.0 level) plus the final rounding (0.5 level).
func TestAffineWarpMatchesBilinear(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	const sw, sh = 61, 47
	src := image.NewNRGBA(image.Rect(0, 0, sw, sh))
	for i := range src.Pix {
		src.Pix[i] = uint8(rng.IntN(256))
		if i%4 == 3 {
			src.Pix[i] = 255
		}
	}
	at := func(x, y, c int) float64 {
		if x < 0 || y < 0 || x >= sw || y >= sh {
			return 255
		}
		return float64(src.Pix[y*src.Stride+4*x+c])
	}
	for k := 0; k < 20; k++ {
		th := (rng.Float64() - 0.5) * 0.6
		hm, w, h := rotation(th, sw, sh)
		hm[2] += rng.Float64()*4 - 2
		hm[5] += rng.Float64()*4 - 2
		got := image.NewNRGBA(image.Rect(0, 0, w, h))
		warpAffineNRGBA(got, src, hm)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				px, py := Apply(hm, float64(x), float64(y))
				x0, y0 := int(math.Floor(px)), int(math.Floor(py))
				fx, fy := px-float64(x0), py-float64(y0)
				for c := 0; c < 3; c++ {
					want := 255.0
					if px > -1 && py > -1 && px < sw && py < sh {
						want = (1-fx)*(1-fy)*at(x0, y0, c) + fx*(1-fy)*at(x0+1, y0, c) +
							(1-fx)*fy*at(x0, y0+1, c) + fx*fy*at(x0+1, y0+1, c)
					}
					if g := float64(got.Pix[y*got.Stride+4*x+c]); math.Abs(g-want) > 1.5 {
						t.Fatalf("case %d (%d,%d) channel %d: %g, want %.2f", k, x, y, c, g, want)
					}
				}
			}
		}
	}
}
