package imageproc

import (
	"bytes"
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

// TestAffineSepRowMatches: the one-loop sampling and separation of the
// upright pass (affineSepRow) gives, byte for byte, the maps of
// sepFixed.row applied to the colour row of affineRowNRGBA, for colour
// and grey separators, on rows that run inside the input, cross its
// edges or miss it, with random gains (saturating ones included).
func TestAffineSepRowMatches(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 11))
	const sw, sh = 83, 57
	src := image.NewNRGBA(image.Rect(0, 0, sw, sh))
	for i := range src.Pix {
		src.Pix[i] = uint8(rng.IntN(256))
		if i%4 == 3 {
			src.Pix[i] = 255
		}
	}
	seps := []*separator{
		{colour: true, ka: [3]float64{0.0031, -0.0012, -0.0009}, kb: [3]float64{-0.0004, 0.0017, 0.0021}, inkLo: 45, inkHi: 140},
		{colour: false, inkLo: 50, inkHi: 150},
	}
	for k := 0; k < 40; k++ {
		th := (rng.Float64() - 0.5) * 0.5
		hm, w, h := rotation(th, sw, sh)
		// Shifted by up to a fifth of the page: rows leave the input.
		hm[2] += (rng.Float64() - 0.5) * 0.4 * sw
		hm[5] += (rng.Float64() - 0.5) * 0.4 * sh
		sep := seps[k%2]
		f := sep.fixed()
		g := make([]uint32, 3*w)
		for i := range g {
			g[i] = uint32(180 + rng.IntN(200))
		}
		want, got := make([]uint8, 4*w), make([]uint8, 4*w)
		maps := func() [3][]uint8 { return [3][]uint8{make([]uint8, w), make([]uint8, w), make([]uint8, w)} }
		wm, gm := maps(), maps()
		sx, sy := toFix32(hm[0]), toFix32(hm[3])
		for y := 0; y < h; y++ {
			fy := float64(y)
			x0, y0 := toFix32(hm[1]*fy+hm[2]), toFix32(hm[4]*fy+hm[5])
			affineRowNRGBA(want, src.Pix, src.Stride, sw, sh, 0, x0, y0, sx, sy)
			f.row(want, g, wm[0], wm[1], wm[2])
			f.affineSepRow(got, g, gm[0], gm[1], gm[2], src.Pix, src.Stride, sw, sh, 0, x0, y0, sx, sy)
			for m := range wm {
				if !bytes.Equal(wm[m], gm[m]) {
					t.Fatalf("case %d row %d (colour %v): map %d differs", k, y, sep.colour, m)
				}
			}
		}
	}
}
