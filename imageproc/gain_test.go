package imageproc

import (
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"testing"
)

// TestGainRowFixedMatchesFloat checks the fixed-point, incrementally
// interpolated gain row against the reference float gainRow: every entry
// within one 1/256 step of round(256·gain), for cell sizes that do and do
// not divide the width, block grids of one and several cells, and rows in
// the top and bottom margins.
func TestGainRowFixedMatchesFloat(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	cases := []struct {
		nx, ny int
		cell   float64
		w, h   int
	}{
		{1, 1, 64, 50, 40},
		{2, 3, 8, 16, 24},
		{5, 4, 24, 117, 90},
		{7, 5, 37.5, 260, 180},
		{12, 9, 120, 1433, 1010},
		{30, 20, 117, 3508, 2340},
	}
	for _, c := range cases {
		bg := &background{nx: c.nx, ny: c.ny, cell: c.cell}
		for ch := range bg.v {
			bg.v[ch] = make([]float64, c.nx*c.ny)
			for i := range bg.v[ch] {
				bg.v[ch][i] = 120 + 135*rng.Float64()
			}
		}
		ref := make([]float32, 3*c.w)
		got := make([]uint32, 3*c.w)
		for y := 0; y < c.h; y += max(1, c.h/37) {
			bg.gainRow(ref, y, c.w)
			bg.gainRowFixed(got, y, c.w)
			for i, v := range ref {
				want := int64(v*256 + 0.5)
				if d := int64(got[i]) - want; d < -1 || d > 1 {
					t.Fatalf("nx=%d cell=%g w=%d y=%d x=%d ch=%d: fixed %d, float %d", c.nx, c.cell, c.w, y, i/3, i%3, got[i], want)
				}
			}
		}
	}
}

// TestWarpAffineMatchesFloat checks the fixed-point affine resampler
// against a direct float evaluation of the same bilinear formula (weights
// round(frac·256), white outside): every channel within 1 level, for a
// rotation, a rotation with scale and an anisotropic stretch, on a random
// image with edges reaching the border.
func TestWarpAffineMatchesFloat(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	src := image.NewNRGBA(image.Rect(0, 0, 97, 61))
	for i := range src.Pix {
		src.Pix[i] = uint8(rng.IntN(256))
		if i%4 == 3 {
			src.Pix[i] = 255
		}
	}
	rot, _, _ := rotation(0.13, 97, 61)
	cases := []Homography{
		identity,
		rot,
		{1.7 * math.Cos(-0.4), 1.7 * math.Sin(-0.4), 20.3, -1.7 * math.Sin(-0.4), 1.7 * math.Cos(-0.4), 5.1, 0, 0, 1},
		{1, 0, 0, 0, 0.48, 0, 0, 0, 1},
	}
	for k, hm := range cases {
		dst := image.NewNRGBA(image.Rect(0, 0, 110, 80))
		warpNRGBA(dst, src, hm)
		for y := 0; y < 80; y++ {
			for x := 0; x < 110; x++ {
				sx, sy := Apply(hm, float64(x), float64(y))
				var want [3]float64
				if !(sx > -1 && sy > -1 && sx < 97 && sy < 61) {
					want = [3]float64{255, 255, 255}
				} else {
					x0, y0 := math.Floor(sx), math.Floor(sy)
					ax := math.Round((sx-x0)*256) / 256
					ay := math.Round((sy-y0)*256) / 256
					at := func(xx, yy, c int) float64 {
						if xx < 0 || yy < 0 || xx >= 97 || yy >= 61 {
							return 255
						}
						return float64(src.Pix[yy*src.Stride+4*xx+c])
					}
					for c := 0; c < 3; c++ {
						xi, yi := int(x0), int(y0)
						want[c] = (1-ay)*((1-ax)*at(xi, yi, c)+ax*at(xi+1, yi, c)) + ay*((1-ax)*at(xi, yi+1, c)+ax*at(xi+1, yi+1, c))
					}
				}
				for c := 0; c < 3; c++ {
					got := float64(dst.Pix[y*dst.Stride+4*x+c])
					if math.Abs(got-want[c]) > 1 {
						t.Fatalf("case %d (%d,%d) ch %d: got %v, want %.2f", k, x, y, c, got, want[c])
					}
				}
			}
		}
	}
}

// TestDownscaleBoxMeans checks downscale against the box-filter
// definition: each output pixel is the rounded mean of its f×f block
// (partial blocks at the right and bottom edges average what exists).
func TestDownscaleBoxMeans(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	src := image.NewNRGBA(image.Rect(0, 0, 23, 17))
	for i := range src.Pix {
		src.Pix[i] = uint8(rng.IntN(256))
	}
	for _, f := range []int{1, 2, 3, 4, 7} {
		d := downscale(src, f)
		for oy := 0; oy < d.Rect.Dy(); oy++ {
			for ox := 0; ox < d.Rect.Dx(); ox++ {
				for c := 0; c < 3; c++ {
					sum, n := 0, 0
					for y := oy * f; y < min(17, oy*f+f); y++ {
						for x := ox * f; x < min(23, ox*f+f); x++ {
							sum += int(src.Pix[y*src.Stride+4*x+c])
							n++
						}
					}
					want := (sum + n/2) / n
					if got := int(d.Pix[oy*d.Stride+4*ox+c]); got != want {
						t.Fatalf("f=%d (%d,%d) ch %d: got %d, want %d", f, ox, oy, c, got, want)
					}
				}
			}
		}
	}
}

// TestYCbCrFastPathExact checks the row-wise YCbCr conversion against the
// standard library's per-pixel YCbCrToRGB for every subsampling ratio and
// odd sizes (partial chroma blocks at the edges): bytes must be equal.
func TestYCbCrFastPathExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	for _, r := range []image.YCbCrSubsampleRatio{
		image.YCbCrSubsampleRatio444, image.YCbCrSubsampleRatio422, image.YCbCrSubsampleRatio420,
		image.YCbCrSubsampleRatio440, image.YCbCrSubsampleRatio411, image.YCbCrSubsampleRatio410,
	} {
		m := image.NewYCbCr(image.Rect(0, 0, 37, 23), r)
		for _, p := range [][]uint8{m.Y, m.Cb, m.Cr} {
			for i := range p {
				p[i] = uint8(rng.IntN(256))
			}
		}
		got := toNRGBA(m)
		for y := 0; y < 23; y++ {
			for x := 0; x < 37; x++ {
				rr, gg, bb := color.YCbCrToRGB(m.Y[m.YOffset(x, y)], m.Cb[m.COffset(x, y)], m.Cr[m.COffset(x, y)])
				i := y*got.Stride + 4*x
				if got.Pix[i] != rr || got.Pix[i+1] != gg || got.Pix[i+2] != bb || got.Pix[i+3] != 255 {
					t.Fatalf("%v (%d,%d): got %v, want %d %d %d", r, x, y, got.Pix[i:i+4], rr, gg, bb)
				}
			}
		}
	}
}

// TestGainRowColumnsExact: gainRow with its per-column interpolation
// weights computed once per page gives the bits of the per-pixel
// formula (block coordinate, clamping at the margins, linear weights).
func TestGainRowColumnsExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 17))
	for _, c := range []struct {
		nx, ny int
		cell   float64
		w      int
	}{{1, 1, 64, 50}, {5, 4, 24, 117}, {7, 5, 37.5, 260}, {36, 26, 24.4, 877}} {
		bg := &background{nx: c.nx, ny: c.ny, cell: c.cell}
		for ch := range bg.v {
			bg.v[ch] = make([]float64, c.nx*c.ny)
			for i := range bg.v[ch] {
				bg.v[ch][i] = 24 + 231*rng.Float64()
			}
		}
		got := make([]float32, 3*c.w)
		for y := 0; y < int(float64(c.ny)*c.cell); y += 7 {
			bg.gainRow(got, y, c.w)
			col := bg.blockGains(y, 255)
			inv := 1 / c.cell
			for x := 0; x < c.w; x++ {
				fx := (float64(x)+0.5)*inv - 0.5
				x0 := int(fx)
				if fx < 0 {
					x0, fx = 0, 0
				}
				if x0 >= c.nx-1 {
					x0, fx = c.nx-1, float64(c.nx-1)
				}
				x1 := min(x0+1, c.nx-1)
				ax := fx - float64(x0)
				for ch := 0; ch < 3; ch++ {
					if want := float32((1-ax)*col[ch][x0] + ax*col[ch][x1]); got[3*x+ch] != want {
						t.Fatalf("nx=%d w=%d y=%d x=%d ch=%d: %v, want %v", c.nx, c.w, y, x, ch, got[3*x+ch], want)
					}
				}
			}
		}
	}
}
