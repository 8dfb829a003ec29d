package imageproc

import (
	"fmt"
	"image"
	"math"

	"tracelift/ecg"
)

// Options tune Prepare. A nil *Options means the defaults.
type Options struct {
	// DPIX, DPIY are the resolution metadata of the input (dots per inch),
	// 0 when unknown. Prepare only passes them on; grid uses them as priors.
	DPIX, DPIY float64
	// NoRectify skips the perspective correction of photos (deskew only).
	NoRectify bool
	// NoDeskew keeps the input's angle (orientation is still fixed).
	NoDeskew bool
	// NoOrient keeps the input's quarter-turn orientation.
	NoOrient bool
	// MaxSkewDeg bounds the skew search, degrees; 0 means 12.
	MaxSkewDeg float64
	// MaxPixels rejects larger inputs (ErrUnreadable); 0 means 150 million.
	MaxPixels int
}

// Page is an upright, rectified ECG page with ink and grid separated. All
// images share the geometry of Ink.
type Page struct {
	// Color is the upright, rectified page in its original colours when
	// Prepare had it at no extra cost (an input needing no geometric
	// correction, a photo); otherwise nil until Upright makes it.
	Color *image.NRGBA
	Ink   *image.Gray // trace-ink strength 0..255 (255 = certainly ink); grid and paper removed
	Grid  *image.Gray // grid-line strength 0..255
	// Gray is the luminance after background normalisation (255 =
	// paper) of grey and 1-bit pages and of photos; nil on other colour
	// pages, whose calibration and tracing read only Ink and Grid.
	Gray *image.Gray
	// RotationDeg is the skew that was removed, degrees, counter-clockwise
	// positive as seen on the input (after the quarter turns).
	RotationDeg float64
	// QuarterTurns is the orientation fix applied before the deskew:
	// the input was turned QuarterTurns × 90° counter-clockwise.
	QuarterTurns int
	// ToSource maps upright pixels to input pixels (row-major homography,
	// pixel centres at integer coordinates).
	ToSource [9]float64
	// Mesh, when not nil, is the full map from upright px to input px of a
	// photo registered to its grid lattice (lens and curl included);
	// ToSource is then the best homography fit to it. Page.SourcePoint
	// uses whichever applies.
	Mesh *Mesh
	// Rectified reports that a perspective (photo) correction was applied.
	Rectified bool
	// GridColor is the grid's colour family: "red", "pink", "orange",
	// "green", "blue", "grey" or "none".
	GridColor string
	// Bilevel reports that the input holds only black and white (a fax or
	// a 1-bit scan): its luminance tells nothing that its ink map does
	// not.
	Bilevel bool
	// DPIX, DPIY are the resolution metadata from Options, for the upright
	// page: equal when an anisotropic input was resampled to square pixels.
	DPIX, DPIY float64
	Warnings   []string

	// colour remakes Color on demand: the input and the map from upright
	// px to its pixels (nil once Color is set).
	colour *colourSource
}

// colourSource is what Page.Upright resamples Color from.
type colourSource struct {
	src   *source
	toSrc Homography
}

// Upright returns the upright, rectified page in its original colours
// (the geometry of Ink), resampling it from the input on the first call
// when Prepare did not keep it (the bytes it would have written: the
// input's colours sampled bilinearly through the page's deskew and
// quarter turns). Only pictures for people need it, so Prepare does not
// spend a page-sized image on it. Not safe for concurrent first calls.
func (p *Page) Upright() *image.NRGBA {
	if p.Color == nil && p.colour != nil && p.Ink != nil {
		p.Color = uprightColour(p.colour.src, p.colour.toSrc, p.Ink.Rect.Dx(), p.Ink.Rect.Dy())
		p.colour = nil
	}
	return p.Color
}

// ErrBlank reports a page without any marks. It wraps ecg.ErrNoECG.
var ErrBlank = fmt.Errorf("imageproc: blank page: %w", ecg.ErrNoECG)

// workSide is the long side of the downscaled copy used for estimation.
const workSide = 1024

// Prepare turns a decoded page into an upright, rectified page with
// separated ink and grid. It returns an error wrapping ecg.ErrUnreadable
// for empty or oversized images and ErrBlank (ecg.ErrNoECG) for pages
// without marks. img is not modified; Page.Color may share its memory when
// no geometric correction is needed and img is an *image.NRGBA, and
// Page.Upright reads img (not a copy) when it makes Color later.
func Prepare(img image.Image, opt *Options) (*Page, error) {
	var o Options
	if opt != nil {
		o = *opt
	}
	if o.MaxSkewDeg <= 0 {
		o.MaxSkewDeg = 12
	}
	if o.MaxPixels <= 0 {
		o.MaxPixels = 150_000_000
	}
	if img == nil {
		return nil, fmt.Errorf("imageproc: no image: %w", ecg.ErrUnreadable)
	}
	b := img.Bounds()
	W, H := b.Dx(), b.Dy()
	if W < 32 || H < 32 {
		return nil, fmt.Errorf("imageproc: image %d×%d px is too small for an ECG page: %w", W, H, ecg.ErrUnreadable)
	}
	if W*H > o.MaxPixels {
		return nil, fmt.Errorf("imageproc: image %d×%d px exceeds %d pixels: %w", W, H, o.MaxPixels, ecg.ErrUnreadable)
	}
	src := newSource(img)
	bilevel := twoLevels(img)
	// Anisotropic resolution (a fax: 204 × 98 or 196 dpi, standards.md
	// §6.1): resample to square pixels at the x resolution first, so that
	// a rotation of the paper is a rotation of the image.
	pre := identity
	if o.DPIX > 0 && o.DPIY > 0 && math.Abs(o.DPIX/o.DPIY-1) > 0.02 {
		rx := o.DPIX / o.DPIY
		nh := int(math.Round(float64(H) * rx))
		if W*nh > o.MaxPixels {
			return nil, fmt.Errorf("imageproc: image %d×%d px at %g×%g dpi exceeds %d pixels once made square: %w", W, H, o.DPIX, o.DPIY, o.MaxPixels, ecg.ErrUnreadable)
		}
		pre = Homography{1, 0, 0, 0, 1 / rx, 0, 0, 0, 1}
		sq := image.NewNRGBA(image.Rect(0, 0, W, nh))
		warpNRGBA(sq, src.nrgba(), pre)
		src, H = newSource(sq), nh
		o.DPIY = o.DPIX
	}
	we := estimateWork(src)
	f, work, bgw, mask, sep := we.f, we.work, we.bg, we.mask, we.sep
	wGray, wInk, lineMap := we.gray, we.ink, we.lineMap
	if blank(wGray, 0.0005) {
		return nil, ErrBlank
	}
	p := &Page{GridColor: sep.family, DPIX: o.DPIX, DPIY: o.DPIY, Bilevel: bilevel}
	if pre != identity {
		p.Warnings = append(p.Warnings, fmt.Sprintf("resolution %g×%g dpi: resampled to square pixels at %g dpi", opt.DPIX, opt.DPIY, o.DPIX))
	}
	// Geometry on the work image: corrected work px → work px.
	theta := 0.0
	if !o.NoDeskew {
		theta = estimateSkew(lineMap, o.MaxSkewDeg*math.Pi/180, both)
	}
	p.RotationDeg = theta * 180 / math.Pi
	ww, wh := work.Rect.Dx(), work.Rect.Dy()
	var persp *perspective
	// Only photos (a sheet edge seen) get a perspective correction: on
	// flat scans the tile directions' noise (traces, text, dotted grids)
	// made false corrections.
	if !o.NoRectify && !o.NoDeskew && mask != nil {
		persp = estimatePerspective(lineMap, theta, true)
	}
	s := float64(f)
	// Work coordinates → full: x_full = f·x + (f−1)/2.
	S := Homography{s, 0, (s - 1) / 2, 0, s, (s - 1) / 2, 0, 0, 1}
	Sinv, _ := Invert(S)
	var toSrc Homography // corrected full-res px → input px
	OW, OH := W, H
	cw, ch := ww, wh // corrected work size
	var toWork Homography
	switch {
	case persp != nil:
		toWork = persp.toWork
		cw, ch = int(math.Ceil(persp.w)), int(math.Ceil(persp.h))
		toSrc = Mul(S, Mul(toWork, Sinv))
		OW, OH = int(math.Ceil(persp.w*s)), int(math.Ceil(persp.h*s))
		p.Rectified = true
	case math.Abs(p.RotationDeg) >= 0.02:
		toSrc, OW, OH = rotation(theta, W, H)
		var rw Homography
		rw, cw, ch = rotation(theta, ww, wh)
		toWork = rw
	default:
		toSrc, toWork = identity, identity
		p.RotationDeg = 0
	}
	q := 0
	if !o.NoOrient {
		up := uint8(orientInk)
		if sep.colour {
			up = orientUpColour
		}
		q = orientation(orientationInk(wInk, toWork, cw, ch), up)
	}
	p.QuarterTurns = q
	UW, UH := turnedSize(q, OW, OH)
	toSrc = Mul(toSrc, quarterTurn(q, OW, OH))
	OW, OH = UW, UH
	if OW*OH > 2*o.MaxPixels {
		return nil, fmt.Errorf("imageproc: rectified page would be %d×%d px: %w", OW, OH, ecg.ErrNoECG)
	}
	p.ToSource = Mul(pre, toSrc)
	// The upright page's background: the work estimate carried through
	// the geometry (no second pass over the full page).
	ub := max(8, min(OW, OH)/f/24)
	// toSrc ends in the (square) source the work copy was made from.
	fullToWork := Homography{1 / s, 0, -(s - 1) / (2 * s), 0, 1 / s, -(s - 1) / (2 * s), 0, 0, 1}
	bg := bgw.resample(Mul(fullToWork, toSrc), OW, OH, ub*f)
	// One pass: resample (or convert) each row and separate it.
	// The background at the input's pixels, for inputs separated before
	// they are resampled (upright_pairs.go).
	photo := p.Rectified || (mask != nil && !o.NoRectify && !o.NoDeskew)
	var bgSrc *background
	if !photo {
		bgSrc = bgw.resample(fullToWork, src.w, src.h, ub*f)
	}
	p.Color, p.Gray, p.Ink, p.Grid = sep.upright(src, toSrc, OW, OH, bg, bgSrc, photo)
	if p.Color == nil {
		p.colour = &colourSource{src: src, toSrc: toSrc}
	}
	if m := paperMask(bg); m != nil {
		// A photo: blank out the table around the sheet.
		applyMask(m, ub*f, p.Ink, p.Grid)
	}
	if !sep.colour {
		structureSplit(p.Gray, p.Ink, p.Grid)
		if !hasLines(p.Grid) {
			p.GridColor = GridNone
			p.Warnings = append(p.Warnings, "no grid lines found; calibration must come from pulses, metadata or options")
		}
	}
	if photo {
		// A photo: register the page to its grid lattice (photo.go).
		registerPhoto(p, src.nrgba(), pre, toSrc, bgw, fullToWork, sep, f, wInk)
	}
	return p, nil
}

// workEstimate is what Prepare measures on the downscaled work copy of
// the input before it touches the full page.
type workEstimate struct {
	f         int          // full px per work px
	work      *image.NRGBA // the work copy
	bg        *background  // its background, in work px
	mask      []bool       // the sheet's blocks on a photo (nil for a scan)
	sep       *separator   // the ink/grid separation
	gray, ink *image.Gray  // its luminance and ink maps (a photo's table masked out of ink)
	lineMap   *image.Gray  // line strength for the skew search: grid strength, or darkness on grey pages
}

// estimateWork downscales src to at most about workSide px on its long
// side and estimates there the background, the grid's colour and the
// separation, and the maps the geometry is measured on.
func estimateWork(src *source) *workEstimate {
	we := &workEstimate{f: max(1, (max(src.w, src.h)+workSide-1)/workSide)}
	we.work = downscaleSource(src, we.f)
	we.bg = estimateBackground(we.work, blockSize(we.work), 1)
	mblock := blockSize(we.work)
	we.mask = paperMask(we.bg)
	we.sep = analyseColour(normalise(we.work, we.bg), we.mask, mblock)
	var grd *image.Gray
	we.gray, we.ink, grd = we.sep.maps(we.work, we.bg)
	we.lineMap = grd
	if !we.sep.colour {
		we.lineMap = invert(we.gray)
	}
	// Photos: only the sheet counts (not the table or the sheet's edge).
	applyMask(we.mask, mblock, we.lineMap, we.ink)
	return we
}

// blockSize is the background block size for a downscaled page: about a
// 24th of its short side, so that blocks are larger than a few grid
// squares but follow lighting gradients.
func blockSize(m *image.NRGBA) int {
	return max(8, min(m.Rect.Dx(), m.Rect.Dy())/24)
}

// invert returns 255 − m.
func invert(m *image.Gray) *image.Gray {
	d := image.NewGray(m.Rect)
	for i, v := range m.Pix {
		d.Pix[i] = 255 - v
	}
	return d
}

// blank reports whether fewer than frac of gray's pixels are marked
// (darker than 60 below paper).
func blank(gray *image.Gray, frac float64) bool {
	n := 0
	for _, v := range gray.Pix {
		if v < 195 {
			n++
		}
	}
	return float64(n) < frac*float64(len(gray.Pix))
}

// hasLines reports whether a grid-strength map of an upright page holds
// at least ten line rows (rows much darker on average than the median).
func hasLines(m *image.Gray) bool {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	rows := make([]float64, h)
	for y := 0; y < h; y++ {
		for _, v := range m.Pix[y*m.Stride : y*m.Stride+w] {
			rows[y] += float64(v)
		}
		rows[y] /= float64(w)
	}
	line := make([]bool, h)
	markLines(rows, line)
	n := 0
	for _, l := range line {
		if l {
			n++
		}
	}
	return n >= 10
}

// rotation returns the map from a page turned upright by removing a
// counter-clockwise skew theta (radians) to the w×h input, and the
// upright page's size (the rotated input's bounding box).
func rotation(theta float64, w, h int) (Homography, int, int) {
	c, sn := math.Cos(theta), math.Sin(theta)
	ow := int(math.Ceil(float64(w)*math.Abs(c) + float64(h)*math.Abs(sn)))
	oh := int(math.Ceil(float64(w)*math.Abs(sn) + float64(h)*math.Abs(c)))
	cx, cy := float64(w-1)/2, float64(h-1)/2
	ux, uy := float64(ow-1)/2, float64(oh-1)/2
	// t = c_t + R(θ)(u − c_u), R turning counter-clockwise as seen.
	return Homography{
		c, sn, cx - c*ux - sn*uy,
		-sn, c, cy + sn*ux - c*uy,
		0, 0, 1,
	}, ow, oh
}
