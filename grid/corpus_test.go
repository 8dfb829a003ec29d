package grid

import (
	"fmt"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"tracelift/imageproc"
	"tracelift/render"
)

// corpusScore renders page i of a condition (render.CorpusPage, with its
// truth sidecar), runs Prepare and Detect, and scores them.
func corpusScore(t testing.TB, cond string, seed uint64, i int) (Score, error) {
	pg, err := render.CorpusPage(seed, cond, i)
	if err != nil {
		t.Fatalf("render %s %d: %v", cond, i, err)
	}
	var opt imageproc.Options
	if cond == "fax" {
		// A fax TIFF carries its resolution tags (XResolution 282,
		// YResolution 283; standards.md §6.2), which the decoder passes on.
		opt.DPIX, opt.DPIY = pg.Truth.PxPerMMX*25.4, pg.Truth.PxPerMMY*25.4
	}
	p, err := imageproc.Prepare(pg.Image, &opt)
	if err != nil {
		return Score{}, err
	}
	r, err := Detect(p, nil)
	if err != nil {
		return Score{}, err
	}
	tr := pg.Truth
	return Evaluate(p, r, Reference{PaperToImage: tr.PaperToImage, ImageToPaper: tr.PxToPaper, GridRectMM: tr.GridRectMM,
		RotationDeg: tr.RotationDeg, GainMMPerMV: tr.GainMMPerMV, SpeedMMPerS: tr.SpeedMMPerS}), nil
}

// TestCorpusAccuracy asserts the front end's accuracy bounds on one
// rendered page per condition (the renderer's truth sidecar is the
// reference): skew within 0.1°, px/mm within 0.3 % on scans and 1 % on fax,
// gain read exactly, orientation right.
func TestCorpusAccuracy(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, tc := range []struct {
		cond   string
		pxTol  float64
		skewOK bool
	}{
		{"clean", 0.003, true},
		{"scan", 0.003, true},
		{"gray", 0.003, true},
		{"fax", 0.01, true},
		{"lowres", 0.003, true},
	} {
		t.Run(tc.cond, func(t *testing.T) {
			s, err := corpusScore(t, tc.cond, 100, 0)
			if err != nil {
				t.Fatal(err)
			}
			if s.SkewErrDeg > 0.1 {
				t.Errorf("skew error %.3f° > 0.1°", s.SkewErrDeg)
			}
			if !s.OrientationOK {
				t.Fatalf("orientation wrong")
			}
			if s.PxPerMMErrX > tc.pxTol || s.PxPerMMErrY > tc.pxTol {
				t.Errorf("px/mm error x %.4f y %.4f > %.3f", s.PxPerMMErrX, s.PxPerMMErrY, tc.pxTol)
			}
			if !s.GainOK {
				t.Errorf("gain misread")
			}
		})
	}
}

// TestCorpusEvaluation prints the per-condition evaluation table over
// TRACELIFT_EVAL_N pages (default 20) per condition, seed
// TRACELIFT_EVAL_SEED (default 1000). It runs only when
// TRACELIFT_EVAL is set: it takes minutes.
func TestCorpusEvaluation(t *testing.T) {
	if os.Getenv("TRACELIFT_EVAL") == "" {
		t.Skip("set TRACELIFT_EVAL=1 to run the full front-end evaluation")
	}
	n := 20
	if v, err := strconv.Atoi(os.Getenv("TRACELIFT_EVAL_N")); err == nil && v > 0 {
		n = v
	}
	fmt.Printf("| condition | pages | fail | skew err median / p95 (°) | px/mm err x median / p95 (%%) | y median / p95 (%%) | gain ok / read from pulses | orient ok | residual p95 (mm) | s/page |\n|---|---|---|---|---|---|---|---|---|---|\n")
	conds := []string{"clean", "scan", "gray", "fax", "photo", "lowres"}
	if v := os.Getenv("TRACELIFT_EVAL_COND"); v != "" {
		conds = strings.Split(v, ",")
	}
	verbose := os.Getenv("TRACELIFT_EVAL_PAGES") != ""
	seed := uint64(1000)
	if v, err := strconv.ParseUint(os.Getenv("TRACELIFT_EVAL_SEED"), 10, 64); err == nil {
		seed = v
	}
	for _, cond := range conds {
		var sk, ex, ey, res []float64
		fails, gain, read, orient := 0, 0, 0, 0
		t0 := time.Now()
		for i := 0; i < n; i++ {
			s, err := corpusScore(t, cond, seed, i)
			if verbose {
				fmt.Printf("  %s %d: %+v err %v\n", cond, i, s, err)
			}
			if err != nil {
				fails++
				continue
			}
			sk = append(sk, s.SkewErrDeg)
			if s.OrientationOK {
				orient++
				ex = append(ex, 100*s.PxPerMMErrX)
				ey = append(ey, 100*s.PxPerMMErrY)
				res = append(res, s.ResidualMM)
			}
			if s.GainOK {
				gain++
			}
			if s.GainRead {
				read++
			}
		}
		fmt.Printf("| %s | %d | %d | %.3f / %.3f | %.3f / %.3f | %.3f / %.3f | %d%% / %d%% | %d%% | %.2f | %.1f |\n",
			cond, n, fails, quant(sk, 0.5), quant(sk, 0.95), quant(ex, 0.5), quant(ex, 0.95), quant(ey, 0.5), quant(ey, 0.95),
			100*gain/n, 100*read/n, 100*orient/n, quant(res, 0.95), time.Since(t0).Seconds()/float64(n))
	}
}

func quant(v []float64, q float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	s := slices.Clone(v)
	slices.Sort(s)
	return s[min(len(s)-1, int(q*float64(len(s))))]
}

// TestCorpusPhoto asserts the photo bounds of the issue on seeded phone
// photos (render.CorpusPage "photo": perspective, ±10° skew, lens k1
// ±0.01–0.04, blur, JPEG; the truth sidecar's full mapping, lens included,
// is the reference): residual distortion ≤ 0.5 mm over the grid area,
// px/mm within 1 % on both axes, orientation right.
func TestCorpusPhoto(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, i := range []int{0, 1} {
		t.Run(strconv.Itoa(i), func(t *testing.T) {
			t.Parallel()
			s, err := corpusScore(t, "photo", 100, i)
			if err != nil {
				t.Fatal(err)
			}
			if !s.OrientationOK {
				t.Fatalf("orientation wrong")
			}
			if s.ResidualMM > 0.5 {
				t.Errorf("residual distortion %.3f mm > 0.5 mm", s.ResidualMM)
			}
			if s.PxPerMMErrX > 0.01 || s.PxPerMMErrY > 0.01 {
				t.Errorf("px/mm error x %.4f y %.4f > 1 %%", s.PxPerMMErrX, s.PxPerMMErrY)
			}
			t.Logf("residual %.3f mm, px/mm error x %.4f y %.4f, skew %.3f°", s.ResidualMM, s.PxPerMMErrX, s.PxPerMMErrY, s.SkewErrDeg)
		})
	}
}

// TestCorpusPhotoGreyDense guards the registration of a photo whose grey
// grid's major lines barely stand out from the minor ones under a dense
// 3x4+3 layout (photo seed 1000, page 11): the first fit over all tiles
// misnumbers lines (rms about 11 px) and is mended by the node refinement
// on the 1 mm lines. Before the clearer-tile retry the page kept the
// coarse correction (6.5 mm residual, px/mm 4 % off); with the retry alone
// 0.89 mm; with the refinement 0.10 mm. The bounds are the issue's:
// residual ≤ 0.5 mm, px/mm within 1 %, orientation right.
func TestCorpusPhotoGreyDense(t *testing.T) {
	checkPhotoPage(t, 1000, 11)
}

// TestCorpusPhotoMisnumbered guards a photo (seed 2000, page 6) whose
// first lattice fit passed its rms check while regions of it were
// numbered a period off (tiles on the desk and at the sheet's edge): it
// was left with 3.8 mm of distortion at a corner. The node refinement
// unwraps the 1 mm lines' offsets from node to node and mends it
// (0.02 mm). Bounds as in TestCorpusPhotoGreyDense.
func TestCorpusPhotoMisnumbered(t *testing.T) {
	checkPhotoPage(t, 2000, 6)
}

// checkPhotoPage asserts the photo bounds (residual distortion
// ≤ 0.5 mm over the grid area, px/mm within 1 %, orientation right) on
// one corpus photo.
func checkPhotoPage(t *testing.T, seed uint64, i int) {
	if testing.Short() {
		t.Skip("renders a full page")
	}
	t.Parallel() // one photo page each: the package's wall time on two cores
	s, err := corpusScore(t, "photo", seed, i)
	if err != nil {
		t.Fatal(err)
	}
	if !s.OrientationOK {
		t.Fatalf("orientation wrong")
	}
	if s.PxPerMMErrX > 0.01 || s.PxPerMMErrY > 0.01 {
		t.Errorf("px/mm error x %.4f y %.4f > 1 %%", s.PxPerMMErrX, s.PxPerMMErrY)
	}
	if s.ResidualMM > 0.5 {
		t.Errorf("residual distortion %.3f mm > 0.5 mm", s.ResidualMM)
	}
	t.Logf("residual %.3f mm, px/mm error x %.4f y %.4f", s.ResidualMM, s.PxPerMMErrX, s.PxPerMMErrY)
}
