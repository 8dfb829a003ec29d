package trace_test

import (
	"os"
	"strconv"
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
	"tracelift/trace"
)

func TestDebugCase(t *testing.T) {
	cond := os.Getenv("DBG_COND")
	if cond == "" {
		t.Skip()
	}
	idx, _ := strconv.Atoi(os.Getenv("DBG_IDX"))
	c := accuracy.Cases([]string{cond}, nil, idx+1, 1)[idx]
	_, page, _ := accuracy.RenderCase(c)
	res, pg, err := digitise(page.Image)
	t.Logf("err %v warnings %v", err, res.Warnings)
	for _, p := range res.Panels {
		t.Logf("%v row %d col %d bounds %v zero %.1f q %.2f first %v", p.Lead, p.Row, p.Col, p.Bounds, p.ZeroY, p.Quality, p.Path[0])
	}
	drawOverlay("/tmp/tl/dbg.png", pg.Color, res)
	printed := accuracy.PrintedRecord(&page.Truth)
	x := printed.Signal(ecg.LeadIII)
	y := res.Record.Signal(ecg.LeadIII)
	for i := 180; i < 260; i += 2 {
		t.Logf("%d %.3f %.3f", i, x.Samples[i], y.Samples[i])
	}
	_ = trace.Lenient
}
