package render

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"image"
	"image/png"
	"io"
	"math"
	"strings"

	"golang.org/x/image/font"

	"tracelift/ecg"
	"tracelift/homography"
	"tracelift/scansim"
)

// Page is a rendered page and its truth.
type Page struct {
	Image image.Image
	Truth Truth
}

// WritePNG encodes the page image as PNG. Like a scanner or fax
// program, it records the resolution (a pHYs chunk, PNG specification §11.3.5.3)
// when the page has one: flat pages, also rotated or with different x and
// y resolution (fax); not phone photos, whose perspective leaves no single
// resolution.
func (p *Page) WritePNG(w io.Writer) error {
	enc := png.Encoder{CompressionLevel: png.BestSpeed}
	var buf bytes.Buffer
	if err := enc.Encode(&buf, p.Image); err != nil {
		return fmt.Errorf("render: write png: %w: %w", ecg.ErrOutput, err)
	}
	b := buf.Bytes()
	if dx, dy, ok := p.Truth.Resolution(); ok {
		b = withPHYs(b, dx/0.0254, dy/0.0254)
	}
	if _, err := w.Write(b); err != nil {
		return fmt.Errorf("render: write png: %w: %w", ecg.ErrOutput, err)
	}
	return nil
}

// withPHYs inserts a pHYs chunk (pixels per metre, unit 1 = metre) right
// after the IHDR chunk of an encoded PNG.
func withPHYs(b []byte, xPerM, yPerM float64) []byte {
	const ihdrEnd = 8 + 8 + 13 + 4 // signature, IHDR length+type, data, CRC
	if len(b) < ihdrEnd {
		return b
	}
	chunk := make([]byte, 4+4+9+4)
	binary.BigEndian.PutUint32(chunk[0:], 9)
	copy(chunk[4:], "pHYs")
	binary.BigEndian.PutUint32(chunk[8:], uint32(math.Round(xPerM)))
	binary.BigEndian.PutUint32(chunk[12:], uint32(math.Round(yPerM)))
	chunk[16] = 1
	binary.BigEndian.PutUint32(chunk[17:], crc32.ChecksumIEEE(chunk[4:17]))
	out := make([]byte, 0, len(b)+len(chunk))
	out = append(out, b[:ihdrEnd]...)
	out = append(out, chunk...)
	return append(out, b[ihdrEnd:]...)
}

// Render prints rec on ECG paper as opt describes (nil means defaults: A4,
// "3x4+1", 25 mm/s, 10 mm/mV, 300 dpi, red line grid) and returns the
// page with its truth. Invalid options wrap ErrOption; a record with no
// signals, or none of the layout's leads, wraps ecg.ErrNoECG. Render does
// not modify rec and is safe for concurrent use with different options.
func Render(rec ecg.Record, opt *Options) (*Page, error) {
	o, err := resolve(&rec, opt)
	if err != nil {
		return nil, err
	}
	sh, err := plan(&rec, o)
	if err != nil {
		return nil, err
	}
	r := newRaster(sh.wMM, sh.hMM, o.dpi)
	if err := sh.draw(r, &rec); err != nil {
		return nil, err
	}
	t := buildTruth(&rec, sh)
	t.WidthPx, t.HeightPx = r.img.Bounds().Dx(), r.img.Bounds().Dy()
	page := &Page{Image: r.img, Truth: t}
	if o.scan != nil {
		out, h, err := scansim.Apply(r.img, *o.scan)
		if err != nil {
			return nil, fmt.Errorf("render: scan simulation: %w: %w", ErrOption, err)
		}
		page.Image = out
		composeScan(&page.Truth, h, out.Bounds())
		if k1 := o.scan.LensK1; k1 != 0 {
			// scansim warps about the canvas centre (w/2, h/2) in its
			// coordinates (pixel centres at +0.5), normalised by the
			// half-diagonal.
			b := out.Bounds()
			cx, cy := float64(b.Dx())/2, float64(b.Dy())/2
			page.Truth.Lens = &TruthLens{K1: k1, CenterX: cx - 0.5, CenterY: cy - 0.5, R2: cx*cx + cy*cy}
		}
	}
	return page, nil
}

// composeScan folds the scan homography h (render px → output px, in
// scansim's convention of pixel centres at integer + 0.5) into the truth
// geometry (pixel centres at integers): shift by +0.5 px, apply h, shift
// back.
func composeScan(t *Truth, h [9]float64, b image.Rectangle) {
	in := [9]float64{1, 0, 0.5, 0, 1, 0.5, 0, 0, 1}
	out := [9]float64{1, 0, -0.5, 0, 1, -0.5, 0, 0, 1}
	t.PaperToImage = homography.Mul(out, homography.Mul(h, homography.Mul(in, t.PaperToImage)))
	t.WidthPx, t.HeightPx = b.Dx(), b.Dy()
	// Local scale and rotation at the paper's centre, by central
	// differences of the composed homography.
	cx, cy := t.PaperWidthMM/2, t.PaperHeightMM/2
	const d = 1.0
	ux0, vx0 := homography.Apply(t.PaperToImage, cx-d, cy)
	ux1, vx1 := homography.Apply(t.PaperToImage, cx+d, cy)
	uy0, vy0 := homography.Apply(t.PaperToImage, cx, cy-d)
	uy1, vy1 := homography.Apply(t.PaperToImage, cx, cy+d)
	// The Jacobian J = ∂(u, v)/∂(x, y) of a page rotated and then sampled
	// (J = S·R, as a scanner or fax samples a rotated sheet) has rows
	// s_x·(cos θ, sin θ) and s_y·(−sin θ, cos θ): the row lengths are the
	// device's px/mm along the image axes and the first row's angle is the
	// rotation (counter-clockwise on the image, y pointing down).
	dudx, dvdx := (ux1-ux0)/(2*d), (vx1-vx0)/(2*d)
	dudy, dvdy := (uy1-uy0)/(2*d), (vy1-vy0)/(2*d)
	t.PxPerMMX = math.Hypot(dudx, dudy)
	t.PxPerMMY = math.Hypot(dvdx, dvdy)
	t.RotationDeg = math.Atan2(dudy, dudx) * 180 / math.Pi
}

// draw paints grid, header, pulses, ticks, labels and traces.
func (sh *sheet) draw(r *raster, rec *ecg.Record) error {
	o := sh.o
	r.drawGrid(o.gridKind, o.gridColor, sh.gx0, sh.gy0, sh.gx0+sh.gw, sh.gy0+sh.gh)
	fs, err := newFonts(o.dpi)
	if err != nil {
		return err
	}
	if !o.header.Hidden {
		for _, l := range sh.headerLines() {
			face := fs.regular
			if l.bold {
				face = fs.bold
			}
			x := l.x
			if l.right {
				x -= r.textWidthMM(face, l.s)
			}
			r.text(face, l.s, x, l.y, textColor)
			sh.noteText(r, face, l.s, x, l.y, false)
		}
	}
	// Labels: bold, above the baseline at each panel's start.
	for _, p := range sh.panels {
		r.text(fs.small, p.label(), p.x0+1.2, p.baseline-sh.labelRise(), textColor)
		sh.noteText(r, fs.small, p.label(), p.x0+1.2, p.baseline-sh.labelRise(), true)
	}
	ink := o.traceColor
	var marks [][][2]float64
	for _, p := range sh.pulses {
		marks = append(marks, p.path())
	}
	for _, t := range sh.ticks {
		marks = append(marks, [][2]float64{{t[0], t[1]}, {t[0], t[2]}})
	}
	r.strokePolylines(marks, o.traceWidth, ink)
	for _, p := range sh.panels {
		r.strokePolylines(sh.points(rec, p), o.traceWidth, ink)
	}
	return nil
}

// noteText records the box of a printed text for the truth.
func (sh *sheet) noteText(r *raster, face font.Face, s string, x, y float64, label bool) {
	m := face.Metrics()
	asc := float64(m.Ascent) / 64 / r.s
	desc := float64(m.Descent) / 64 / r.s
	sh.texts = append(sh.texts, TruthText{Text: s, Label: label,
		BoxMM: [4]float64{x, y - asc, x + r.textWidthMM(face, s), y + desc}})
}

// labelRise is how far above the baseline lead labels sit, mm.
func (sh *sheet) labelRise() float64 {
	rows := 0
	for _, p := range sh.pulses {
		rows = max(rows, p.row+1)
	}
	rowH := sh.gh / float64(max(rows, 1))
	return math.Max(3.5, math.Min(rowH*0.3, 14))
}

type textLine struct {
	s     string
	x, y  float64 // mm, left end of the baseline (right end when right)
	bold  bool
	right bool
}

// headerLines lays out header and footer text.
func (sh *sheet) headerLines() []textLine {
	h := sh.o.header
	left, right := sh.gx0, sh.gx0+sh.gw
	var out []textLine
	join := func(parts ...string) string {
		var keep []string
		for _, p := range parts {
			if strings.TrimSpace(p) != "" {
				keep = append(keep, p)
			}
		}
		return strings.Join(keep, "     ")
	}
	lab := func(k, v string) string {
		if v == "" {
			return ""
		}
		return k + v
	}
	if sh.o.paper == PaperStrip {
		out = append(out, textLine{s: join(h.Clinic, lab("Name: ", h.Name), lab("ID: ", h.ID), h.Date), x: left, y: sh.gy0 - 3})
	} else {
		y := sh.headerTop + 4
		if h.Clinic != "" {
			out = append(out, textLine{s: h.Clinic, x: left, y: y, bold: true})
		}
		if h.Date != "" {
			out = append(out, textLine{s: h.Date, x: right, y: y, right: true})
		}
		y += 5
		if s := join(lab("Name: ", h.Name), lab("ID: ", h.ID)); s != "" {
			out = append(out, textLine{s: s, x: left, y: y})
		}
		y += 4.5
		if s := join(h.Device, h.Extra); s != "" {
			out = append(out, textLine{s: s, x: left, y: y})
		}
	}
	foot := fmt.Sprintf("%s mm/s  %s mm/mV", trimNum(sh.o.speed), trimNum(sh.o.gain))
	if h.Filter != "" {
		foot += "  " + h.Filter
	}
	out = append(out, textLine{s: foot, x: left, y: sh.footerY})
	if h.FooterTag != "" {
		out = append(out, textLine{s: h.FooterTag, x: right, y: sh.footerY, right: true})
	}
	return out
}

func trimNum(v float64) string { return strings.TrimSuffix(fmt.Sprintf("%.2f", v), ".00") }
