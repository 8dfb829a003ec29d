package trace

import (
	"image"
	"os"
	"testing"

	"tracelift/grid"
	"tracelift/imageproc"
	"tracelift/render"
)

func TestDebugRows(t *testing.T) {
	if os.Getenv("DBG_ROWS") == "" {
		t.Skip()
	}
	rec, _ := render.CorpusRecord(1, true)
	opt, _ := render.ConditionOptions("overlap", 1)
	p, _ := render.Render(rec, opt)
	pg, _ := imageproc.Prepare(p.Image, nil)
	gr, _ := grid.Detect(pg, nil)
	for _, q := range gr.Pulses {
		t.Logf("pulse %+v", q)
	}
	for _, r := range findRows(pg.Ink, gr.Calibration, gr.Pulses) {
		t.Logf("row %+v", r)
	}
	t.Logf("cal %+v", gr.Calibration)
	var cr columnRuns
	cr.scan(pg.Ink, image.Rect(460, 400, 560, 720))
	for c := 0; c < 100; c += 3 {
		t.Logf("col %d %v", c+460, cr.col(c))
	}
}
