package scansim

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"image/jpeg"
	"math"
	"math/rand/v2"

	"tracelift/homography"
)

// ErrOptions is returned (wrapped) for options outside their valid range
// or an empty source image.
var ErrOptions = errors.New("scansim: invalid options")

// maxPixels bounds the output canvas (about 15 000 × 10 000 px).
const maxPixels = 150_000_000

// Options controls Apply. The zero value leaves the image unchanged (apart
// from conversion to *image.NRGBA).
type Options struct {
	RotationDeg float64 // rotation, degrees, counter-clockwise as seen on screen; |θ| ≤ 45
	// ScaleX and ScaleY resample the page (a fax has different resolutions
	// across and down the page); 0 means 1; each in (0, 4].
	ScaleX, ScaleY float64
	// Perspective tilts the page as a hand-held camera does: 0 = none,
	// 0.05–0.2 typical; the nearer edge grows by about this fraction and
	// the farther shrinks; the tilt direction comes from Seed. Below 0.5.
	Perspective float64
	// LensK1 is the radial warp coefficient (positive = barrel,
	// negative = pincushion), |k1| ≤ 0.3; not included in the returned H.
	LensK1 float64
	// Lighting in [0, 1] darkens the image with a lamp gradient and a
	// vignette; 1 darkens the far corner by about 60 %.
	Lighting float64
	// PaperTint is multiplied into the page (e.g. {250, 244, 220, 255} for
	// yellowed paper); the zero value means none.
	PaperTint color.RGBA
	// Background fills canvas area outside the page; the zero value means
	// white.
	Background  color.RGBA
	BlurPx      float64 // Gaussian blur sigma, output px; 0 = none
	NoiseSD     float64 // sensor noise SD, 0–255 units
	JPEGQuality int     // 1–100 for a JPEG round trip; 0 = none
	Grayscale   bool
	Binarize    bool // threshold at grey level 150 to pure black and white after everything else (implies Grayscale)
	PenMarks    int  // number of ballpoint strokes drawn across the page, ≤ 100
	Seed        uint64
}

func (o *Options) validate() error {
	bad := func(f string, a ...any) error {
		return fmt.Errorf("%w: "+f, append([]any{ErrOptions}, a...)...)
	}
	for _, v := range []float64{o.RotationDeg, o.ScaleX, o.ScaleY, o.Perspective, o.LensK1, o.Lighting, o.BlurPx, o.NoiseSD} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return bad("non-finite value")
		}
	}
	switch {
	case math.Abs(o.RotationDeg) > 45:
		return bad("rotation %g° beyond ±45°", o.RotationDeg)
	case o.ScaleX < 0 || o.ScaleX > 4 || o.ScaleY < 0 || o.ScaleY > 4:
		return bad("scale %g × %g outside (0, 4]", o.ScaleX, o.ScaleY)
	case o.Perspective < 0 || o.Perspective >= 0.5:
		return bad("perspective %g outside [0, 0.5)", o.Perspective)
	case math.Abs(o.LensK1) > 0.3:
		return bad("lens k1 %g beyond ±0.3", o.LensK1)
	case o.Lighting < 0 || o.Lighting > 1:
		return bad("lighting %g outside [0, 1]", o.Lighting)
	case o.BlurPx < 0 || o.BlurPx > 50:
		return bad("blur %g px outside [0, 50]", o.BlurPx)
	case o.NoiseSD < 0 || o.NoiseSD > 128:
		return bad("noise SD %g outside [0, 128]", o.NoiseSD)
	case o.JPEGQuality < 0 || o.JPEGQuality > 100:
		return bad("JPEG quality %d outside 0–100", o.JPEGQuality)
	case o.PenMarks < 0 || o.PenMarks > 100:
		return bad("pen marks %d outside 0–100", o.PenMarks)
	}
	return nil
}

// Apply returns src degraded as opt describes, and the row-major 3×3
// homography H that maps input pixel coordinates to output pixel
// coordinates for the global geometric part (scale, rotation, perspective,
// and the translation onto the enlarged canvas). Coordinates are continuous
// with the centre of pixel (x, y) at (x + 0.5, y + 0.5), relative to each
// image's Bounds().Min; a point p maps to (H·[p 1]) divided by its third
// component. A lens warp, if any, is applied on top of H and is NOT
// included in it.
//
// The output is *image.NRGBA, or *image.Gray when Grayscale or Binarize is
// set; a binarised output holds only the values 0 and 255. With scaling
// alone the canvas is the scaled page; when the page is rotated, tilted or
// warped by a pincushion lens (LensK1 < 0) the canvas is the page's
// bounding box plus a margin (2 % of its longer side, plus 1.2·|k1| for
// pincushion) so the whole page stays visible, the rest filled with
// Background. Apply is deterministic given opt.Seed.
func Apply(src image.Image, opt Options) (image.Image, [9]float64, error) {
	var H [9]float64
	if src == nil || src.Bounds().Empty() {
		return nil, H, fmt.Errorf("%w: empty source image", ErrOptions)
	}
	if err := opt.validate(); err != nil {
		return nil, H, err
	}
	if opt.ScaleX == 0 {
		opt.ScaleX = 1
	}
	if opt.ScaleY == 0 {
		opt.ScaleY = 1
	}
	if opt.Binarize {
		opt.Grayscale = true
	}
	rng := rand.New(rand.NewPCG(opt.Seed, opt.Seed^0x5ca55ca55ca55ca5))
	sb := src.Bounds()
	// Draws happen in a fixed order so each stage's randomness is stable
	// whether or not earlier stages are enabled.
	penRng := rand.New(rand.NewPCG(rng.Uint64(), 1))
	geoRng := rand.New(rand.NewPCG(rng.Uint64(), 2))
	lightRng := rand.New(rand.NewPCG(rng.Uint64(), 3))
	noiseRng := rand.New(rand.NewPCG(rng.Uint64(), 4))

	H, w, h := sheetHomography(sb.Dx(), sb.Dy(), opt, geoRng)
	if w*h > maxPixels || sb.Dx()*sb.Dy() > maxPixels {
		return nil, H, fmt.Errorf("%w: output canvas %d × %d px too large", ErrOptions, w, h)
	}
	// The page is made opaque (composited over white), so its pixels read
	// the same as NRGBA or RGBA.
	page := opaqueCopy(src)
	if opt.PenMarks > 0 {
		drawPenMarks(page, opt.PenMarks, penRng)
	}
	if opt.PaperTint != (color.RGBA{}) {
		tint(page, opt.PaperTint)
	}
	bg := opt.Background
	if bg == (color.RGBA{}) {
		bg = color.RGBA{255, 255, 255, 255}
	}
	out := page
	if !isIdentity(H) || w != sb.Dx() || h != sb.Dy() || opt.LensK1 != 0 {
		inv, ok := homography.Invert(H)
		if !ok {
			return nil, H, fmt.Errorf("%w: singular geometry", ErrOptions)
		}
		taps := int(math.Ceil(1 / min(opt.ScaleX, opt.ScaleY, 1)))
		out = warp(page, w, h, inv, opt.LensK1, bg, min(taps, 4))
	}
	if opt.Lighting > 0 {
		light(out, opt.Lighting, lightRng)
	}
	// Grey conversion is linear, so a grey result is converted first and
	// blurred and noised on one channel instead of four.
	var img image.Image = out
	if opt.Grayscale {
		g := toGray(out)
		if opt.BlurPx > 0 {
			blur(g.Pix, g.Stride, g.Rect.Dx(), g.Rect.Dy(), 1, opt.BlurPx)
		}
		if opt.NoiseSD > 0 {
			addNoise(g.Pix, 1, opt.NoiseSD, noiseRng)
		}
		img = g
	} else {
		if opt.BlurPx > 0 {
			blur(out.Pix, out.Stride, out.Rect.Dx(), out.Rect.Dy(), 4, opt.BlurPx)
		}
		if opt.NoiseSD > 0 {
			addNoise(out.Pix, 4, opt.NoiseSD, noiseRng)
		}
	}
	if opt.JPEGQuality > 0 {
		var buf bytes.Buffer
		enc := img
		if !opt.Grayscale {
			// Opaque NRGBA pixels are valid RGBA; the encoder has a fast
			// path for *image.RGBA only.
			enc = &image.RGBA{Pix: out.Pix, Stride: out.Stride, Rect: out.Rect}
		}
		if err := jpeg.Encode(&buf, enc, &jpeg.Options{Quality: opt.JPEGQuality}); err != nil {
			return nil, H, fmt.Errorf("scansim: jpeg: %w", err)
		}
		d, err := jpeg.Decode(&buf)
		if err != nil {
			return nil, H, fmt.Errorf("scansim: jpeg: %w", err)
		}
		img = d
		if opt.Grayscale {
			img = toGray(d)
		} else {
			img = toNRGBA(d)
		}
	}
	if opt.Binarize {
		g := img.(*image.Gray)
		for i, v := range g.Pix {
			if v < 150 {
				g.Pix[i] = 0
			} else {
				g.Pix[i] = 255
			}
		}
	}
	return img, H, nil
}

// Map applies the homography H to the point (x, y).
func Map(H [9]float64, x, y float64) (float64, float64) { return homography.Apply(H, x, y) }

func isIdentity(m [9]float64) bool {
	return m == [9]float64{1, 0, 0, 0, 1, 0, 0, 0, 1}
}

// sheetHomography builds H = T_canvas · P · S · R · T_-centre for a w × h page
// and returns it with the canvas size that holds the whole warped page.
func sheetHomography(w, h int, opt Options, rng *rand.Rand) ([9]float64, int, int) {
	cx, cy := float64(w)/2, float64(h)/2
	m := [9]float64{1, 0, -cx, 0, 1, -cy, 0, 0, 1}
	// The paper lies rotated on the scanner glass or in the fax feeder and
	// is then sampled on the device's fixed grid, which may have different
	// x and y resolutions: rotate first, then scale (H = S·R). Scaling
	// first would shear a rotated fax page.
	// Counter-clockwise on screen (y down): x' = x cos + y sin, y' = −x sin + y cos.
	t := opt.RotationDeg * math.Pi / 180
	m = homography.Mul([9]float64{math.Cos(t), math.Sin(t), 0, -math.Sin(t), math.Cos(t), 0, 0, 0, 1}, m)
	m = homography.Mul([9]float64{opt.ScaleX, 0, 0, 0, opt.ScaleY, 0, 0, 0, 1}, m)
	phi := 2 * math.Pi * rng.Float64()
	if opt.Perspective > 0 {
		// The denominator 1 + g·p changes by ±Perspective between the
		// centre and the farthest page corner along the tilt direction.
		r := 0.0
		for _, c := range [4][2]float64{{0, 0}, {float64(w), 0}, {0, float64(h)}, {float64(w), float64(h)}} {
			x, y := Map(m, c[0], c[1])
			r = max(r, x*math.Cos(phi)+y*math.Sin(phi))
		}
		gx, gy := opt.Perspective*math.Cos(phi)/r, opt.Perspective*math.Sin(phi)/r
		m = homography.Mul([9]float64{1, 0, 0, 0, 1, 0, gx, gy, 1}, m)
	}
	if opt.RotationDeg == 0 && opt.Perspective == 0 && opt.LensK1 >= 0 {
		// Pure scaling: the canvas is the scaled page.
		W, Hh := int(math.Round(float64(w)*opt.ScaleX)), int(math.Round(float64(h)*opt.ScaleY))
		m = homography.Mul([9]float64{1, 0, float64(W) / 2, 0, 1, float64(Hh) / 2, 0, 0, 1}, m)
		return m, max(W, 1), max(Hh, 1)
	}
	minX, minY, maxX, maxY := math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)
	for _, p := range [4][2]float64{{0, 0}, {float64(w), 0}, {0, float64(h)}, {float64(w), float64(h)}} {
		x, y := Map(m, p[0], p[1])
		minX, minY, maxX, maxY = min(minX, x), min(minY, y), max(maxX, x), max(maxY, y)
	}
	// A margin of 2 % of the longer side around the page, more for a
	// pincushion lens warp, which pushes the corners outward by up to
	// |k1| of the half-diagonal.
	margin := (0.02 + 1.2*max(0, -opt.LensK1)) * max(maxX-minX, maxY-minY)
	m = homography.Mul([9]float64{1, 0, margin - minX, 0, 1, margin - minY, 0, 0, 1}, m)
	return m, int(math.Ceil(maxX - minX + 2*margin)), int(math.Ceil(maxY - minY + 2*margin))
}

// warp resamples page onto a w × h canvas: output pixel centre q is moved
// by the lens warp to q' = c + (q − c)(1 + k1·|q − c|²/R²) (c the canvas
// centre, R its half-diagonal), then mapped through inv into the page,
// averaging taps × taps bilinear samples per pixel (anti-aliasing for
// down-scaling).
func warp(page *image.NRGBA, w, h int, inv [9]float64, k1 float64, bg color.RGBA, taps int) *image.NRGBA {
	out := image.NewNRGBA(image.Rect(0, 0, w, h))
	pw, ph := page.Rect.Dx(), page.Rect.Dy()
	cx, cy := float64(w)/2, float64(h)/2
	r2 := cx*cx + cy*cy
	pix, stride := page.Pix, page.Stride
	bgv := [4]float64{float64(bg.R), float64(bg.G), float64(bg.B), float64(bg.A)}
	if taps == 1 {
		warpFast(out, page, inv, k1, bg)
		return out
	}
	nt := float64(taps * taps)
	for y := range h {
		row := out.Pix[y*out.Stride:]
		for x := range w {
			var acc [4]float64
			for ty := range taps {
				for tx := range taps {
					qx := float64(x) + (float64(tx)+0.5)/float64(taps)
					qy := float64(y) + (float64(ty)+0.5)/float64(taps)
					if k1 != 0 {
						dx, dy := qx-cx, qy-cy
						f := 1 + k1*(dx*dx+dy*dy)/r2
						qx, qy = cx+dx*f, cy+dy*f
					}
					d := inv[6]*qx + inv[7]*qy + inv[8]
					px := (inv[0]*qx+inv[1]*qy+inv[2])/d - 0.5
					py := (inv[3]*qx+inv[4]*qy+inv[5])/d - 0.5
					if px < -0.5 || py < -0.5 || px > float64(pw)-0.5 || py > float64(ph)-0.5 {
						for c := range 4 {
							acc[c] += bgv[c]
						}
						continue
					}
					x0, y0 := int(math.Floor(px)), int(math.Floor(py))
					fx, fy := px-float64(x0), py-float64(y0)
					x1, y1 := min(x0+1, pw-1), min(y0+1, ph-1)
					x0, y0 = max(x0, 0), max(y0, 0)
					i00, i01 := y0*stride+4*x0, y0*stride+4*x1
					i10, i11 := y1*stride+4*x0, y1*stride+4*x1
					for c := range 4 {
						top := float64(pix[i00+c])*(1-fx) + float64(pix[i01+c])*fx
						bot := float64(pix[i10+c])*(1-fx) + float64(pix[i11+c])*fx
						acc[c] += top*(1-fy) + bot*fy
					}
				}
			}
			o := row[4*x : 4*x+4 : 4*x+4]
			for c := range 4 {
				o[c] = uint8(acc[c]/nt + 0.5)
			}
		}
	}
	return out
}

// warpFast is warp with one sample per output pixel, using 8-bit
// fixed-point bilinear weights.
func warpFast(out, page *image.NRGBA, inv [9]float64, k1 float64, bg color.RGBA) {
	w, h := out.Rect.Dx(), out.Rect.Dy()
	pw, ph := page.Rect.Dx(), page.Rect.Dy()
	cx, cy := float64(w)/2, float64(h)/2
	r2 := cx*cx + cy*cy
	pix, stride := page.Pix, page.Stride
	maxX, maxY := float64(pw)-0.5, float64(ph)-0.5
	for y := range h {
		row := out.Pix[y*out.Stride : y*out.Stride+4*w]
		// Without a lens warp the homogeneous source coordinates are linear
		// along the row and are stepped instead of recomputed.
		qy := float64(y) + 0.5
		nx, ny, nd := inv[0]*0.5+inv[1]*qy+inv[2], inv[3]*0.5+inv[4]*qy+inv[5], inv[6]*0.5+inv[7]*qy+inv[8]
		for x := range w {
			var px, py float64
			if k1 != 0 {
				dx, dy := float64(x)+0.5-cx, qy-cy
				f := 1 + k1*(dx*dx+dy*dy)/r2
				lx, ly := cx+dx*f, cy+dy*f
				d := inv[6]*lx + inv[7]*ly + inv[8]
				px = (inv[0]*lx+inv[1]*ly+inv[2])/d - 0.5
				py = (inv[3]*lx+inv[4]*ly+inv[5])/d - 0.5
			} else {
				id := 1 / nd
				px, py = nx*id-0.5, ny*id-0.5
				nx, ny, nd = nx+inv[0], ny+inv[3], nd+inv[6]
			}
			o := row[4*x : 4*x+4 : 4*x+4]
			if px < -0.5 || py < -0.5 || px > maxX || py > maxY {
				o[0], o[1], o[2], o[3] = bg.R, bg.G, bg.B, bg.A
				continue
			}
			fx0, fy0 := math.Floor(px), math.Floor(py)
			x0, y0 := int(fx0), int(fy0)
			ax, ay := uint32((px-fx0)*256+0.5), uint32((py-fy0)*256+0.5)
			x1, y1 := min(x0+1, pw-1), min(y0+1, ph-1)
			x0, y0 = max(x0, 0), max(y0, 0)
			a := pix[y0*stride+4*x0 : y0*stride+4*x0+4 : y0*stride+4*x0+4]
			b := pix[y0*stride+4*x1 : y0*stride+4*x1+4 : y0*stride+4*x1+4]
			c := pix[y1*stride+4*x0 : y1*stride+4*x0+4 : y1*stride+4*x0+4]
			e := pix[y1*stride+4*x1 : y1*stride+4*x1+4 : y1*stride+4*x1+4]
			w00, w01 := (256-ax)*(256-ay), ax*(256-ay)
			w10, w11 := (256-ax)*ay, ax*ay
			for k := range 4 {
				o[k] = uint8((uint32(a[k])*w00 + uint32(b[k])*w01 + uint32(c[k])*w10 + uint32(e[k])*w11 + 32768) >> 16)
			}
		}
	}
}

// tint multiplies every pixel by t/255.
func tint(img *image.NRGBA, t color.RGBA) {
	f := [3]float64{float64(t.R) / 255, float64(t.G) / 255, float64(t.B) / 255}
	for i := 0; i+3 < len(img.Pix); i += 4 {
		for c := range 3 {
			img.Pix[i+c] = uint8(float64(img.Pix[i+c])*f[c] + 0.5)
		}
	}
}

// light darkens img by a linear lamp gradient in a random direction (up to
// 35 %·strength at the far side) and a radial vignette (up to 30 %·strength
// in the corners).
func light(img *image.NRGBA, strength float64, rng *rand.Rand) {
	w, h := img.Rect.Dx(), img.Rect.Dy()
	phi := 2 * math.Pi * rng.Float64()
	ux, uy := math.Cos(phi), math.Sin(phi)
	cx, cy := float64(w)/2, float64(h)/2
	span := math.Abs(ux)*cx + math.Abs(uy)*cy
	r2 := cx*cx + cy*cy
	for y := range h {
		row := img.Pix[y*img.Stride:]
		dy := float64(y) + 0.5 - cy
		for x := range w {
			dx := float64(x) + 0.5 - cx
			g := 0.5 * (1 + (dx*ux+dy*uy)/span) // 0 near the lamp, 1 far away
			f := 1 - strength*(0.35*g+0.3*(dx*dx+dy*dy)/r2)
			for c := range 3 {
				row[4*x+c] = uint8(float64(row[4*x+c])*f + 0.5)
			}
		}
	}
}

// addNoise adds Gaussian noise of SD sd (grey levels) to the colour
// channels of interleaved pixels with ch channels (1: grey; 4: RGB get
// independent noise, alpha is left alone). Deviates come from a table of
// 65 536 normal draws indexed by 16-bit slices of random words, four per
// rng call: much faster than one NormFloat64 per value and, at 8-bit
// output, indistinguishable.
func addNoise(pix []byte, ch int, sd float64, rng *rand.Rand) {
	var table [1 << 16]int16
	for i := range table {
		table[i] = int16(max(-32767, min(32767, math.Round(sd*rng.NormFloat64()*64))))
	}
	var word uint64
	left := 0
	nc := min(ch, 3)
	for i := 0; i < len(pix); i += ch {
		for c := range nc {
			if left == 0 {
				word, left = rng.Uint64(), 4
			}
			v := int32(pix[i+c])<<6 + int32(table[word&0xffff])
			word >>= 16
			left--
			pix[i+c] = uint8(min(255, max(0, (v+32)>>6)))
		}
	}
}

// blur convolves an interleaved 8-bit image (ch channels per pixel, rows
// stride bytes apart) in place with a Gaussian of SD sigma px, truncated at
// 3σ, separably (rows, then columns), repeating edge pixels. The vertical
// pass keeps a ring of the 2r+1 source rows it needs.
func blur(pix []byte, stride, w, h, ch int, sigma float64) {
	r := int(math.Ceil(3 * sigma))
	k := make([]float32, 2*r+1)
	sum := 0.0
	for i := -r; i <= r; i++ {
		v := math.Exp(-float64(i*i) / (2 * sigma * sigma))
		k[i+r] = float32(v)
		sum += v
	}
	for i := range k {
		k[i] /= float32(sum)
	}
	n := w * ch
	// Horizontal pass: one channel at a time through a padded line so the
	// inner loop runs over contiguous memory. Alpha (channel 3) is opaque
	// throughout and skipped.
	line := make([]float32, w+2*r)
	for y := range h {
		row := pix[y*stride : y*stride+n]
		for c := range min(ch, 3) {
			for x := range line {
				line[x] = float32(row[min(max(x-r, 0), w-1)*ch+c])
			}
			for x := range w {
				seg := line[x : x+len(k)]
				var acc float32
				for i, kv := range k {
					acc += kv * seg[i]
				}
				row[x*ch+c] = uint8(acc + 0.5)
			}
		}
	}
	ring := make([][]byte, 2*r+1)
	for i := range ring {
		ring[i] = make([]byte, n)
	}
	loaded := -1
	load := func(j int) {
		for loaded < j {
			loaded++
			copy(ring[loaded%len(ring)], pix[loaded*stride:loaded*stride+n])
		}
	}
	acc := make([]float32, n)
	for y := range h {
		load(min(y+r, h-1))
		clear(acc)
		for i, kv := range k {
			j := min(max(y+i-r, 0), h-1)
			src := ring[j%len(ring)]
			for x, v := range src {
				acc[x] += kv * float32(v)
			}
		}
		row := pix[y*stride : y*stride+n]
		for x, v := range acc {
			row[x] = uint8(v + 0.5)
		}
	}
}

// opaqueCopy returns src composited over white as a new NRGBA image at the
// origin, copying rows directly for *image.Gray and opaque *image.NRGBA and
// *image.RGBA sources.
func opaqueCopy(src image.Image) *image.NRGBA {
	b := src.Bounds()
	page := image.NewNRGBA(image.Rect(0, 0, b.Dx(), b.Dy()))
	var pix []byte
	var stride int
	switch s := src.(type) {
	case *image.Gray:
		for y := range b.Dy() {
			in := s.Pix[s.PixOffset(b.Min.X, b.Min.Y+y):]
			o := page.Pix[y*page.Stride:]
			for x := range b.Dx() {
				v := in[x]
				o[4*x], o[4*x+1], o[4*x+2], o[4*x+3] = v, v, v, 255
			}
		}
		return page
	case *image.NRGBA:
		pix, stride = s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride
	case *image.RGBA:
		pix, stride = s.Pix[s.PixOffset(b.Min.X, b.Min.Y):], s.Stride
	}
	if pix != nil {
		opaque := true
		for y := 0; y < b.Dy() && opaque; y++ {
			row := pix[y*stride : y*stride+4*b.Dx()]
			for x := 3; x < len(row); x += 4 {
				if row[x] != 255 {
					opaque = false
					break
				}
			}
		}
		if opaque {
			for y := range b.Dy() {
				copy(page.Pix[y*page.Stride:(y+1)*page.Stride], pix[y*stride:])
			}
			return page
		}
	}
	for i := range page.Pix {
		page.Pix[i] = 255
	}
	draw.Draw(page, page.Bounds(), src, b.Min, draw.Over)
	return page
}

// toGray converts to grey with Rec. 601 luma; NRGBA and YCbCr/Gray inputs
// take flat-pixel fast paths.
func toGray(src image.Image) *image.Gray {
	b := src.Bounds()
	g := image.NewGray(image.Rect(0, 0, b.Dx(), b.Dy()))
	switch s := src.(type) {
	case *image.Gray:
		for y := range b.Dy() {
			copy(g.Pix[y*g.Stride:y*g.Stride+b.Dx()], s.Pix[s.PixOffset(b.Min.X, b.Min.Y+y):])
		}
	case *image.NRGBA:
		for y := range b.Dy() {
			in := s.Pix[y*s.Stride:]
			o := g.Pix[y*g.Stride:]
			for x := range b.Dx() {
				r, gg, bb := float64(in[4*x]), float64(in[4*x+1]), float64(in[4*x+2])
				o[x] = uint8(0.299*r + 0.587*gg + 0.114*bb + 0.5)
			}
		}
	case *image.YCbCr:
		for y := range b.Dy() {
			copy(g.Pix[y*g.Stride:y*g.Stride+b.Dx()], s.Y[s.YOffset(b.Min.X, b.Min.Y+y):])
		}
	default:
		draw.Draw(g, g.Bounds(), src, b.Min, draw.Src)
	}
	return g
}

// toNRGBA converts a decoded JPEG to opaque NRGBA, with a flat-pixel fast
// path for *image.YCbCr (JFIF conversion, color.YCbCrToRGB).
func toNRGBA(src image.Image) *image.NRGBA {
	b := src.Bounds()
	n := image.NewNRGBA(image.Rect(0, 0, b.Dx(), b.Dy()))
	s, ok := src.(*image.YCbCr)
	if !ok {
		draw.Draw(n, n.Bounds(), src, b.Min, draw.Src)
		return n
	}
	for y := range b.Dy() {
		row := n.Pix[y*n.Stride:]
		for x := range b.Dx() {
			yi := s.YOffset(b.Min.X+x, b.Min.Y+y)
			ci := s.COffset(b.Min.X+x, b.Min.Y+y)
			r, g, bb := color.YCbCrToRGB(s.Y[yi], s.Cb[ci], s.Cr[ci])
			row[4*x], row[4*x+1], row[4*x+2], row[4*x+3] = r, g, bb, 255
		}
	}
	return n
}
