package render_test

import (
	"fmt"
	"math"

	"tracelift/ecg"
	"tracelift/render"
)

// Print a 10 s lead II sine on a one-row strip and map one of its points
// to image pixels with the truth. (Checked by hand: the trace starts 16 mm
// from the paper's left edge, so 0.25 s at 25 mm/s is at 22.25 mm; 1 mV at
// 10 mm/mV is 10 mm above the 26 mm baseline; at 100 dpi that is
// 22.25 × 100/25.4 − 0.5 = 87.1 px and 16 × 100/25.4 − 0.5 = 62.5 px.)
func ExampleRender() {
	s := ecg.Signal{Lead: ecg.LeadII, SampleRate: 500, Samples: make([]float64, 5000)}
	for i := range s.Samples {
		s.Samples[i] = math.Sin(2 * math.Pi * float64(i) / 500)
	}
	rec := ecg.Record{Signals: []ecg.Signal{s}}
	page, err := render.Render(rec, &render.Options{Paper: render.PaperStrip, DPI: 100, Header: &render.Header{Hidden: true}})
	if err != nil {
		fmt.Println(err)
		return
	}
	tr := page.Truth
	p := tr.Panels[0]
	fmt.Printf("%s %s: lead %s, %g–%g s, baseline at %g mm\n", tr.Paper, tr.Layout, p.Lead, p.T0, p.T1, p.BaselineYMM)
	x, y := tr.PanelPoint(p, 0.25, 1) // the first peak: 1 mV at 0.25 s
	u, v := tr.PaperToPx(x, y)
	fmt.Printf("peak at (%.1f, %.1f) mm = (%.1f, %.1f) px\n", x, y, u, v)
	// Output:
	// strip rhythm: lead II, 0–10 s, baseline at 26 mm
	// peak at (22.2, 16.0) mm = (87.1, 62.5) px
}
