package trace

import (
	"math"
	"sort"
	"strings"
	"testing"

	"tracelift/render"
)

// TestPanelPoint: Panel.Point maps the record's returned samples back onto
// the page where the panel's followed path lies (within 1.5 px at 90 % of
// the path's points, and within 0.5 px at the median), on an upright page
// and on the same page turned by 180° (traced turned, mapped back to the
// input's coordinates), so that an overlay can draw what the record
// holds.
func TestPanelPoint(t *testing.T) {
	rec := synthRecord(t, 1)
	pg := renderPage(t, rec, render.Options{Layout: "3x4+1"})
	ink := naiveInk(pg.img)
	for _, turned := range []bool{false, true} {
		in := ink
		if turned {
			in = rotate180(ink)
		}
		res, err := Extract(in, truthCal(pg.truth), nil, nil)
		if err != nil {
			t.Fatalf("turned %v: %v", turned, err)
		}
		if up := strings.Contains(strings.Join(res.Warnings, "\n"), "upside down"); up != turned {
			t.Fatalf("turned %v: traced turned %v", turned, up)
		}
		if len(res.Panels) != 13 {
			t.Fatalf("turned %v: %d panels", turned, len(res.Panels))
		}
		for _, p := range res.Panels {
			sig := res.Record.Signal(p.Lead)
			var d []float64
			for i := 0; i < len(p.Path); i += 7 {
				q := p.Path[i]
				tt := p.T0 + (q.X-p.X0)/p.PxPerS
				if tt < p.T0 || tt > p.T1 {
					continue
				}
				v := sig.At(tt)
				if math.IsNaN(v) {
					continue
				}
				got := p.Point(tt, v)
				if math.Abs(got.X-q.X) > 1e-6 {
					t.Fatalf("turned %v %v: x %.3f for path x %.3f", turned, p.Lead, got.X, q.X)
				}
				d = append(d, math.Abs(got.Y-q.Y))
			}
			if len(d) < 20 {
				t.Errorf("turned %v %v: %d points compared", turned, p.Lead, len(d))
				continue
			}
			sort.Float64s(d)
			if med, p90 := d[len(d)/2], d[len(d)*9/10]; med > 0.5 || p90 > 1.5 {
				t.Errorf("turned %v %v: |Δy| median %.2f px, p90 %.2f px", turned, p.Lead, med, p90)
			}
		}
	}
}
