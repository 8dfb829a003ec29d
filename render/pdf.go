package render

import (
	"fmt"
	"image/color"
	"io"
	"math"

	"github.com/go-pdf/fpdf"

	"tracelift/ecg"
)

// WritePDF prints rec as a one-page PDF with the same layout as Render,
// drawing grid, pulses and traces as vector paths (so the page prints
// sharp at any size) and text in the PDF core Helvetica font. The scan
// simulation (Options.Scan) and DPI do not apply. Errors from w wrap
// ecg.ErrOutput.
func WritePDF(w io.Writer, rec ecg.Record, opt *Options) error {
	o, err := resolve(&rec, opt)
	if err != nil {
		return err
	}
	sh, err := plan(&rec, o)
	if err != nil {
		return err
	}
	pdf := fpdf.NewCustom(&fpdf.InitType{OrientationStr: "P", UnitStr: "mm", Size: fpdf.SizeType{Wd: sh.wMM, Ht: sh.hMM}})
	pdf.SetMargins(0, 0, 0)
	pdf.SetAutoPageBreak(false, 0)
	pdf.SetCreator("tracelift", true)
	pdf.SetTitle("ECG "+o.layout, true)
	pdf.AddPage()
	tr := pdf.UnicodeTranslatorFromDescriptor("")

	// Paper.
	setFill(pdf, paperColor)
	pdf.Rect(0, 0, sh.wMM, sh.hMM, "F")
	sh.pdfGrid(pdf)

	// Text.
	setText(pdf, textColor)
	if !o.header.Hidden {
		for _, l := range sh.headerLines() {
			size := 9.0
			style := ""
			if l.bold {
				size, style = 11, "B"
			}
			pdf.SetFont("Helvetica", style, size)
			s := tr(l.s)
			x := l.x
			if l.right {
				x -= pdf.GetStringWidth(s)
			}
			pdf.Text(x, l.y, s)
		}
	}
	pdf.SetFont("Helvetica", "B", 9)
	for _, p := range sh.panels {
		pdf.Text(p.x0+1.2, p.baseline-sh.labelRise(), tr(p.label()))
	}

	// Ink.
	setDraw(pdf, o.traceColor)
	pdf.SetLineWidth(o.traceWidth)
	pdf.SetLineCapStyle("round")
	pdf.SetLineJoinStyle("round")
	poly := func(pts [][2]float64) {
		if len(pts) == 0 {
			return
		}
		pdf.MoveTo(pts[0][0], pts[0][1])
		for _, q := range pts[1:] {
			pdf.LineTo(q[0], q[1])
		}
		pdf.DrawPath("D")
	}
	for _, p := range sh.pulses {
		poly(p.path())
	}
	for _, t := range sh.ticks {
		poly([][2]float64{{t[0], t[1]}, {t[0], t[2]}})
	}
	for _, p := range sh.panels {
		for _, l := range sh.points(&rec, p) {
			poly(l)
		}
	}
	if err := pdf.Error(); err != nil {
		return fmt.Errorf("render: pdf: %w", err)
	}
	if err := pdf.Output(w); err != nil {
		return fmt.Errorf("render: write pdf: %w: %w", ecg.ErrOutput, err)
	}
	return nil
}

// pdfGrid draws the grid; faint lines are drawn in the colour they would
// have after blending with the paper (PDF viewers need no transparency).
func (sh *sheet) pdfGrid(pdf *fpdf.Fpdf) {
	o := sh.o
	if o.gridKind == GridNone {
		return
	}
	st := styleFor(o.gridKind)
	x0, y0, x1, y1 := sh.gx0, sh.gy0, sh.gx0+sh.gw, sh.gy0+sh.gh
	nx, ny := int(math.Round(sh.gw)), int(math.Round(sh.gh))
	if o.gridKind == GridDots {
		for pass := 0; pass < 2; pass++ {
			for j := 0; j <= ny; j++ {
				for k := 0; k <= nx; k++ {
					major := j%5 == 0 && k%5 == 0
					if major != (pass == 1) {
						continue
					}
					r, a := st.minorDot, st.minorA
					if major {
						r, a = st.majorDot, st.majorA
					} else if j%5 == 0 || k%5 == 0 {
						r = (st.minorDot + st.majorDot) / 2 // as in the raster
					}
					setFill(pdf, blend(paperColor, o.gridColor, a))
					if major {
						pdf.Circle(x0+float64(k), y0+float64(j), r, "F")
					} else {
						// Tiny squares of equal area keep the file small;
						// at 0.2 mm nobody can tell them from discs.
						q := r * math.Sqrt(math.Pi) / 2
						pdf.Rect(x0+float64(k)-q, y0+float64(j)-q, 2*q, 2*q, "F")
					}
				}
			}
		}
		return
	}
	line := func(major bool) {
		w, a := st.minorW, st.minorA
		if major {
			w, a = st.majorW, st.majorA
		}
		if w == 0 {
			return
		}
		setDraw(pdf, blend(paperColor, o.gridColor, a))
		pdf.SetLineWidth(w)
		for k := 0; k <= nx; k++ {
			if (k%5 == 0) == major {
				pdf.Line(x0+float64(k), y0, x0+float64(k), y1)
			}
		}
		for k := 0; k <= ny; k++ {
			if (k%5 == 0) == major {
				pdf.Line(x0, y0+float64(k), x1, y0+float64(k))
			}
		}
	}
	pdf.SetLineCapStyle("butt")
	line(false)
	line(true)
}

func blend(a, b color.NRGBA, t float64) color.NRGBA {
	m := func(x, y uint8) uint8 { return uint8(float64(x)*(1-t) + float64(y)*t + 0.5) }
	return color.NRGBA{m(a.R, b.R), m(a.G, b.G), m(a.B, b.B), 0xff}
}

func setFill(pdf *fpdf.Fpdf, c color.NRGBA) { pdf.SetFillColor(int(c.R), int(c.G), int(c.B)) }
func setDraw(pdf *fpdf.Fpdf, c color.NRGBA) { pdf.SetDrawColor(int(c.R), int(c.G), int(c.B)) }
func setText(pdf *fpdf.Fpdf, c color.NRGBA) { pdf.SetTextColor(int(c.R), int(c.G), int(c.B)) }
