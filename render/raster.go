package render

import (
	"fmt"
	"image"
	"image/color"
	"math"

	"golang.org/x/image/font"
	"golang.org/x/image/font/gofont/gobold"
	"golang.org/x/image/font/gofont/goregular"
	"golang.org/x/image/font/opentype"
	"golang.org/x/image/math/fixed"
	"golang.org/x/image/vector"
)

// paperColor is the colour of blank paper (a slightly warm white).
var paperColor = color.NRGBA{0xff, 0xfd, 0xf8, 0xff}

// textColor is the colour of printed text.
var textColor = color.NRGBA{0x22, 0x22, 0x26, 0xff}

// gridStyle gives the printed line widths (mm) and ink strengths (0–1) of
// the grid: minor lines thin and light, major lines wider and darker
// (common practice on thermal and laser ECG paper).
type gridStyle struct {
	minorW, majorW     float64 // mm
	minorA, majorA     float64 // opacity
	minorDot, majorDot float64 // dot radius, mm
}

func styleFor(kind string) gridStyle {
	switch kind {
	case GridMajor:
		return gridStyle{majorW: 0.16, majorA: 0.8}
	case GridDots:
		return gridStyle{minorDot: 0.11, majorDot: 0.2, minorA: 0.75, majorA: 0.95}
	default:
		return gridStyle{minorW: 0.09, majorW: 0.2, minorA: 0.42, majorA: 0.85}
	}
}

// raster draws onto an opaque RGBA page.
type raster struct {
	img *image.RGBA
	s   float64 // px per mm
	z   vector.Rasterizer
}

func newRaster(wMM, hMM, dpi float64) *raster {
	s := pxPerMM(dpi)
	w, h := int(math.Round(wMM*s)), int(math.Round(hMM*s))
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	// Fill the first row, then copy it down.
	pix := img.Pix
	if len(pix) > 0 {
		row := pix[:img.Stride]
		for i := 0; i < len(row); i += 4 {
			row[i], row[i+1], row[i+2], row[i+3] = paperColor.R, paperColor.G, paperColor.B, 0xff
		}
		for off := img.Stride; off < len(pix); off += img.Stride {
			copy(pix[off:off+img.Stride], row)
		}
	}
	return &raster{img: img, s: s}
}

// coverage1D adds to dst (indexed by pixel) the coverage, times alpha, of
// a band [c−w/2, c+w/2] px (pixel i spans [i, i+1]), combining with what
// is there as 1 − (1−a)(1−b).
func coverage1D(dst []float32, c, w, alpha float64) {
	lo, hi := c-w/2, c+w/2
	i0 := max(int(math.Floor(lo)), 0)
	i1 := min(int(math.Ceil(hi)), len(dst))
	for i := i0; i < i1; i++ {
		ov := math.Min(hi, float64(i+1)) - math.Max(lo, float64(i))
		if ov <= 0 {
			continue
		}
		a := float32(math.Min(ov, 1) * alpha)
		dst[i] = 1 - (1-dst[i])*(1-a)
	}
}

// drawGrid paints the grid over the rectangle [x0, x1] × [y0, y1] mm.
func (r *raster) drawGrid(kind string, col color.NRGBA, x0, y0, x1, y1 float64) {
	if kind == GridNone {
		return
	}
	st := styleFor(kind)
	b := r.img.Bounds()
	if kind == GridDots {
		r.drawDots(st, col, x0, y0, x1, y1)
		return
	}
	ax := make([]float32, b.Dx())
	ay := make([]float32, b.Dy())
	nx := int(math.Round(x1 - x0))
	ny := int(math.Round(y1 - y0))
	for k := 0; k <= nx; k++ {
		if k%5 == 0 {
			coverage1D(ax, (x0+float64(k))*r.s, math.Max(st.majorW*r.s, 0.6), st.majorA)
		} else if st.minorW > 0 {
			coverage1D(ax, (x0+float64(k))*r.s, math.Max(st.minorW*r.s, 0.5), st.minorA)
		}
	}
	for k := 0; k <= ny; k++ {
		if k%5 == 0 {
			coverage1D(ay, (y0+float64(k))*r.s, math.Max(st.majorW*r.s, 0.6), st.majorA)
		} else if st.minorW > 0 {
			coverage1D(ay, (y0+float64(k))*r.s, math.Max(st.minorW*r.s, 0.5), st.minorA)
		}
	}
	// Lines stop at the grid's edge: clip the coverage to the rectangle.
	px0 := max(int(math.Floor(x0*r.s-st.majorW*r.s)), 0)
	px1 := min(int(math.Ceil(x1*r.s+st.majorW*r.s)), b.Dx())
	py0 := max(int(math.Floor(y0*r.s-st.majorW*r.s)), 0)
	py1 := min(int(math.Ceil(y1*r.s+st.majorW*r.s)), b.Dy())
	cr, cg, cb := float32(col.R), float32(col.G), float32(col.B)
	pix, stride := r.img.Pix, r.img.Stride
	for y := py0; y < py1; y++ {
		row := pix[y*stride:]
		yy := ay[y]
		for x := px0; x < px1; x++ {
			a := 1 - (1-ax[x])*(1-yy)
			if a <= 0 {
				continue
			}
			i := 4 * x
			row[i] = uint8(float32(row[i])*(1-a) + cr*a + 0.5)
			row[i+1] = uint8(float32(row[i+1])*(1-a) + cg*a + 0.5)
			row[i+2] = uint8(float32(row[i+2])*(1-a) + cb*a + 0.5)
		}
	}
}

// drawDots paints dots at every 1 mm intersection, bigger at 5 mm ones.
func (r *raster) drawDots(st gridStyle, col color.NRGBA, x0, y0, x1, y1 float64) {
	nx := int(math.Round(x1 - x0))
	ny := int(math.Round(y1 - y0))
	b := r.img.Bounds()
	cr, cg, cb := float64(col.R), float64(col.G), float64(col.B)
	pix, stride := r.img.Pix, r.img.Stride
	for j := 0; j <= ny; j++ {
		for k := 0; k <= nx; k++ {
			rad, alpha := st.minorDot*r.s, st.minorA
			if j%5 == 0 && k%5 == 0 {
				rad, alpha = st.majorDot*r.s, st.majorA
			} else if j%5 == 0 || k%5 == 0 {
				rad = (st.minorDot + st.majorDot) / 2 * r.s
			}
			rad = math.Max(rad, 0.45)
			// Pixel centres are at integer + 0.5 in raster coordinates.
			cx, cy := (x0+float64(k))*r.s, (y0+float64(j))*r.s
			xa := max(int(math.Floor(cx-rad-1)), 0)
			xb := min(int(math.Ceil(cx+rad+1)), b.Dx())
			ya := max(int(math.Floor(cy-rad-1)), 0)
			yb := min(int(math.Ceil(cy+rad+1)), b.Dy())
			for y := ya; y < yb; y++ {
				dy := float64(y) + 0.5 - cy
				for x := xa; x < xb; x++ {
					dx := float64(x) + 0.5 - cx
					// Distance-based coverage: a 1 px ramp across the rim.
					c := rad + 0.5 - math.Sqrt(dx*dx+dy*dy)
					if c <= 0 {
						continue
					}
					a := math.Min(c, 1) * alpha
					i := y*stride + 4*x
					pix[i] = uint8(float64(pix[i])*(1-a) + cr*a + 0.5)
					pix[i+1] = uint8(float64(pix[i+1])*(1-a) + cg*a + 0.5)
					pix[i+2] = uint8(float64(pix[i+2])*(1-a) + cb*a + 0.5)
				}
			}
		}
	}
}

// addPoly adds a closed polygon (raster px, relative to the rasteriser's
// origin) to z, always with positive signed area so that overlapping
// polygons add up instead of cancelling.
func addPoly(z *vector.Rasterizer, pts [][2]float32) {
	var a float32
	for i := range pts {
		j := (i + 1) % len(pts)
		a += pts[i][0]*pts[j][1] - pts[j][0]*pts[i][1]
	}
	if a == 0 {
		return
	}
	if a > 0 {
		z.MoveTo(pts[0][0], pts[0][1])
		for _, p := range pts[1:] {
			z.LineTo(p[0], p[1])
		}
	} else {
		n := len(pts)
		z.MoveTo(pts[n-1][0], pts[n-1][1])
		for i := n - 2; i >= 0; i-- {
			z.LineTo(pts[i][0], pts[i][1])
		}
	}
	z.ClosePath()
}

// joinSides is the number of sides of the polygon used for round joins.
const joinSides = 16

// strokePolylines draws polylines given in paper mm with stroke width wMM
// and colour col, anti-aliased. Points off the page are clipped.
func (r *raster) strokePolylines(lines [][][2]float64, wMM float64, col color.NRGBA) {
	if len(lines) == 0 {
		return
	}
	half := wMM * r.s / 2
	if half < 0.5 {
		half = 0.5 // keep thin traces visible at low resolution
	}
	// Bounding box in px.
	minX, minY := math.Inf(1), math.Inf(1)
	maxX, maxY := math.Inf(-1), math.Inf(-1)
	for _, l := range lines {
		for _, p := range l {
			x, y := p[0]*r.s, p[1]*r.s
			minX, maxX = math.Min(minX, x), math.Max(maxX, x)
			minY, maxY = math.Min(minY, y), math.Max(maxY, y)
		}
	}
	b := r.img.Bounds()
	box := image.Rect(int(math.Floor(minX-half-2)), int(math.Floor(minY-half-2)),
		int(math.Ceil(maxX+half+2)), int(math.Ceil(maxY+half+2))).Intersect(b)
	if box.Empty() {
		return
	}
	ox, oy := float64(box.Min.X), float64(box.Min.Y)
	z := &r.z
	z.Reset(box.Dx(), box.Dy())
	var circ [joinSides][2]float32
	for k := range circ {
		a := 2 * math.Pi * float64(k) / joinSides
		circ[k] = [2]float32{float32(half * math.Cos(a)), float32(half * math.Sin(a))}
	}
	buf := make([][2]float32, joinSides)
	// Vertices far outside the box are skipped (clip at the page edge).
	inside := func(x, y float64) bool {
		return x > -half-2 && y > -half-2 && x < float64(box.Dx())+half+2 && y < float64(box.Dy())+half+2
	}
	for _, l := range lines {
		for i, p := range l {
			x, y := p[0]*r.s-ox, p[1]*r.s-oy
			if inside(x, y) {
				for k := range circ {
					buf[k] = [2]float32{float32(x) + circ[k][0], float32(y) + circ[k][1]}
				}
				addPoly(z, buf)
			}
			if i == 0 {
				continue
			}
			px, py := l[i-1][0]*r.s-ox, l[i-1][1]*r.s-oy
			dx, dy := x-px, y-py
			d := math.Hypot(dx, dy)
			if d < 1e-9 || (!inside(x, y) && !inside(px, py) && !segmentNearBox(px, py, x, y, box.Dx(), box.Dy())) {
				continue
			}
			nx, ny := -dy/d*half, dx/d*half
			addPoly(z, [][2]float32{
				{float32(px + nx), float32(py + ny)}, {float32(x + nx), float32(y + ny)},
				{float32(x - nx), float32(y - ny)}, {float32(px - nx), float32(py - ny)},
			})
		}
	}
	z.Draw(r.img, box, image.NewUniform(col), image.Point{})
}

// segmentNearBox reports whether the segment's bounding box meets the
// w × h box.
func segmentNearBox(x0, y0, x1, y1 float64, w, h int) bool {
	return math.Max(x0, x1) >= 0 && math.Min(x0, x1) <= float64(w) && math.Max(y0, y1) >= 0 && math.Min(y0, y1) <= float64(h)
}

// fonts holds the faces used on one page.
type fonts struct {
	regular, bold, small font.Face
}

func newFonts(dpi float64) (*fonts, error) {
	reg, err := opentype.Parse(goregular.TTF)
	if err != nil {
		return nil, fmt.Errorf("render: font: %w", err)
	}
	bd, err := opentype.Parse(gobold.TTF)
	if err != nil {
		return nil, fmt.Errorf("render: font: %w", err)
	}
	mk := func(f *opentype.Font, pt float64) (font.Face, error) {
		return opentype.NewFace(f, &opentype.FaceOptions{Size: pt, DPI: dpi, Hinting: font.HintingNone})
	}
	var fs fonts
	if fs.regular, err = mk(reg, 9); err != nil {
		return nil, fmt.Errorf("render: font: %w", err)
	}
	if fs.bold, err = mk(bd, 11); err != nil {
		return nil, fmt.Errorf("render: font: %w", err)
	}
	if fs.small, err = mk(bd, 9); err != nil {
		return nil, fmt.Errorf("render: font: %w", err)
	}
	return &fs, nil
}

// text draws s with its baseline's left end at (xMM, yMM).
func (r *raster) text(face font.Face, s string, xMM, yMM float64, col color.NRGBA) {
	d := font.Drawer{Dst: r.img, Src: image.NewUniform(col), Face: face,
		Dot: fixed.Point26_6{X: fixed.Int26_6(xMM * r.s * 64), Y: fixed.Int26_6(yMM * r.s * 64)}}
	d.DrawString(s)
}

// textWidthMM returns the advance of s in mm.
func (r *raster) textWidthMM(face font.Face, s string) float64 {
	return float64(font.MeasureString(face, s)) / 64 / r.s
}
