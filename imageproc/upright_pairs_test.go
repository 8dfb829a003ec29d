package imageproc

import (
	"bytes"
	"image"
	"image/jpeg"
	"math"
	"testing"

	"tracelift/internal/cputime"
)

// uprightSetup is what Prepare hands the upright pass for an input
// deskewed by a given angle: the separator and backgrounds it would use.
type uprightSetup struct {
	src       *source
	sep       *separator
	toSrc     Homography
	ow, oh    int
	bg, bgSrc *background // upright frame, input frame
}

func setupUpright(img image.Image, deg float64) uprightSetup {
	u := uprightSetup{src: newSource(img)}
	we := estimateWork(u.src)
	f, bgw := we.f, we.bg
	u.sep = we.sep
	u.toSrc, u.ow, u.oh = rotation(deg*math.Pi/180, u.src.w, u.src.h)
	s := float64(f)
	fullToWork := Homography{1 / s, 0, -(s - 1) / (2 * s), 0, 1 / s, -(s - 1) / (2 * s), 0, 0, 1}
	ub := max(8, min(u.ow, u.oh)/f/24)
	u.bg = bgw.resample(Mul(fullToWork, u.toSrc), u.ow, u.oh, ub*f)
	u.bgSrc = bgw.resample(fullToWork, u.src.w, u.src.h, ub*f)
	return u
}

// uprightBoth runs the upright pass of img deskewed by deg degrees both
// ways — separated in the input's frame then resampled (the pair path),
// and resampled then separated (the colour-first path).
func uprightBoth(img image.Image, deg float64) (sep *separator, pair, ref [3]*image.Gray) {
	u := setupUpright(img, deg)
	_, pair[0], pair[1], pair[2] = u.sep.upright(u.src, u.toSrc, u.ow, u.oh, u.bg, u.bgSrc, false)
	_, ref[0], ref[1], ref[2] = u.sep.upright(newSource(img), u.toSrc, u.ow, u.oh, u.bg, nil, true)
	return u.sep, pair, ref
}

// TestPairPathNearColourPath: separating the input before resampling it
// gives the maps of resampling first up to rounding and the geometry of
// the two one-dimensional resamplings: on a drawn sheet (red grid, dark
// trace, tinted paper) turned 2.7°, read as NRGBA and as Y′CbCr, fewer
// than 0.5 % of the ink pixels differ by more than 2 levels and of the
// grid strength by more than 8. The largest differences are bounded by
// the geometry: the row below is read tan 2.7° = 0.047 px further along
// than a bilinear sample would (newShear), which at the sheet's sharpest
// edges (255 levels a pixel) moves a level by up to 12; on top of that
// come the saturation of noisy paper channels under their gains before
// the separation and (Y′CbCr) the gains held over 32 px, which gave up to
// 8 (ink) and 16 (grid) with bilinear sampling. Measured: ink ≤ 0.39 %
// beyond 2 levels, max 11–12; grid ≤ 0.28 % beyond 8, max 12–15. A
// colour page keeps no luminance.
func TestPairPathNearColourPath(t *testing.T) {
	nrgba := rotatedSheet(110, 70, 6, 2.7).draw()
	var buf bytes.Buffer
	if err := jpeg.Encode(&buf, nrgba, &jpeg.Options{Quality: 90}); err != nil {
		t.Fatal(err)
	}
	ycc, err := jpeg.Decode(&buf)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name string
		img  image.Image
	}{{"NRGBA", nrgba}, {"Y′CbCr", ycc}} {
		sep, pair, ref := uprightBoth(c.img, -2.7)
		if !sep.colour {
			t.Fatalf("%s: grey separator for a red-grid sheet", c.name)
		}
		if pair[0] != nil {
			t.Errorf("%s: the pair path kept the luminance of a colour page", c.name)
		}
		for k, name := range []string{"gray", "ink", "grid"} {
			if pair[k] == nil || ref[k] == nil {
				continue
			}
			// Grid strength weighs the channels' differences, so the
			// saturation of noisy paper shows more in it.
			shift := int(math.Ceil(255 * math.Tan(2.7*math.Pi/180)))
			tol, most := 2, 8+shift
			if name == "grid" {
				tol, most = 8, 24
			}
			mx, frac := mapDiff(t, pair[k].Pix, ref[k].Pix, tol)
			t.Logf("%s %s: max %d, %.3f %% beyond %d levels", c.name, name, mx, 100*frac, tol)
			if frac > 0.005 || mx > most {
				t.Errorf("%s %s: %.2f %% of pixels differ by more than %d levels, up to %d", c.name, name, 100*frac, tol, mx)
			}
		}
	}
}

// BenchmarkUprightA4JPEG times the upright pass alone on the JPEG-decoded
// A4 scan of BenchmarkPrepareA4JPEG turned 0.7°: "pairs" separates the
// input rows first and resamples two maps (what Prepare does), "colour"
// resamples the colours and separates each upright pixel (the path
// photos keep). CPU time per page beside the wall time.
func BenchmarkUprightA4JPEG(b *testing.B) {
	u := setupUpright(a4ScanJPEG(b), 0.7)
	for _, c := range []struct {
		name string
		bgs  *background
	}{{"pairs", u.bgSrc}, {"colour", nil}} {
		b.Run(c.name, func(b *testing.B) {
			b.ReportAllocs()
			cpuDone := cputime.Report(b)
			for b.Loop() {
				u.sep.upright(u.src, u.toSrc, u.ow, u.oh, u.bg, c.bgs, false)
			}
			cpuDone()
		})
	}
}

// BenchmarkPairKernels times the pair path's kernels on rows of the
// JPEG-decoded A4 scan of BenchmarkUprightA4JPEG turned 0.7°: "fill"
// separates one input row from the Y′CbCr planes (fillYCbCr), "shear"
// resamples one separated row along x onto the upright columns
// (shearPairRow), "sample" makes one upright row from the window of
// sheared rows (sampleShearedRow). CPU time per row; divide by ≈ 3800 for
// the cost per pixel.
func BenchmarkPairKernels(b *testing.B) {
	u := setupUpright(a4ScanJPEG(b), 0.7)
	src := u.src
	fx := u.sep.fixed()
	ps := newPairSource(src, &fx, u.bgSrc)
	y0 := src.h / 2
	hm, w := u.toSrc, u.ow
	sh := newShear(hm, fx.paperPair(), w)
	b.Run("fill", func(b *testing.B) {
		d := make([]int16, 2*src.w)
		cpuDone := cputime.Report(b)
		y := y0
		for b.Loop() {
			ps.fillYCbCr(d, y)
			y = y0 + (y-y0+1)%64
		}
		cpuDone()
	})
	b.Run("shear", func(b *testing.B) {
		row, d := make([]int16, 2*src.w), make([]int16, 2*w)
		ps.fillYCbCr(row, y0)
		cpuDone := cputime.Report(b)
		v := y0
		for b.Loop() {
			shearPairRow(d, row, sh.rowStart(v), sh.step, sh.paper)
			v = y0 + (v-y0+1)%64
		}
		cpuDone()
	})
	b.Run("sample", func(b *testing.B) {
		span := windowSpan(hm, w, src.h)
		row := make([]int16, 2*src.w)
		win := newWindow(func(d []int16, v int) {
			ps.fillYCbCr(row, v)
			shearPairRow(d, row, sh.rowStart(v), sh.step, sh.paper)
		}, 2*w, src.h, span+72)
		stepY := toFix32(hm[3])
		a, c := make([]uint8, w), make([]uint8, w)
		starts := make([]int64, 64)
		r0, r1 := math.MaxInt, 0
		for k := range starts {
			_, sv := rowStart(hm, src.h/2+k)
			starts[k] = sv
			r0 = min(r0, int(min(sv, sv+int64(w-1)*stepY)>>32))
			r1 = max(r1, int(max(sv, sv+int64(w-1)*stepY)>>32)+1)
		}
		sp, ss, lo := win.cover(r0, r1)
		cpuDone := cputime.Report(b)
		k := 0
		for b.Loop() {
			sampleShearedRow(a, c, sp, ss, src.h, lo, starts[k], stepY, sh.paperRow)
			k = (k + 1) % 64
		}
		cpuDone()
	})
}
