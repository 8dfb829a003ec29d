package render

import (
	"image"
	"math"
	"sort"
	"testing"
)

// TestAllInkAccounted renders pages without a grid and checks that every
// dark pixel is explained by the truth alone: within the stroke of a
// panel's trace (from the truth's own signals and geometry), a pulse, a
// column tick, or inside a recorded text box. A digitiser test can then
// trust the truth to describe everything printed.
func TestAllInkAccounted(t *testing.T) {
	rec := testRecord(500, 10)
	for _, lay := range []string{Layout3x4R1, LayoutCabrera3x4, Layout6x2, Layout12x1} {
		h := DemoHeader(2)
		p, err := Render(rec, &Options{Layout: lay, DPI: 100, Grid: Grid{Kind: GridNone}, Header: &h})
		if err != nil {
			t.Fatal(err)
		}
		tr := p.Truth
		img := p.Image.(*image.RGBA)
		s := tr.PxPerMMX
		half := math.Max(tr.TraceWidthMM*s/2, 0.5) + 1 // stroke plus its anti-aliased rim
		lines := panelPolylines(t, tr, tr.Record())
		for _, tk := range tr.Ticks {
			u0, v0 := tr.PaperToPx(tk[0], tk[1])
			u1, v1 := tr.PaperToPx(tk[0], tk[2])
			lines = append(lines, [][2]float64{{u0, v0}, {u1, v1}})
		}
		explained := func(u, v float64) bool {
			xm, ym := (u+0.5)/s, (v+0.5)/s
			for _, tx := range tr.Texts {
				b := tx.BoxMM
				if xm >= b[0]-0.3 && xm <= b[2]+0.3 && ym >= b[1]-0.3 && ym <= b[3]+0.3 {
					return true
				}
			}
			for _, pu := range tr.Pulses {
				if xm >= pu.X0MM-2.6 && xm <= pu.X1MM+2.6 && ym >= pu.BaselineYMM-pu.HeightMM-0.4 && ym <= pu.BaselineYMM+0.4 {
					return true
				}
			}
			for _, l := range lines {
				// x never decreases along a polyline: start at the first
				// segment that can reach u.
				i0 := max(sort.Search(len(l), func(i int) bool { return l[i][0] >= u-half })-1, 0)
				for i := i0; i+1 < len(l) && l[i][0] <= u+half; i++ {
					if segDist(u, v, l[i], l[i+1]) <= half {
						return true
					}
				}
			}
			return false
		}
		b := img.Bounds()
		stray := 0
		for y := 0; y < b.Dy(); y++ {
			for x := 0; x < b.Dx(); x++ {
				if ink(img, x, y) > 60 && !explained(float64(x), float64(y)) {
					if stray < 5 {
						t.Errorf("%s: unexplained ink at (%d, %d)", lay, x, y)
					}
					stray++
				}
			}
		}
		if stray > 0 {
			t.Errorf("%s: %d unexplained dark pixels", lay, stray)
		}
		if len(tr.Texts) < len(tr.Panels)+3 {
			t.Errorf("%s: %d texts recorded, want the labels and header lines", lay, len(tr.Texts))
		}
	}
}
