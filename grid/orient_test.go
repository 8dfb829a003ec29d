package grid

import (
	"image"
	"testing"

	"tracelift/imageproc"
	"tracelift/render"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// turn returns m turned q×90° counter-clockwise and the homography from
// m's pixels to the turned image's.
func turn(m image.Image, q int) (*image.NRGBA, [9]float64) {
	b := m.Bounds()
	w, h := b.Dx(), b.Dy()
	tw, th := w, h
	if q%2 == 1 {
		tw, th = h, w
	}
	// Turned (u,v) ← source: q=1: (W−1−v, u); q=2: (W−1−u, H−1−v); q=3: (v, H−1−u).
	W, H := float64(w-1), float64(h-1)
	var toSrc [9]float64
	switch q {
	case 1:
		toSrc = [9]float64{0, -1, W, 1, 0, 0, 0, 0, 1}
	case 2:
		toSrc = [9]float64{-1, 0, W, 0, -1, H, 0, 0, 1}
	case 3:
		toSrc = [9]float64{0, 1, 0, -1, 0, H, 0, 0, 1}
	default:
		toSrc = [9]float64{1, 0, 0, 0, 1, 0, 0, 0, 1}
	}
	out := image.NewNRGBA(image.Rect(0, 0, tw, th))
	imageproc.Warp(out, m, toSrc)
	inv, _ := imageproc.Invert(toSrc)
	return out, inv
}

// TestOrientationTurnedPages turns rendered pages by each quarter turn
// (a landscape page scanned portrait or upside down) and checks that
// Prepare turns them back and Detect still calibrates them.
func TestOrientationTurnedPages(t *testing.T) {
	if testing.Short() {
		t.Skip("renders pages")
	}
	for seed := uint64(1); seed <= 2; seed++ {
		rec, err := render.CorpusRecord(seed, false)
		if err != nil {
			t.Fatal(err)
		}
		opt, err := render.ConditionOptions("clean", seed)
		if err != nil {
			t.Fatal(err)
		}
		opt.DPI = 120
		pg, err := render.Render(rec, opt)
		if err != nil {
			t.Fatal(err)
		}
		for q := 0; q < 4; q++ {
			img, h := turn(pg.Image, q)
			p, err := imageproc.Prepare(img, nil)
			if err != nil {
				t.Fatal(err)
			}
			r, err := Detect(p, nil)
			if err != nil {
				t.Fatal(err)
			}
			ref := Reference{PaperToImage: imageproc.Mul(h, pg.Truth.PaperToImage), GridRectMM: pg.Truth.GridRectMM, GainMMPerMV: pg.Truth.GainMMPerMV}
			s := Evaluate(p, r, ref)
			if !s.OrientationOK {
				t.Errorf("seed %d turned %d×90°: orientation not restored (quarter turns %d)", seed, q, p.QuarterTurns)
				continue
			}
			if s.PxPerMMErrX > 0.003 || s.PxPerMMErrY > 0.003 {
				t.Errorf("seed %d turned %d×90°: px/mm error %.4f, %.4f", seed, q, s.PxPerMMErrX, s.PxPerMMErrY)
			}
		}
	}
}

// TestPhotoOrientationLowResolution: phone photos at 150 dpi (thin traces
// grow faint in the downscaled estimate) are registered upright. The
// rendered sheet is always upright, so any quarter turn is an error; with
// the colour-scan ink level (180) one of these pages was traced turned
// along its left edge as a single rhythm lead.
func TestPhotoOrientationLowResolution(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, seed := range []uint64{1, 2, 3, 4, 5, 6} {
		o, err := render.ConditionOptions("photo", seed)
		require.NoError(t, err)
		o.DPI = 150
		rec, err := render.CorpusRecord(seed, false)
		require.NoError(t, err)
		pg, err := render.Render(rec, o)
		require.NoError(t, err)
		p, err := imageproc.Prepare(pg.Image, nil)
		require.NoError(t, err, "seed %d", seed)
		assert.Equal(t, 0, p.QuarterTurns, "seed %d: page turned", seed)
	}
}

// TestOrientationTallStrokes: a 125 bpm record printed at 20 mm/mV (the
// overlap condition, corpus record 3), whose QRS strokes cross the
// neighbouring rows, stays upright. Its strokes filled the row profile
// and, measured against the tallest stroke column, its flat columns
// counted as empty, so the page was turned a quarter and traced as noise.
func TestOrientationTallStrokes(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	rec, err := render.CorpusRecord(3, true)
	require.NoError(t, err)
	for _, layout := range []string{"3x4", "cabrera-3x4"} {
		o, err := render.ConditionOptions("overlap", 3)
		require.NoError(t, err)
		o.Layout = layout
		pg, err := render.Render(rec, o)
		require.NoError(t, err)
		p, err := imageproc.Prepare(pg.Image, nil)
		require.NoError(t, err)
		assert.Equal(t, 0, p.QuarterTurns, "%s: page turned", layout)
	}
}
