package imageproc

import (
	"image"
	"math"
)

// meshStep is the node spacing of registration meshes, px.
const meshStep = 16

// warpMeshNRGBA fills dst by sampling src bilinearly where the mesh sends
// each dst pixel; samples outside src are white paper.
func warpMeshNRGBA(dst, src *image.NRGBA, m *Mesh) {
	dw, dh := dst.Rect.Dx(), dst.Rect.Dy()
	sw, sh := src.Rect.Dx(), src.Rect.Dy()
	sp, ss := src.Pix, src.Stride
	rx := make([]float64, m.NX) // node row interpolated at this y
	ry := make([]float64, m.NX)
	st := float64(m.Step)
	for y := 0; y < dh; y++ {
		fy := float64(y) / st
		j := min(int(fy), m.NY-2)
		ay := fy - float64(j)
		for i := range rx {
			k := j*m.NX + i
			rx[i] = (1-ay)*m.X[k] + ay*m.X[k+m.NX]
			ry[i] = (1-ay)*m.Y[k] + ay*m.Y[k+m.NX]
		}
		d := dst.Pix[y*dst.Stride : y*dst.Stride+4*dw]
		for x := 0; x < dw; x++ {
			fx := float64(x) / st
			i := min(int(fx), m.NX-2)
			ax := fx - float64(i)
			sx := (1-ax)*rx[i] + ax*rx[i+1]
			sy := (1-ax)*ry[i] + ax*ry[i+1]
			o := d[4*x : 4*x+4 : 4*x+4]
			o[3] = 255
			x0f, y0f := math.Floor(sx), math.Floor(sy)
			x0, y0 := int(x0f), int(y0f)
			if x0 < 0 || y0 < 0 || x0+1 >= sw || y0+1 >= sh {
				o[0], o[1], o[2] = 255, 255, 255
				continue
			}
			wx, wy := sx-x0f, sy-y0f
			p := y0*ss + 4*x0
			for c := 0; c < 3; c++ {
				v := (1-wy)*((1-wx)*float64(sp[p+c])+wx*float64(sp[p+4+c])) +
					wy*((1-wx)*float64(sp[p+ss+c])+wx*float64(sp[p+ss+4+c]))
				o[c] = uint8(v + 0.5)
			}
		}
	}
}

// resampleFunc is background.resample for a general map toBG (page px →
// the background's image px).
func (bg *background) resampleFunc(toBG func(x, y float64) (float64, float64), w, h, block int) *background {
	nx, ny := max(1, (w+block-1)/block), max(1, (h+block-1)/block)
	out := &background{nx: nx, ny: ny, cell: float64(block)}
	for c := range out.v {
		out.v[c] = make([]float64, nx*ny)
	}
	for by := 0; by < ny; by++ {
		for bx := 0; bx < nx; bx++ {
			x, y := toBG((float64(bx)+0.5)*float64(block)-0.5, (float64(by)+0.5)*float64(block)-0.5)
			fx := (x+0.5)/bg.cell - 0.5
			fy := (y+0.5)/bg.cell - 0.5
			inside := fx > -1 && fy > -1 && fx < float64(bg.nx) && fy < float64(bg.ny)
			fx = min(max(fx, 0), float64(bg.nx-1))
			fy = min(max(fy, 0), float64(bg.ny-1))
			x0, y0 := int(fx), int(fy)
			x1, y1 := min(x0+1, bg.nx-1), min(y0+1, bg.ny-1)
			ax, ay := fx-float64(x0), fy-float64(y0)
			for c := 0; c < 3; c++ {
				v := 255.0
				if inside {
					g := bg.v[c]
					v = (1-ay)*((1-ax)*g[y0*bg.nx+x0]+ax*g[y0*bg.nx+x1]) + ay*((1-ax)*g[y1*bg.nx+x0]+ax*g[y1*bg.nx+x1])
				}
				out.v[c][by*nx+bx] = v
			}
		}
	}
	return out
}

// meshHomography is the least-squares homography through a mesh's nodes
// (upright px → input px), for callers that need a single projective map.
func meshHomography(m *Mesh) (Homography, bool) {
	var src, dst []Point
	// At most about 24×24 nodes: the DLT's SVD grows with the point count.
	sj, si := max(1, m.NY/24), max(1, m.NX/24)
	for j := 0; j < m.NY; j += sj {
		for i := 0; i < m.NX; i += si {
			src = append(src, Point{float64(i * m.Step), float64(j * m.Step)})
			dst = append(dst, Point{m.X[j*m.NX+i], m.Y[j*m.NX+i]})
		}
	}
	h, err := EstimateHomography(src, dst)
	return h, err == nil
}

// registerPhoto registers a coarse-rectified photo page p to its grid
// lattice (registerLattice), decides its orientation again on the
// registered grid area (photoOrientation) and, when that succeeds,
// replaces p's images with one resampling of the (square) source src
// through the composed map: registered px → coarse px (lattice fit) →
// src px (toSrc). It sets p.Mesh (to input px: pre ∘ that) and
// p.ToSource (its best homography). wInk is the work copy's ink map,
// fullToWork maps src px to it. On failure p is left as it is, with a
// warning.
func registerPhoto(p *Page, src *image.NRGBA, pre, toSrc Homography, bgw *background, fullToWork Homography, sep *separator, f int, wInk *image.Gray) {
	// The sheet on the coarse page: the paper mask of its background.
	cw, ch := p.Ink.Rect.Dx(), p.Ink.Rect.Dy()
	cb := max(8, min(cw, ch)/f/24) * f
	cbg := bgw.resample(Mul(fullToWork, toSrc), cw, ch, cb)
	var onSheet func(u, v float64) bool
	if mask := paperMask(cbg); mask != nil {
		onSheet = func(u, v float64) bool {
			bx, by := int(u)/cb, int(v)/cb
			return u >= 0 && v >= 0 && bx < cbg.nx && by < cbg.ny && mask[by*cbg.nx+bx]
		}
	}
	lm, ok := registerLattice(latticeMap8(p), onSheet)
	if !ok {
		p.Warnings = append(p.Warnings, "photo: the grid lattice could not be registered; lens or curl distortion is not corrected")
		return
	}
	toWork := func(x, y float64) (float64, float64) {
		u, v := lm.at(x, y)
		u, v = Apply(toSrc, u, v)
		return Apply(fullToWork, u, v)
	}
	q2 := photoOrientation(lm, toWork, wInk, f)
	turn := quarterTurn(q2, lm.w, lm.h0)
	W, H := turnedSize(q2, lm.w, lm.h0)
	toSrcMesh := newMesh(W, H, meshStep, func(x, y float64) (float64, float64) {
		u, v := lm.at(Apply(turn, x, y))
		return Apply(toSrc, u, v)
	})
	color := image.NewNRGBA(image.Rect(0, 0, W, H))
	warpMeshNRGBA(color, src, toSrcMesh)
	ub := max(8, min(W, H)/f/24)
	bg := bgw.resampleFunc(func(x, y float64) (float64, float64) {
		u, v := toSrcMesh.At(x, y)
		return Apply(fullToWork, u, v)
	}, W, H, ub*f)
	full := &Mesh{Step: toSrcMesh.Step, NX: toSrcMesh.NX, NY: toSrcMesh.NY,
		X: make([]float64, len(toSrcMesh.X)), Y: make([]float64, len(toSrcMesh.Y))}
	if ext := max(lm.hi.X-lm.lo.X, lm.hi.Y-lm.lo.Y) / (lm.period / 5); ext <= 450 {
		full.LatticePeriod = lm.period
	}
	for k := range full.X {
		full.X[k], full.Y[k] = Apply(pre, toSrcMesh.X[k], toSrcMesh.Y[k])
	}
	h, ok := meshHomography(full)
	if !ok {
		return
	}
	p.Color, p.colour = color, nil
	p.Mesh = full
	p.ToSource = h
	p.QuarterTurns = (p.QuarterTurns + q2) & 3
	separateMaps(p, sep, bg, ub*f)
}

// photoOrientation decides the quarter turns of a registered photo from
// the confident ink inside its grid area (the lattice fit's tie-point
// extent), sampled from the work copy's ink map wInk at the work scale
// (1/f of the page): the desk around the sheet, empty on both axes, must
// not weigh in the empty-row test.
func photoOrientation(lm *latticeMap, toWork func(x, y float64) (float64, float64), wInk *image.Gray, f int) int {
	// Two major periods inside the tie points' extent: the sheet's edge
	// (dark against the desk, read as ink) stays out.
	x0, y0 := lm.lo.X-lm.x0+2*lm.period, lm.lo.Y-lm.y0+2*lm.period
	x1, y1 := lm.hi.X-lm.x0-2*lm.period, lm.hi.Y-lm.y0-2*lm.period
	s := float64(f)
	w, h := int((x1-x0)/s), int((y1-y0)/s)
	if w < 16 || h < 16 {
		return 0
	}
	ci := image.NewGray(image.Rect(0, 0, w, h))
	ww, wh := wInk.Rect.Dx(), wInk.Rect.Dy()
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			u, v := toWork(x0+s*float64(x), y0+s*float64(y))
			iu, iv := int(u+0.5), int(v+0.5)
			if iu < 0 || iv < 0 || iu >= ww || iv >= wh {
				continue
			}
			// The grey-page ink level: at low resolution a photo's thin
			// traces fall below the colour-scan level in the work copy.
			if c := wInk.Pix[iv*wInk.Stride+iu]; c >= orientInk {
				ci.Pix[y*ci.Stride+x] = c
			}
		}
	}
	return orientation(ci, orientInk)
}

// separateMaps fills p's grey, ink and grid maps from p.Color and its
// background bg (blocks of block px), as Prepare does for the first page.
func separateMaps(p *Page, sep *separator, bg *background, block int) {
	p.Gray, p.Ink, p.Grid = sep.maps(p.Color, bg)
	if m := paperMask(bg); m != nil {
		// A photo: blank out the table around the sheet.
		applyMask(m, block, p.Ink, p.Grid)
	}
	if !sep.colour {
		structureSplit(p.Gray, p.Ink, p.Grid)
	}
}

// latticeMap8 is the map the lattice is registered on: the page's
// darkness (255 − Gray) plus half the grid strength, zero on and beside
// trace ink (so traces and text do not add to the profiles). Darkness
// keeps faint or dotted grids that the colour separation lost.
func latticeMap8(p *Page) *image.Gray {
	w, h := p.Gray.Rect.Dx(), p.Gray.Rect.Dy()
	d := image.NewGray(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		gr := p.Gray.Pix[y*p.Gray.Stride : y*p.Gray.Stride+w]
		gd := p.Grid.Pix[y*p.Grid.Stride : y*p.Grid.Stride+w]
		ir := p.Ink.Pix[y*p.Ink.Stride : y*p.Ink.Stride+w]
		dr := d.Pix[y*d.Stride : y*d.Stride+w]
		for x, v := range gr {
			if ir[x] > 40 || (x > 0 && ir[x-1] > 40) || (x < w-1 && ir[x+1] > 40) {
				continue
			}
			dr[x] = uint8(min(255, int(255-v)+int(gd[x])/2))
		}
	}
	return d
}
