package overlay

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"image/jpeg"
	"image/png"
	"io"
	"math"
	"strconv"
	"strings"

	"golang.org/x/image/font"
	"golang.org/x/image/font/gofont/gobold"
	"golang.org/x/image/font/opentype"
	"golang.org/x/image/math/fixed"
	"golang.org/x/image/vector"

	"tracelift/ecg"
	"tracelift/internal/atomicfile"
)

// Segment is one digitised lead segment in source-image pixel
// coordinates.
type Segment struct {
	Lead string // label, e.g. "II"
	// Points is the polyline (x, y) in source pixels, x to the right and y
	// down. A point with a NaN coordinate breaks the line (a gap).
	Points [][2]float64
	// LabelAt is where the label's baseline starts; NaN or (0, 0) places
	// it just above-left of the first point.
	LabelAt [2]float64
	// Quality is 0 (unusable) … 1 (clean); NaN when unknown.
	Quality float64
}

// Options controls the pictures. A nil *Options means defaults.
type Options struct {
	Color        color.NRGBA // trace colour; zero = cyan (0, 229, 255)
	LowColor     color.NRGBA // colour below MinQuality; zero = magenta (255, 0, 200)
	OutlineColor color.NRGBA // zero = near-black (10, 20, 40)
	// LineWidth in source pixels; 0 = max(1.5, image height / 1200).
	LineWidth float64
	// Opacity of the traces, 0…1; 0 = 0.8.
	Opacity float64
	// MinQuality: segments with Quality below it use LowColor; 0 = 0.5.
	MinQuality float64
	// FontSize of the labels in pixels; 0 = max(12, image height / 70).
	FontSize float64
	// Caption, when not empty, is written in the top-left corner.
	Caption string
	// JPEG embeds the source image in the SVG as JPEG (quality 90) instead
	// of PNG: smaller for photographs.
	JPEG bool
}

func (o *Options) defaults(b image.Rectangle) Options {
	var c Options
	if o != nil {
		c = *o
	}
	if c.Color == (color.NRGBA{}) {
		c.Color = color.NRGBA{0, 229, 255, 255}
	}
	if c.LowColor == (color.NRGBA{}) {
		c.LowColor = color.NRGBA{255, 0, 200, 255}
	}
	if c.OutlineColor == (color.NRGBA{}) {
		c.OutlineColor = color.NRGBA{10, 20, 40, 255}
	}
	if c.LineWidth <= 0 {
		c.LineWidth = math.Max(1.5, float64(b.Dy())/1200)
	}
	if c.Opacity <= 0 || c.Opacity > 1 {
		c.Opacity = 0.8
	}
	if c.MinQuality == 0 {
		c.MinQuality = 0.5
	}
	if c.FontSize <= 0 {
		c.FontSize = math.Max(12, float64(b.Dy())/70)
	}
	return c
}

func (o *Options) colorFor(s *Segment) color.NRGBA {
	if !math.IsNaN(s.Quality) && s.Quality < o.MinQuality {
		return o.LowColor
	}
	return o.Color
}

// label returns the segment's label text: lead name, and quality with two
// decimals when known.
func label(s *Segment) string {
	if math.IsNaN(s.Quality) {
		return s.Lead
	}
	return fmt.Sprintf("%s %.2f", s.Lead, s.Quality)
}

func labelPos(s *Segment, size float64) (float64, float64, bool) {
	x, y := s.LabelAt[0], s.LabelAt[1]
	if !math.IsNaN(x) && !math.IsNaN(y) && (x != 0 || y != 0) {
		return x, y, true
	}
	for _, p := range s.Points {
		if !math.IsNaN(p[0]) && !math.IsNaN(p[1]) {
			return p[0], p[1] - 0.9*size, true
		}
	}
	return 0, 0, false
}

// Render composites the segments over src and returns a new RGBA image of
// src's size (origin at 0, 0; segment coordinates are taken relative to
// src.Bounds().Min).
func Render(src image.Image, segs []Segment, opt *Options) *image.RGBA {
	b := src.Bounds()
	o := opt.defaults(b)
	dst := image.NewRGBA(image.Rect(0, 0, b.Dx(), b.Dy()))
	draw.Draw(dst, dst.Bounds(), src, b.Min, draw.Src)
	off := [2]float64{float64(b.Min.X), float64(b.Min.Y)}
	outW := o.LineWidth + 2*math.Max(1, o.LineWidth/2)
	var z vector.Rasterizer
	for pass := 0; pass < 2; pass++ {
		for i := range segs {
			s := &segs[i]
			w, c := o.LineWidth, o.colorFor(s)
			if pass == 0 {
				w, c = outW, o.OutlineColor
			}
			// Rasterise only the segment's bounding box: a full-page mask
			// per segment would cost a page of work each.
			box, ok := bbox(s.Points, off, outW/2+2)
			if box = box.Intersect(dst.Bounds()); !ok || box.Empty() {
				continue
			}
			z.Reset(box.Dx(), box.Dy())
			o2 := [2]float64{off[0] + float64(box.Min.X), off[1] + float64(box.Min.Y)}
			if !strokePolyline(&z, s.Points, w, o2) {
				continue
			}
			a := o.Opacity
			if pass == 0 {
				a *= 0.6
			}
			c.A = uint8(math.Round(float64(c.A) * a))
			z.Draw(dst, box, image.NewUniform(c), image.Point{})
		}
	}
	face := labelFace(o.FontSize)
	if face != nil {
		for i := range segs {
			s := &segs[i]
			x, y, ok := labelPos(s, o.FontSize)
			if !ok {
				continue
			}
			drawText(dst, face, label(s), x-off[0], y-off[1], o.colorFor(s), o.OutlineColor)
		}
		if o.Caption != "" {
			drawText(dst, face, o.Caption, o.FontSize*0.5, o.FontSize*1.3, color.NRGBA{255, 255, 255, 255}, o.OutlineColor)
		}
	}
	return dst
}

// bbox returns the integer box around the finite points (shifted by
// -off) grown by pad pixels, and false when there is no finite point.
func bbox(pts [][2]float64, off [2]float64, pad float64) (image.Rectangle, bool) {
	x0, y0, x1, y1 := math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)
	for _, p := range pts {
		if math.IsNaN(p[0]) || math.IsNaN(p[1]) || math.IsInf(p[0], 0) || math.IsInf(p[1], 0) {
			continue
		}
		x0, y0 = math.Min(x0, p[0]), math.Min(y0, p[1])
		x1, y1 = math.Max(x1, p[0]), math.Max(y1, p[1])
	}
	if x0 > x1 {
		return image.Rectangle{}, false
	}
	clamp := func(v float64) int { return int(math.Max(-1<<30, math.Min(1<<30, v))) }
	return image.Rect(clamp(math.Floor(x0-off[0]-pad)), clamp(math.Floor(y0-off[1]-pad)),
		clamp(math.Ceil(x1-off[0]+pad)), clamp(math.Ceil(y1-off[1]+pad))), true
}

// strokePolyline adds a stroke of width w (px) along pts to z as filled
// polygons: one quadrilateral per line piece and an octagon at each
// vertex (round joins and caps). It reports whether anything was added.
func strokePolyline(z *vector.Rasterizer, pts [][2]float64, w float64, off [2]float64) bool {
	h := w / 2
	any := false
	prev, havePrev := [2]float64{}, false
	for _, p := range pts {
		if math.IsNaN(p[0]) || math.IsNaN(p[1]) || math.IsInf(p[0], 0) || math.IsInf(p[1], 0) {
			havePrev = false
			continue
		}
		p = [2]float64{p[0] - off[0], p[1] - off[1]}
		disc(z, p, h)
		any = true
		if havePrev {
			dx, dy := p[0]-prev[0], p[1]-prev[1]
			l := math.Hypot(dx, dy)
			if l > 1e-9 {
				nx, ny := -dy/l*h, dx/l*h
				// Counter-clockwise in image coordinates, like disc.
				poly(z, [][2]float64{{prev[0] + nx, prev[1] + ny}, {p[0] + nx, p[1] + ny}, {p[0] - nx, p[1] - ny}, {prev[0] - nx, prev[1] - ny}})
			}
		}
		prev, havePrev = p, true
	}
	return any
}

// orient returns the signed area of a polygon (positive = one winding).
func orient(p [][2]float64) float64 {
	a := 0.0
	for i := range p {
		j := (i + 1) % len(p)
		a += p[i][0]*p[j][1] - p[j][0]*p[i][1]
	}
	return a
}

// poly adds a closed polygon with positive orientation.
func poly(z *vector.Rasterizer, p [][2]float64) {
	if orient(p) < 0 {
		for i, j := 0, len(p)-1; i < j; i, j = i+1, j-1 {
			p[i], p[j] = p[j], p[i]
		}
	}
	z.MoveTo(float32(p[0][0]), float32(p[0][1]))
	for _, q := range p[1:] {
		z.LineTo(float32(q[0]), float32(q[1]))
	}
	z.ClosePath()
}

func disc(z *vector.Rasterizer, c [2]float64, r float64) {
	p := make([][2]float64, 8)
	for k := range p {
		a := float64(k) * math.Pi / 4
		p[k] = [2]float64{c[0] + r*math.Cos(a), c[1] + r*math.Sin(a)}
	}
	poly(z, p)
}

func labelFace(size float64) font.Face {
	f, err := opentype.Parse(gobold.TTF)
	if err != nil {
		return nil
	}
	face, err := opentype.NewFace(f, &opentype.FaceOptions{Size: size, DPI: 72, Hinting: font.HintingFull})
	if err != nil {
		return nil
	}
	return face
}

// drawText writes s with its baseline starting at (x, y), outlined.
func drawText(dst draw.Image, face font.Face, s string, x, y float64, fg, outline color.NRGBA) {
	d := &font.Drawer{Dst: dst, Face: face}
	t := math.Max(1, float64(face.Metrics().Height.Round())/14)
	d.Src = image.NewUniform(outline)
	for _, o := range [][2]float64{{-1, -1}, {0, -1}, {1, -1}, {-1, 0}, {1, 0}, {-1, 1}, {0, 1}, {1, 1}} {
		d.Dot = fixed.Point26_6{X: fixed.Int26_6((x + o[0]*t) * 64), Y: fixed.Int26_6((y + o[1]*t) * 64)}
		d.DrawString(s)
	}
	d.Src = image.NewUniform(fg)
	d.Dot = fixed.Point26_6{X: fixed.Int26_6(x * 64), Y: fixed.Int26_6(y * 64)}
	d.DrawString(s)
}

// WritePNG writes the composite (Render) as PNG.
func WritePNG(w io.Writer, src image.Image, segs []Segment, opt *Options) error {
	// BestSpeed: a 300-dpi page compresses about as well and several
	// times faster than at the default level.
	enc := png.Encoder{CompressionLevel: png.BestSpeed}
	if err := enc.Encode(w, Render(src, segs, opt)); err != nil {
		return fmt.Errorf("overlay: png: %w: %w", ecg.ErrOutput, err)
	}
	return nil
}

// WritePNGFile writes the PNG overlay to path atomically.
func WritePNGFile(path string, src image.Image, segs []Segment, opt *Options) error {
	if err := atomicfile.WriteFile(path, func(w io.Writer) error { return WritePNG(w, src, segs, opt) }); err != nil {
		return fmt.Errorf("overlay: %w", err)
	}
	return nil
}

// WriteSVG writes an SVG of src's size: src embedded as a base64 image,
// then for each segment a dark outline path and a coloured path (one
// subpath per unbroken run of points, coordinates with 2 decimals), then
// the labels, and the caption if any. Coordinates are relative to
// src.Bounds().Min.
func WriteSVG(w io.Writer, src image.Image, segs []Segment, opt *Options) error {
	b := src.Bounds()
	o := opt.defaults(b)
	var img bytes.Buffer
	mime := "image/png"
	var err error
	if o.JPEG {
		mime = "image/jpeg"
		err = jpeg.Encode(&img, src, &jpeg.Options{Quality: 90})
	} else {
		err = (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&img, src)
	}
	if err != nil {
		return fmt.Errorf("overlay: svg: encode image: %w: %w", ecg.ErrOutput, err)
	}
	var s strings.Builder
	fmt.Fprintf(&s, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n")
	fmt.Fprintf(&s, "<svg xmlns=\"http://www.w3.org/2000/svg\" xmlns:xlink=\"http://www.w3.org/1999/xlink\" width=\"%d\" height=\"%d\" viewBox=\"0 0 %d %d\">\n", b.Dx(), b.Dy(), b.Dx(), b.Dy())
	fmt.Fprintf(&s, "<title>Digitised traces over the source image</title>\n")
	fmt.Fprintf(&s, "<image x=\"0\" y=\"0\" width=\"%d\" height=\"%d\" xlink:href=\"data:%s;base64,", b.Dx(), b.Dy(), mime)
	s.WriteString(base64.StdEncoding.EncodeToString(img.Bytes()))
	s.WriteString("\"/>\n")
	off := [2]float64{float64(b.Min.X), float64(b.Min.Y)}
	outW := o.LineWidth + 2*math.Max(1, o.LineWidth/2)
	fmt.Fprintf(&s, "<g fill=\"none\" stroke-linejoin=\"round\" stroke-linecap=\"round\">\n")
	for i := range segs {
		sg := &segs[i]
		d := pathData(sg.Points, off)
		if d == "" {
			continue
		}
		c := o.colorFor(sg)
		dash := ""
		if c == o.LowColor {
			dash = fmt.Sprintf(" stroke-dasharray=\"%s %s\"", num(6*o.LineWidth), num(3*o.LineWidth))
		}
		fmt.Fprintf(&s, "<g class=\"lead\" data-lead=\"%s\">\n", esc(sg.Lead))
		fmt.Fprintf(&s, "<path d=\"%s\" stroke=\"%s\" stroke-opacity=\"%s\" stroke-width=\"%s\"/>\n", d, hex(o.OutlineColor), num(0.6*o.Opacity), num(outW))
		fmt.Fprintf(&s, "<path d=\"%s\" stroke=\"%s\" stroke-opacity=\"%s\" stroke-width=\"%s\"%s/>\n", d, hex(c), num(o.Opacity), num(o.LineWidth), dash)
		fmt.Fprintf(&s, "</g>\n")
	}
	fmt.Fprintf(&s, "</g>\n")
	text := func(x, y float64, c color.NRGBA, t string) {
		fmt.Fprintf(&s, "<text x=\"%s\" y=\"%s\" fill=\"%s\" stroke=\"%s\" stroke-width=\"%s\" paint-order=\"stroke\">%s</text>\n",
			num(x), num(y), hex(c), hex(o.OutlineColor), num(math.Max(1, o.FontSize/7)), esc(t))
	}
	fmt.Fprintf(&s, "<g font-family=\"sans-serif\" font-weight=\"bold\" font-size=\"%s\">\n", num(o.FontSize))
	for i := range segs {
		sg := &segs[i]
		if x, y, ok := labelPos(sg, o.FontSize); ok {
			text(x-off[0], y-off[1], o.colorFor(sg), label(sg))
		}
	}
	if o.Caption != "" {
		text(o.FontSize*0.5, o.FontSize*1.3, color.NRGBA{255, 255, 255, 255}, o.Caption)
	}
	fmt.Fprintf(&s, "</g>\n</svg>\n")
	if _, err := io.WriteString(w, s.String()); err != nil {
		return fmt.Errorf("overlay: svg: %w: %w", ecg.ErrOutput, err)
	}
	return nil
}

// WriteSVGFile writes the SVG overlay to path atomically.
func WriteSVGFile(path string, src image.Image, segs []Segment, opt *Options) error {
	if err := atomicfile.WriteFile(path, func(w io.Writer) error { return WriteSVG(w, src, segs, opt) }); err != nil {
		return fmt.Errorf("overlay: %w", err)
	}
	return nil
}

func pathData(pts [][2]float64, off [2]float64) string {
	var b strings.Builder
	pen := false
	for _, p := range pts {
		if math.IsNaN(p[0]) || math.IsNaN(p[1]) || math.IsInf(p[0], 0) || math.IsInf(p[1], 0) {
			pen = false
			continue
		}
		if pen {
			b.WriteString(" L")
		} else {
			if b.Len() > 0 {
				b.WriteByte(' ')
			}
			b.WriteString("M")
		}
		b.WriteString(num(p[0] - off[0]))
		b.WriteByte(' ')
		b.WriteString(num(p[1] - off[1]))
		pen = true
	}
	return b.String()
}

func num(v float64) string { return strconv.FormatFloat(math.Round(v*100)/100, 'f', -1, 64) }

func hex(c color.NRGBA) string { return fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B) }

func esc(s string) string {
	var b bytes.Buffer
	for _, r := range s {
		switch r {
		case '<':
			b.WriteString("&lt;")
		case '>':
			b.WriteString("&gt;")
		case '&':
			b.WriteString("&amp;")
		case '"':
			b.WriteString("&quot;")
		default:
			if r >= 0x20 || r == '\t' {
				b.WriteRune(r)
			}
		}
	}
	return b.String()
}
