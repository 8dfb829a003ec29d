package imageproc

import (
	"image"
	"math"
)

// Grid colour families reported in Page.GridColor.
const (
	GridRed    = "red"
	GridPink   = "pink"
	GridOrange = "orange"
	GridGreen  = "green"
	GridBlue   = "blue"
	GridGrey   = "grey"
	GridNone   = "none"
)

// separator splits normalised pixels into grid and ink strengths.
type separator struct {
	family string
	colour bool
	// Least-squares solution rows: α = ka·a, β = kb·a for absorption a
	// (255 − channel); α in units of the grid's own absorption, β in
	// per-channel absorption of neutral ink.
	ka, kb [3]float64
	inkLo  float64 // absorption below which a pixel is not ink
	inkHi  float64 // absorption at which it is certainly ink
}

// analyseColour finds the grid's colour family on a background-normalised
// page: hue histogram of chromatic, not-too-dark pixels.
func analyseColour(m *image.NRGBA, mask []bool, block int) *separator {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	nbx := (w + block - 1) / block
	const bins = 36
	var hist [bins]float64
	var sum [bins][3]float64
	total, chrom := 0, 0
	// Each pixel's hue bin (−1: not chromatic), for spread: masked-out
	// pixels included, as spread counts them before applying the mask.
	hb := make([]int8, w*h)
	for y := 0; y < h; y++ {
		row := m.Pix[y*m.Stride : y*m.Stride+4*w]
		for i := 0; i < len(row); i += 4 {
			r, g, b := float64(row[i]), float64(row[i+1]), float64(row[i+2])
			mx, mn := max(r, g, b), min(r, g, b)
			k := -1
			if mx-mn >= 28 && mx >= 70 {
				k = int(hue(r, g, b)/360*bins) % bins
			}
			hb[y*w+i/4] = int8(k)
			if mask != nil && !mask[(y/block)*nbx+i/4/block] {
				continue
			}
			total++
			if k < 0 {
				continue
			}
			chrom++
			hist[k]++
			sum[k][0] += r
			sum[k][1] += g
			sum[k][2] += b
		}
	}
	s := &separator{family: GridGrey, inkLo: 50, inkHi: 150}
	if total == 0 || float64(chrom) < 0.004*float64(total) {
		return s
	}
	// Dominant hue with its neighbours.
	best, bk := -1.0, 0
	for k := range hist {
		v := hist[(k+bins-1)%bins] + hist[k] + hist[(k+1)%bins]
		if v > best {
			best, bk = v, k
		}
	}
	if best < 0.5*float64(chrom) {
		return s // many hues: a photo of something, or colour labels only
	}
	// A printed grid covers the whole sheet: its colour must appear in
	// most blocks, not only along an edge, a shadow or a header.
	if !spread(hb, w, h, mask, block, bk, bins) {
		return s
	}
	var c [3]float64
	n := 0.0
	for _, k := range []int{(bk + bins - 1) % bins, bk, (bk + 1) % bins} {
		for j := 0; j < 3; j++ {
			c[j] += sum[k][j]
		}
		n += hist[k]
	}
	for j := range c {
		c[j] /= n
	}
	hdeg := hue(c[0], c[1], c[2])

	switch {
	case hdeg >= 330 || hdeg < 18:
		if min(c[0], c[1], c[2]) < 120 {
			s.family = GridRed
		} else {
			s.family = GridPink
		}
	case hdeg < 50:
		s.family = GridOrange
	case hdeg >= 70 && hdeg < 170:
		s.family = GridGreen
	case hdeg >= 170 && hdeg < 260:
		s.family = GridBlue
	case hdeg >= 260:
		s.family = GridPink // magenta-ish
	default:
		s.family = GridOrange // yellowish
	}
	s.colour = true
	// Absorption direction of the grid colour and of neutral ink.
	u := [3]float64{255 - c[0], 255 - c[1], 255 - c[2]}
	nu := math.Sqrt(u[0]*u[0] + u[1]*u[1] + u[2]*u[2])
	if nu < 1 {
		s.colour = false
		s.family = GridGrey
		return s
	}
	nn := [3]float64{1, 1, 1}
	// Normal equations for a ≈ α·u + β·nn.
	uu := u[0]*u[0] + u[1]*u[1] + u[2]*u[2]
	un := u[0] + u[1] + u[2]
	const nnn = 3.0
	det := uu*nnn - un*un
	if det < 1e-6*uu*nnn {
		s.colour = false
		s.family = GridGrey
		return s
	}
	for j := 0; j < 3; j++ {
		s.ka[j] = (nnn*u[j] - un*nn[j]) / det
		s.kb[j] = (uu*nn[j] - un*u[j]) / det
	}
	s.inkLo, s.inkHi = 45, 140
	return s
}

// hue returns the HSV hue of (r, g, b) in degrees [0, 360).
func hue(r, g, b float64) float64 {
	mx, mn := max(r, g, b), min(r, g, b)
	d := mx - mn
	if d == 0 {
		return 0
	}
	var h float64
	switch mx {
	case r:
		h = math.Mod((g-b)/d, 6)
	case g:
		h = (b-r)/d + 2
	default:
		h = (r-g)/d + 4
	}
	h *= 60
	if h < 0 {
		h += 360
	}
	return h
}

// maps computes luminance, ink and grid strength of src normalised by bg.
// In grey mode the grid map is filled by structureSplit afterwards. The
// arithmetic is fixed point: gains in 1/256, coefficients in 1/1024.
func (s *separator) maps(src *image.NRGBA, bg *background) (gray, ink, grd *image.Gray) {
	w, h := src.Rect.Dx(), src.Rect.Dy()
	r := image.Rect(0, 0, w, h)
	gray, ink, grd = image.NewGray(r), image.NewGray(r), image.NewGray(r)
	g := make([]uint32, 3*w)
	f := s.fixed()
	for y := 0; y < h; y++ {
		bg.gainRowFixed(g, y, w)
		f.row(src.Pix[y*src.Stride:y*src.Stride+4*w], g, gray.Pix[y*gray.Stride:y*gray.Stride+w],
			ink.Pix[y*ink.Stride:y*ink.Stride+w], grd.Pix[y*grd.Stride:y*grd.Stride+w])
	}
	return gray, ink, grd
}

// sat8 clamps v to 0..255.
func sat8(v int32) uint8 {
	if v <= 0 {
		return 0
	}
	if v >= 255 {
		return 255
	}
	return uint8(v)
}

// spread reports whether chromatic pixels of hue bin bk (±1) occur in at
// least half of the (paper) blocks of a w×h page whose pixels' hue bins
// are hb (−1: not chromatic).
func spread(hb []int8, w, h int, mask []bool, block, bk, bins int) bool {
	nbx, nby := (w+block-1)/block, (h+block-1)/block
	cnt := make([]int, nbx*nby)
	for y := 0; y < h; y++ {
		for x, k := range hb[y*w : y*w+w] {
			if k < 0 {
				continue
			}
			if d := (int(k) - bk + bins) % bins; d <= 1 || d == bins-1 {
				cnt[(y/block)*nbx+x/block]++
			}
		}
	}
	paper, with := 0, 0
	for i, c := range cnt {
		if mask != nil && !mask[i] {
			continue
		}
		paper++
		if c >= 3 {
			with++
		}
	}
	return paper > 0 && 2*with >= paper
}
