package imageproc

import (
	"bytes"
	"image"
	"image/jpeg"
	"math/rand/v2"
	"testing"
)

// preparePair runs Prepare on img read in place and on img converted to
// NRGBA first (the reference path), and returns both pages.
func preparePair(t *testing.T, img image.Image) (got, ref *Page) {
	t.Helper()
	var err error
	if got, err = Prepare(img, nil); err != nil {
		t.Fatal(err)
	}
	if ref, err = Prepare(toNRGBA(img), nil); err != nil {
		t.Fatal(err)
	}
	if got.RotationDeg != ref.RotationDeg || got.QuarterTurns != ref.QuarterTurns || got.GridColor != ref.GridColor {
		t.Fatalf("geometry differs: %.4f° q%d %s, reference %.4f° q%d %s", got.RotationDeg, got.QuarterTurns, got.GridColor,
			ref.RotationDeg, ref.QuarterTurns, ref.GridColor)
	}
	// The colour page made on demand is the input warped through the
	// page's map (the whole-image warp, not the row passes).
	want := image.NewNRGBA(ref.Ink.Rect)
	warpNRGBA(want, toNRGBA(img), ref.ToSource)
	if mx, _ := mapDiff(t, got.Upright().Pix, want.Pix, 0); mx != 0 {
		t.Errorf("Upright differs from the warped input by up to %d", mx)
	}
	return got, ref
}

// mapDiff returns the largest absolute difference between two byte maps
// of the same size and the fraction of entries differing by more than tol.
func mapDiff(t *testing.T, a, b []uint8, tol int) (int, float64) {
	t.Helper()
	if len(a) != len(b) {
		t.Fatalf("map sizes %d and %d", len(a), len(b))
	}
	mx, n := 0, 0
	for i := range a {
		d := int(a[i]) - int(b[i])
		d = max(d, -d)
		mx = max(mx, d)
		if d > tol {
			n++
		}
	}
	return mx, float64(n) / float64(len(a))
}

// TestPrepareReadsInputsInPlace: the in-place readers (opaque RGBA as
// NRGBA, grey rows) and the upright pass give, byte for byte, the pages
// of the reference path that converts the whole input to NRGBA first;
// Y′CbCr input too, except a deskewed one, separated straight from its
// planes (within a few levels). Interpolating Y′CbCr planes before
// converting would not be equivalent: the conversion clips (a pink grid's
// red channel saturates on white paper).
func TestPrepareReadsInputsInPlace(t *testing.T) {
	for _, deg := range []float64{0, 2.7} {
		nrgba := rotatedSheet(110, 70, 6, deg).draw()
		rgba := &image.RGBA{Pix: nrgba.Pix, Stride: nrgba.Stride, Rect: nrgba.Rect}
		got, ref := preparePair(t, rgba)
		if got.Gray != nil || ref.Gray != nil {
			t.Errorf("RGBA %.1f°: a colour page keeps its luminance", deg)
		}
		for name, m := range map[string][2][]uint8{"ink": {got.Ink.Pix, ref.Ink.Pix}, "grid": {got.Grid.Pix, ref.Grid.Pix},
			"colour": {got.Upright().Pix, ref.Upright().Pix}} {
			if mx, _ := mapDiff(t, m[0], m[1], 0); mx != 0 {
				t.Errorf("RGBA %.1f°: %s differs by up to %d", deg, name, mx)
			}
		}

		grey := image.NewGray(nrgba.Rect)
		for i := range grey.Pix {
			grey.Pix[i] = uint8((77*int(nrgba.Pix[4*i]) + 150*int(nrgba.Pix[4*i+1]) + 29*int(nrgba.Pix[4*i+2]) + 128) >> 8)
		}
		got, ref = preparePair(t, grey)
		for name, m := range map[string][2][]uint8{"ink": {got.Ink.Pix, ref.Ink.Pix}, "grid": {got.Grid.Pix, ref.Grid.Pix}} {
			if mx, _ := mapDiff(t, m[0], m[1], 0); mx != 0 {
				t.Errorf("grey %.1f°: %s differs by up to %d", deg, name, mx)
			}
		}

		// Y′CbCr upright (rows read through a sliding window), turned a
		// quarter and turned over (converted whole before the pass).
		for q := 0; q < 3; q++ {
			var buf bytes.Buffer
			if err := jpeg.Encode(&buf, turnNRGBA(nrgba, q), &jpeg.Options{Quality: 90}); err != nil {
				t.Fatal(err)
			}
			ycc, err := jpeg.Decode(&buf)
			if err != nil {
				t.Fatal(err)
			}
			if _, ok := ycc.(*image.YCbCr); !ok {
				t.Fatalf("jpeg decoded to %T", ycc)
			}
			got, ref = preparePair(t, ycc)
			for name, m := range map[string][2][]uint8{"ink": {got.Ink.Pix, ref.Ink.Pix}, "grid": {got.Grid.Pix, ref.Grid.Pix},
				"colour": {got.Upright().Pix, ref.Upright().Pix}} {
				// A deskewed upright Y′CbCr page is separated straight
				// from its planes (fillYCbCr), in finer fixed point and
				// with gains per 32 px: a few levels, as in
				// TestPairPathNearColourPath.
				tol, most := 0, 0
				if deg != 0 && q == 0 && name != "colour" {
					tol, most = 2, 8
					if name == "grid" {
						tol, most = 8, 24
					}
				}
				if mx, frac := mapDiff(t, m[0], m[1], tol); mx > most || frac > 0.005 {
					t.Errorf("Y′CbCr %.1f° turned %d: %s differs by up to %d (%.2f %% beyond %d)", deg, q, name, mx, 100*frac, tol)
				}
			}
		}
	}
}

// turnNRGBA returns m turned q×90° counter-clockwise.
func turnNRGBA(m *image.NRGBA, q int) *image.NRGBA {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	tw, th := turnedSize(q, w, h)
	d := image.NewNRGBA(image.Rect(0, 0, tw, th))
	back := quarterTurn(q, w, h)
	for y := 0; y < th; y++ {
		for x := 0; x < tw; x++ {
			sx, sy := Apply(back, float64(x), float64(y))
			copy(d.Pix[y*d.Stride+4*x:y*d.Stride+4*x+4], m.Pix[int(sy)*m.Stride+4*int(sx):])
		}
	}
	return d
}

// TestDownscaleYCbCrExact: the work copy of a 4:2:0 or 4:2:2 Y′CbCr input,
// converted straight into the block sums, has the bytes of the box means
// of the converted input (odd widths, partial blocks, random pixels, so
// that every channel clips somewhere).
func TestDownscaleYCbCrExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 21))
	for _, r := range []image.YCbCrSubsampleRatio{image.YCbCrSubsampleRatio420, image.YCbCrSubsampleRatio422} {
		for _, sz := range [][2]int{{37, 23}, {64, 40}, {101, 9}} {
			m := image.NewYCbCr(image.Rect(0, 0, sz[0], sz[1]), r)
			for _, p := range [][]uint8{m.Y, m.Cb, m.Cr} {
				for i := range p {
					p[i] = uint8(rng.IntN(256))
				}
			}
			for _, f := range []int{2, 3, 4, 6} {
				got, want := downscaleSource(newSource(m), f), downscale(toNRGBA(m), f)
				if !bytes.Equal(got.Pix, want.Pix) || got.Rect != want.Rect {
					t.Errorf("%v %d×%d f=%d: work copy differs from the box means of the converted input", r, sz[0], sz[1], f)
				}
			}
		}
	}
}
