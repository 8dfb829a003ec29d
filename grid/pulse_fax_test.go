package grid

import (
	"math"
	"testing"

	"tracelift/imageproc"
	"tracelift/render"
)

// faxPage renders the fax condition's page for a corpus seed and layout
// (as tracelift eval does) and runs Prepare with the fax's resolution
// tags and Detect.
func faxPage(t *testing.T, layout string, seed uint64) (*render.Page, *Result) {
	t.Helper()
	rec, err := render.CorpusRecord(seed, false)
	if err != nil {
		t.Fatal(err)
	}
	o, err := render.ConditionOptions("fax", seed)
	if err != nil {
		t.Fatal(err)
	}
	o.Layout = layout
	pg, err := render.Render(rec, o)
	if err != nil {
		t.Fatal(err)
	}
	dx, dy, _ := pg.Truth.Resolution()
	p, err := imageproc.Prepare(pg.Image, &imageproc.Options{DPIX: dx, DPIY: dy})
	if err != nil {
		t.Fatalf("%s seed %d: %v", layout, seed, err)
	}
	r, err := Detect(p, nil)
	if err != nil {
		t.Fatalf("%s seed %d: %v", layout, seed, err)
	}
	return pg, r
}

// TestFaxGridlessCalibration: fax pages whose light grid vanished in the
// binarisation. With the trace baselines kept as ink, what remained of
// the luminance outside the ink (grid's darkness map) was the grey rim of
// the strokes, in dashes regular with the resampling to square pixels and
// the deskew; on 6x2 seed 1 it read as a grid 11 % off along y (gain
// read as 11.4 mm/mV; in the evaluation also 44 % off along x, heart rate
// 47 bpm too high) until imageproc marked that rim as weak ink. The fax target: px/mm within 1 % of the
// renderer's truth; the gain read from the pulses (10 mm/mV).
func TestFaxGridlessCalibration(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, c := range []struct {
		layout string
		seed   uint64
		tags   bool // nothing of the grid is left: px/mm from the tags
	}{
		{"6x2", 1, true}, {"12x1", 1, true}, {"3x4+1", 1, true},
		// QRS stroke columns that happened to form a run of five made a
		// column 'lattice' and were cut from the ink; what remained read
		// as a grid 94 % off along x until a lattice needed four lines
		// per strip on average. Then a few hundred stray grid dots read
		// 0.1 % off (5 dB lower median SNR than from the tags) until
		// imageproc marked such specks as weak ink.
		{"6x2", 13, true},
		// Dashed vertical 5 mm lines survive (98 dpi): x from the grid.
		{"3x4+3", 3, false},
		// Vertical lines only, deskewed by 1.49°: their steps every
		// 1/tan 1.49° = 38.5 px down the page read as a 5 mm period along
		// y, 4.9 % short (gain 10.67 mm/mV), until trustTags.
		{"12x1", 3, false},
	} {
		pg, r := faxPage(t, c.layout, c.seed)
		// Prepare makes the pixels square at the x resolution.
		want := pg.Truth.PxPerMMX
		cal := r.Calibration
		for _, v := range []struct {
			axis string
			got  float64
		}{{"x", cal.PxPerMMX.V}, {"y", cal.PxPerMMY.V}} {
			if e := math.Abs(v.got/want - 1); e > 0.01 {
				t.Errorf("%s seed %d: px/mm %s %.3f, truth %.3f (%.1f %% off)", c.layout, c.seed, v.axis, v.got, want, 100*e)
			}
		}
		if c.tags && (cal.PxPerMMX.Origin != FromMetadata || cal.PxPerMMY.Origin != FromMetadata) {
			t.Errorf("%s seed %d: px/mm from %v × %v, want the resolution tags (no grid left on the page)", c.layout, c.seed, cal.PxPerMMX.Origin, cal.PxPerMMY.Origin)
		}
		if cal.GainMMPerMV.Origin != FromPulse || math.Abs(cal.GainMMPerMV.V-pg.Truth.GainMMPerMV) > 0.01 {
			t.Errorf("%s seed %d: gain %v, truth %g mm/mV from the pulses", c.layout, c.seed, cal.GainMMPerMV, pg.Truth.GainMMPerMV)
		}
	}
}
