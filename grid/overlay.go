package grid

import (
	"image"
	"image/color"

	"tracelift/imageproc"
)

// Overlay returns a debug picture of what Detect found, drawn over the
// upright page: the major grid lines (blue), the calibration pulses (green
// boxes with their baseline) and the page outline (orange). The page is
// faded so that the marks stand out.
func (r *Result) Overlay(p *imageproc.Page) *image.NRGBA {
	src := p.Upright()
	b := src.Rect
	w, h := b.Dx(), b.Dy()
	out := image.NewNRGBA(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		s := src.Pix[(y)*src.Stride : (y)*src.Stride+4*w]
		d := out.Pix[y*out.Stride : y*out.Stride+4*w]
		for i := 0; i < len(s); i += 4 {
			// Fade towards white: 40 % of the original.
			d[i] = uint8(153 + int(s[i])*102/255)
			d[i+1] = uint8(153 + int(s[i+1])*102/255)
			d[i+2] = uint8(153 + int(s[i+2])*102/255)
			d[i+3] = 255
		}
	}
	// Ink on top in black so the traces stay visible.
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			if p.Ink.Pix[y*p.Ink.Stride+x] > 128 {
				i := y*out.Stride + 4*x
				out.Pix[i], out.Pix[i+1], out.Pix[i+2] = 40, 40, 40
			}
		}
	}
	thick := max(1, min(w, h)/1200)
	blue := color.NRGBA{30, 90, 230, 255}
	for _, x := range r.XLines {
		fillRect(out, int(x+0.5)-thick/2, 0, int(x+0.5)-thick/2+thick, h, blue)
	}
	for _, y := range r.YLines {
		fillRect(out, 0, int(y+0.5)-thick/2, w, int(y+0.5)-thick/2+thick, blue)
	}
	green := color.NRGBA{0, 170, 60, 255}
	t := 2 * thick
	for _, q := range r.Pulses {
		x0, x1 := int(q.X0)-t, int(q.X1)+t
		y0, y1 := int(q.TopY)-t, int(q.BaseY)+t
		fillRect(out, x0, y0, x1, y0+t, green)
		fillRect(out, x0, y1-t, x1, y1, green)
		fillRect(out, x0, y0, x0+t, y1, green)
		fillRect(out, x1-t, y0, x1, y1, green)
	}
	orange := color.NRGBA{240, 130, 0, 255}
	e := 3 * thick
	fillRect(out, 0, 0, w, e, orange)
	fillRect(out, 0, h-e, w, h, orange)
	fillRect(out, 0, 0, e, h, orange)
	fillRect(out, w-e, 0, w, h, orange)
	return out
}

// fillRect paints [x0,x1)×[y0,y1), clipped to m.
func fillRect(m *image.NRGBA, x0, y0, x1, y1 int, c color.NRGBA) {
	r := image.Rect(x0, y0, x1, y1).Intersect(m.Rect)
	for y := r.Min.Y; y < r.Max.Y; y++ {
		row := m.Pix[y*m.Stride:]
		for x := r.Min.X; x < r.Max.X; x++ {
			row[4*x], row[4*x+1], row[4*x+2], row[4*x+3] = c.R, c.G, c.B, 255
		}
	}
}
