package trace

import (
	"image"
	"os"
	"testing"

	"tracelift/grid"
	"tracelift/imageproc"
	"tracelift/render"
)

func TestDebugRuns(t *testing.T) {
	if os.Getenv("DBG_RUNS") == "" {
		t.Skip()
	}
	rec, _ := render.CorpusRecord(3, false)
	opt, _ := render.ConditionOptions("clean", 3)
	p, _ := render.Render(rec, opt)
	pg, _ := imageproc.Prepare(p.Image, nil)
	gr, _ := grid.Detect(pg, nil)
	var cr columnRuns
	b := pg.Ink.Rect
	_ = b
	cr.scan(pg.Ink, imageRect(330, 187, 1068, 1014))
	t.Logf("pen %.1f opt trace width %.2f", penWidth(&cr), opt.TraceWidthMM)
	res := follow(&cr, defaultFollow(gr.Calibration.PxPerMMY.V, 601))
	for c := 440 - 330; c < 470-330; c++ {
		t.Logf("col %d runs %v", c+330, cr.col(c))
	}
	for _, q := range res.points {
		if q.X >= 440 && q.X < 470 {
			t.Logf("pt %.2f %.2f", q.X, q.Y)
		}
	}
}

func imageRect(x0, y0, x1, y1 int) image.Rectangle { return image.Rect(x0, y0, x1, y1) }
