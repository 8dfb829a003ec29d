package render

import (
	"image"
	"math"
	"testing"
)

// TestGridTruth measures the grid on full pages, in bands the traces do
// not reach (below the last row, and left of the pulses), and checks the
// truth's grid description: line k at x0_mm + k·minor_mm (and likewise in
// y) through paper_to_image, to within 0.1 px, and a pitch of dpi/25.4
// px/mm.
func TestGridTruth(t *testing.T) {
	rec := sineRecord(500, 10, 1, 0.3, 0)
	for _, c := range []struct {
		paper string
		dpi   float64
	}{{PaperA4, 300}, {PaperLetter, 200}} {
		p, err := Render(rec, &Options{Paper: c.paper, DPI: c.dpi, Header: hidden()})
		if err != nil {
			t.Fatal(err)
		}
		img := p.Image.(*image.RGBA)
		tr := p.Truth
		g := tr.Grid
		s := tr.PxPerMMX
		green := func(x, y int) float64 { return 255 - float64(img.Pix[img.PixOffset(x, y)+1]) }
		// Vertical lines: column profile over rows at half-millimetres in
		// the band between the last row's trace and the grid's bottom.
		bottom := tr.GridRectMM[3]
		prof := make([]float64, img.Bounds().Dx())
		for ymm := bottom - 6.5; ymm < bottom; ymm++ {
			_, v := tr.PaperToPx(0, ymm)
			for x := range prof {
				prof[x] += green(x, int(math.Round(v)))
			}
		}
		var ks, us []float64
		for k := 1.0; g.X0MM+k < tr.GridRectMM[2]; k++ {
			u, _ := tr.PaperToPx(g.X0MM+k*g.MinorMM, 0)
			ks = append(ks, k)
			us = append(us, peakCentre(prof, u, 0.4*s))
		}
		slope, icpt := fitLine(ks, us)
		wantIcpt, _ := tr.PaperToPx(g.X0MM, 0)
		if math.Abs(slope-c.dpi/25.4) > 0.01 || math.Abs(icpt-wantIcpt) > 0.1 {
			t.Errorf("%s %g dpi: vertical lines at %.3f + %.4f k px, want %.3f + %.4f k", c.paper, c.dpi, icpt, slope, wantIcpt, c.dpi/25.4)
		}
		// Horizontal lines: row profile over columns at half-millimetres
		// left of the calibration pulses.
		left := tr.Pulses[0].X0MM - 2 // the pulses' flat lead-in starts here
		prof = make([]float64, img.Bounds().Dy())
		for xmm := g.X0MM + 0.5; xmm < left-0.5; xmm++ {
			u, _ := tr.PaperToPx(xmm, 0)
			for y := range prof {
				prof[y] += green(int(math.Round(u)), y)
			}
		}
		ks, us = ks[:0], us[:0]
		for k := 1.0; g.Y0MM+k < tr.GridRectMM[3]; k++ {
			_, v := tr.PaperToPx(0, g.Y0MM+k*g.MinorMM)
			ks = append(ks, k)
			us = append(us, peakCentre(prof, v, 0.4*s))
		}
		slope, icpt = fitLine(ks, us)
		_, wantIcpt = tr.PaperToPx(0, g.Y0MM)
		if math.Abs(slope-c.dpi/25.4) > 0.01 || math.Abs(icpt-wantIcpt) > 0.1 {
			t.Errorf("%s %g dpi: horizontal lines at %.3f + %.4f k px, want %.3f + %.4f k", c.paper, c.dpi, icpt, slope, wantIcpt, c.dpi/25.4)
		}
	}
}

// peakCentre returns the centroid of prof above its local minimum within
// ±r of c.
func peakCentre(prof []float64, c, r float64) float64 {
	lo, hi := max(int(math.Floor(c-r)), 0), min(int(math.Ceil(c+r)), len(prof)-1)
	base := math.Inf(1)
	for i := lo; i <= hi; i++ {
		base = math.Min(base, prof[i])
	}
	var sw, sx float64
	for i := lo; i <= hi; i++ {
		w := prof[i] - base
		sw += w
		sx += w * float64(i)
	}
	if sw == 0 {
		return math.NaN()
	}
	return sx / sw
}
