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
	img  *image.RGBA
	s    float64   // px per mm
	dist []float32 // scratch: per-pixel distance to the stroke, px
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

// strokePolylines draws polylines given in paper mm with stroke width wMM
// and colour col, anti-aliased, clipped at the page edge.
//
// The stroke is the set of points within wMM/2 of the polyline (round caps
// and joins). Each pixel's coverage is estimated from the distance d of its
// centre to the polyline as clamp(w/2 + 0.5 − d, 0, 1) px — exact
// box-filter coverage for a straight edge, and a true union of all
// segments, so overlapping segments never darken edge pixels beyond the
// stroke (which summing per-segment coverages would do on steep QRS
// slopes). Distances are kept per pixel as the minimum over segments.
func (r *raster) strokePolylines(lines [][][2]float64, wMM float64, col color.NRGBA) {
	if len(lines) == 0 {
		return
	}
	half := wMM * r.s / 2
	if half < 0.5 {
		half = 0.5 // keep thin traces visible at low resolution
	}
	reach := half + 0.5 // beyond this distance a pixel gets no ink
	minX, minY := math.Inf(1), math.Inf(1)
	maxX, maxY := math.Inf(-1), math.Inf(-1)
	for _, l := range lines {
		for _, p := range l {
			x, y := p[0]*r.s, p[1]*r.s
			minX, maxX = math.Min(minX, x), math.Max(maxX, x)
			minY, maxY = math.Min(minY, y), math.Max(maxY, y)
		}
	}
	if !finite(minX) || !finite(maxX) || !finite(minY) || !finite(maxY) {
		return
	}
	b := r.img.Bounds()
	box := image.Rect(int(math.Floor(minX-reach-1)), int(math.Floor(minY-reach-1)),
		int(math.Ceil(maxX+reach+1)), int(math.Ceil(maxY+reach+1))).Intersect(b)
	if box.Empty() {
		return
	}
	bw, bh := box.Dx(), box.Dy()
	n := bw * bh
	if cap(r.dist) < n {
		r.dist = make([]float32, n)
	}
	dist := r.dist[:n]
	far := float32(reach + 1)
	for i := range dist {
		dist[i] = far
	}
	ox, oy := float64(box.Min.X), float64(box.Min.Y)
	// seg lowers the distances of the pixels near segment a→b (box px,
	// raster coordinates: pixel (i, j) centred on (i+0.5, j+0.5)).
	seg := func(ax, ay, bx, by float64) {
		x0 := max(int(math.Floor(math.Min(ax, bx)-reach)), 0)
		x1 := min(int(math.Ceil(math.Max(ax, bx)+reach)), bw)
		y0 := max(int(math.Floor(math.Min(ay, by)-reach)), 0)
		y1 := min(int(math.Ceil(math.Max(ay, by)+reach)), bh)
		if x0 >= x1 || y0 >= y1 {
			return
		}
		dx, dy := bx-ax, by-ay
		l2 := dx*dx + dy*dy
		inv := 0.0
		if l2 > 0 {
			inv = 1 / l2
		}
		for y := y0; y < y1; y++ {
			py := float64(y) + 0.5 - ay
			row := dist[y*bw:]
			for x := x0; x < x1; x++ {
				px := float64(x) + 0.5 - ax
				f := (px*dx + py*dy) * inv
				if f < 0 {
					f = 0
				} else if f > 1 {
					f = 1
				}
				ex, ey := px-f*dx, py-f*dy
				d := float32(math.Sqrt(ex*ex + ey*ey))
				if d < row[x] {
					row[x] = d
				}
			}
		}
	}
	for _, l := range lines {
		for i, p := range l {
			x, y := p[0]*r.s-ox, p[1]*r.s-oy
			if i == 0 {
				if len(l) == 1 {
					seg(x, y, x, y)
				}
				continue
			}
			seg(l[i-1][0]*r.s-ox, l[i-1][1]*r.s-oy, x, y)
		}
	}
	cr, cg, cb := float32(col.R), float32(col.G), float32(col.B)
	pix, stride := r.img.Pix, r.img.Stride
	h := float32(half + 0.5)
	for y := 0; y < bh; y++ {
		row := dist[y*bw : (y+1)*bw]
		off := (box.Min.Y+y)*stride + 4*box.Min.X
		for x, d := range row {
			a := h - d
			if a <= 0 {
				continue
			}
			if a > 1 {
				a = 1
			}
			i := off + 4*x
			pix[i] = uint8(float32(pix[i])*(1-a) + cr*a + 0.5)
			pix[i+1] = uint8(float32(pix[i+1])*(1-a) + cg*a + 0.5)
			pix[i+2] = uint8(float32(pix[i+2])*(1-a) + cb*a + 0.5)
		}
	}
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
