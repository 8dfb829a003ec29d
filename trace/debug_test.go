package trace

import (
	"math"
	"testing"

	"tracelift/ecg"
	"tracelift/render"
)

func TestDebugLead(t *testing.T) {
	rec := synthRecord(t, 1)
	pg := renderPage(t, rec, render.Options{Layout: "3x4+1"})
	ink := naiveInk(pg.img)
	res, _ := Extract(ink, truthCal(pg.truth), truthPulses(pg.truth), nil)
	tr := printedTruth(pg.truth)
	x := tr.Signal(ecg.LeadI)
	y := res.Record.Signal(ecg.LeadI)
	t.Logf("truth fs %g start %g n %d; est fs %g n %d", x.SampleRate, x.Start, len(x.Samples), y.SampleRate, len(y.Samples))
	for lag := -10; lag <= 10; lag += 2 {
		var se, sx float64
		for i := 0; i < 1250; i++ {
			j := i + lag
			if j < 0 || j >= len(y.Samples) || math.IsNaN(y.Samples[j]) {
				continue
			}
			d := x.Samples[i] - y.Samples[j]
			se += d * d
			sx += x.Samples[i] * x.Samples[i]
		}
		t.Logf("lag %d: snr %.1f", lag, 10*math.Log10(sx/se))
	}
	for i := 505; i < 545; i++ {
		t.Logf("%d: %.3f %.3f", i, x.Samples[i], y.Samples[i])
	}
	for _, p := range pg.truth.Pulses[:1] {
		t.Logf("pulse %+v", p)
	}
	for _, p := range pg.truth.Panels[:2] {
		x0, y0 := pg.truth.PaperToPx(p.X0MM, p.BaselineYMM)
		t.Logf("panel %+v -> px %.1f %.1f", p, x0, y0)
	}
	t.Logf("panel0 bounds %v zero %.1f path0 %v", res.Panels[0].Bounds, res.Panels[0].ZeroY, res.Panels[0].Path[:3])
}
