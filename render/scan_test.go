package render

import (
	"image"
	"math"
	"testing"

	"tracelift/scansim"
)

// grayAt returns 255 − luminance-ish darkness (max channel) of any image.
func darkness(img image.Image, x, y int) float64 {
	r, g, b, _ := img.At(x, y).RGBA()
	return 255 - float64(max(r, g, b)>>8)
}

// TestScanGeometry renders with a geometric scan simulation (rotation and
// unequal scales, no blur or noise) and checks that the truth's composed
// homography still puts the trace where the ink is: the ink centroid in a
// small window around each predicted point lies within half a pixel of the
// predicted trace line (perpendicular distance).
func TestScanGeometry(t *testing.T) {
	rec := sineRecord(500, 10, 0.4, 0.4, 0)
	for _, sc := range []scansim.Options{
		{RotationDeg: 2.5, ScaleX: 0.8, ScaleY: 0.8},
		{RotationDeg: -1.2, ScaleX: 0.68, ScaleY: 0.5},
		{Perspective: 0.08, RotationDeg: 4, Seed: 3},
		{RotationDeg: -3, LensK1: 0.04, Perspective: 0.05, Seed: 5},
		{LensK1: -0.03, ScaleX: 0.9, ScaleY: 0.9},
	} {
		p, err := Render(rec, &Options{Layout: Layout12x1, DPI: 200, Grid: Grid{Kind: GridNone}, Header: hidden(), Scan: &sc})
		if err != nil {
			t.Fatal(err)
		}
		tr := p.Truth
		if sc.Perspective == 0 && sc.LensK1 == 0 {
			if math.Abs(tr.RotationDeg-sc.RotationDeg) > 1e-6 {
				t.Errorf("rotation %g°, want %g°", tr.RotationDeg, sc.RotationDeg)
			}
			if w := 200 / 25.4 * sc.ScaleX; math.Abs(tr.PxPerMMX-w) > 1e-6 {
				t.Errorf("px/mm x %g, want %g", tr.PxPerMMX, w)
			}
			if w := 200 / 25.4 * sc.ScaleY; math.Abs(tr.PxPerMMY-w) > 1e-6 {
				t.Errorf("px/mm y %g, want %g", tr.PxPerMMY, w)
			}
		}
		// PxToPaper inverts PaperToPx.
		for _, q := range [][2]float64{{0, 0}, {150, 100}, {297, 210}} {
			u, v := tr.PaperToPx(q[0], q[1])
			x, y, ok := tr.PxToPaper(u, v)
			if !ok || math.Abs(x-q[0]) > 1e-7 || math.Abs(y-q[1]) > 1e-7 {
				t.Errorf("PxToPaper(PaperToPx(%v)) = %g, %g", q, x, y)
			}
		}
		if b := p.Image.Bounds(); b.Dx() != tr.WidthPx || b.Dy() != tr.HeightPx {
			t.Errorf("truth size %d×%d, image %v", tr.WidthPx, tr.HeightPx, b)
		}
		var worst float64
		n := 0
		for _, pn := range tr.Panels {
			sig := rec.Signal(mustLead(t, pn.Lead))
			for ts := pn.T0 + 0.2; ts < pn.T1-0.2; ts += 0.37 {
				x, y := tr.PanelPoint(pn, ts, sampleLinear(sig, ts))
				u, v := tr.PaperToPx(x, y)
				x2, y2 := tr.PanelPoint(pn, ts+0.01, sampleLinear(sig, ts+0.01))
				u2, v2 := tr.PaperToPx(x2, y2)
				du, dv := u2-u, v2-v
				l := math.Hypot(du, dv)
				nu, nv := -dv/l, du/l // unit normal of the trace
				var sw, su, sv float64
				for yy := int(v) - 4; yy <= int(v)+4; yy++ {
					for xx := int(u) - 4; xx <= int(u)+4; xx++ {
						if w := darkness(p.Image, xx, yy) - 40; w > 0 {
							sw += w
							su += w * float64(xx)
							sv += w * float64(yy)
						}
					}
				}
				if sw == 0 {
					t.Fatalf("%+v: no ink near (%.1f, %.1f) for %s at %.2f s", sc, u, v, pn.Lead, ts)
				}
				d := math.Abs((su/sw-u)*nu + (sv/sw-v)*nv)
				worst = math.Max(worst, d)
				n++
			}
		}
		t.Logf("rotation %g° scale %g×%g perspective %g: worst perpendicular offset %.3f px over %d points", sc.RotationDeg, sc.ScaleX, sc.ScaleY, sc.Perspective, worst, n)
		if worst > 0.5 {
			t.Errorf("scan %+v: worst offset %.3f px, want ≤ 0.5", sc, worst)
		}
	}
}

// TestConditions renders every named condition at a small size and
// checks the truth records it.
func TestConditions(t *testing.T) {
	if testing.Short() {
		t.Skip("renders eight scanned pages")
	}
	for i, name := range ConditionNames() {
		o, err := ConditionOptions(name, uint64(i+1))
		if err != nil {
			t.Fatal(err)
		}
		if (name == "clean") != (o.Scan == nil) {
			t.Errorf("%s: scan options %v", name, o.Scan)
		}
		// Keep the test light: 100 dpi, with the condition's scan
		// simulation drawn for that resolution.
		o.DPI = 100
		if o.Scan, err = ConditionScan(name, o.DPI, uint64(i+1)); err != nil {
			t.Fatal(err)
		}
		o.Grid.Color = "red" // grid ink stays lighter than 40 in darkness
		rec, err := CorpusRecord(uint64(i), name == "overlap")
		if err != nil {
			t.Fatal(err)
		}
		p, err := Render(rec, o)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if p.Truth.Condition != name || p.Image.Bounds().Dx() != p.Truth.WidthPx {
			t.Errorf("%s: truth %q %d px wide, image %v", name, p.Truth.Condition, p.Truth.WidthPx, p.Image.Bounds())
		}
		// The pulses' top strokes are where the truth says (homography and
		// lens warp), in the final image: dark within 1 px of the mapped
		// point.
		tr := p.Truth
		for _, pu := range tr.Pulses {
			u, v := tr.PaperToPx((pu.X0MM+pu.X1MM)/2, pu.BaselineYMM-pu.HeightMM)
			best := 0.0
			for dy := -1; dy <= 1; dy++ {
				for dx := -1; dx <= 1; dx++ {
					best = math.Max(best, darkness(p.Image, int(math.Round(u))+dx, int(math.Round(v))+dy))
				}
			}
			if best < 60 {
				t.Errorf("%s: pulse %d top at (%.1f, %.1f) px not dark (%.0f)", name, pu.Row, u, v, best)
			}
		}
	}
	if _, err := ConditionOptions("mud", 1); err == nil {
		t.Error("unknown condition accepted")
	}
	// Same seed, same options.
	a, _ := ConditionOptions("photo", 9)
	b, _ := ConditionOptions("photo", 9)
	if a.Layout != b.Layout || a.Grid != b.Grid || *a.Scan != *b.Scan {
		t.Error("ConditionOptions is not deterministic")
	}
}

// TestCorpus: the iterator yields CorpusPage's pages and stops on errors.
func TestCorpus(t *testing.T) {
	if testing.Short() {
		t.Skip("renders two 300-dpi pages")
	}
	var got []Truth
	for p, err := range Corpus(5, "clean", 2) {
		if err != nil {
			t.Fatal(err)
		}
		got = append(got, p.Truth)
	}
	if len(got) != 2 {
		t.Fatalf("%d pages, want 2", len(got))
	}
	p1, err := CorpusPage(5, "clean", 1)
	if err != nil {
		t.Fatal(err)
	}
	if p1.Truth.Layout != got[1].Layout || p1.Truth.Grid != got[1].Grid || len(p1.Truth.Beats) != len(got[1].Beats) {
		t.Error("Corpus and CorpusPage disagree")
	}
	n := 0
	for _, err := range Corpus(5, "mud", 3) {
		if err == nil {
			t.Error("unknown condition accepted")
		}
		n++
	}
	if n != 1 {
		t.Errorf("iterator went on after an error (%d yields)", n)
	}
}
