package scansim

import (
	"errors"
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"testing"
)

// dotPage is a white w × h page with 5 × 5 px black squares centred on pts
// (continuous coordinates, pixel centres at +0.5).
func dotPage(w, h int, pts [][2]float64) *image.NRGBA {
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	for i := range img.Pix {
		img.Pix[i] = 255
	}
	for _, p := range pts {
		x0, y0 := int(p[0])-2, int(p[1])-2 // centre of pixels x0..x0+4 is p
		for y := y0; y < y0+5; y++ {
			for x := x0; x < x0+5; x++ {
				img.SetNRGBA(x, y, color.NRGBA{0, 0, 0, 255})
			}
		}
	}
	return img
}

// blobs returns the darkness-weighted centroids (continuous coordinates)
// of the 4-connected dark regions of img.
func blobs(img image.Image) [][2]float64 {
	b := img.Bounds()
	w, h := b.Dx(), b.Dy()
	dark := make([]float64, w*h)
	for y := range h {
		for x := range w {
			r, g, bb, _ := img.At(b.Min.X+x, b.Min.Y+y).RGBA()
			v := 1 - float64(r+g+bb)/(3*65535)
			if v > 0.25 {
				dark[y*w+x] = v
			}
		}
	}
	seen := make([]bool, w*h)
	var out [][2]float64
	for i := range dark {
		if dark[i] == 0 || seen[i] {
			continue
		}
		var sx, sy, sw float64
		stack := []int{i}
		seen[i] = true
		for len(stack) > 0 {
			j := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			x, y := j%w, j/w
			sx += dark[j] * (float64(x) + 0.5)
			sy += dark[j] * (float64(y) + 0.5)
			sw += dark[j]
			for _, n := range [4]int{j - 1, j + 1, j - w, j + w} {
				if n >= 0 && n < w*h && !seen[n] && dark[n] > 0 && (n/w == y || n%w == x) {
					seen[n] = true
					stack = append(stack, n)
				}
			}
		}
		out = append(out, [2]float64{sx / sw, sy / sw})
	}
	return out
}

// dotGrid returns the centres (on pixel centres) of a 3 × 3 grid of dots
// on a w × h page, at the fractions m, 0.5 and 1 − m of each side.
func dotGrid(w, h int, m float64) [][2]float64 {
	var pts [][2]float64
	for _, fx := range []float64{m, 0.5, 1 - m} {
		for _, fy := range []float64{m, 0.5, 1 - m} {
			pts = append(pts, [2]float64{math.Floor(fx*float64(w)) + 0.5, math.Floor(fy*float64(h)) + 0.5})
		}
	}
	return pts
}

// worstDotError returns the largest distance (px) between where H puts a
// printed dot of pts and the nearest dot found in the output, got.
func worstDotError(H [9]float64, pts, got [][2]float64) float64 {
	worst := 0.0
	for _, p := range pts {
		x, y := Map(H, p[0], p[1])
		best := math.Inf(1)
		for _, g := range got {
			best = min(best, math.Hypot(g[0]-x, g[1]-y))
		}
		worst = max(worst, best)
	}
	return worst
}

// H must carry printed points to where they land in the output, within
// 1 px (measured from the dots' centroids, not from H).
func TestHomographyMapsPoints(t *testing.T) {
	w, h := 600, 400
	pts := dotGrid(w, h, 0.1)
	src := dotPage(w, h, pts)
	cases := []Options{
		{},
		{RotationDeg: 7},
		{RotationDeg: -3, ScaleX: 0.8, ScaleY: 0.6},
		{ScaleX: 1.5, ScaleY: 1.5},
		{Perspective: 0.15, RotationDeg: 5, Seed: 3},
		{Perspective: 0.1, Seed: 11, BlurPx: 1},
	}
	for _, o := range cases {
		out, H, err := Apply(src, o)
		if err != nil {
			t.Fatalf("%+v: %v", o, err)
		}
		got := blobs(out)
		if len(got) != len(pts) {
			t.Errorf("%+v: found %d dots, want %d", o, len(got), len(pts))
			continue
		}
		worst := worstDotError(H, pts, got)
		t.Logf("rot %g scale %g×%g persp %g: worst dot error %.3f px", o.RotationDeg, o.ScaleX, o.ScaleY, o.Perspective, worst)
		if worst > 1 {
			t.Errorf("%+v: dot %.2f px from H's prediction", o, worst)
		}
		// Perspective: the projective denominator spans exactly
		// 1 ± Perspective over the page corners.
		if o.Perspective > 0 {
			lo, hi := math.Inf(1), math.Inf(-1)
			for _, c := range [4][2]float64{{0, 0}, {float64(w), 0}, {0, float64(h)}, {float64(w), float64(h)}} {
				d := (H[6]*c[0] + H[7]*c[1] + H[8]) / (H[6]*float64(w)/2 + H[7]*float64(h)/2 + H[8])
				lo, hi = min(lo, d), max(hi, d)
			}
			if math.Abs(hi-1-o.Perspective) > 1e-9 || lo < 1-o.Perspective-1e-9 {
				t.Errorf("%+v: denominator spans %.4f–%.4f", o, lo, hi)
			}
		}
		// The whole page stays on the canvas.
		ob := out.Bounds()
		for _, c := range [4][2]float64{{0, 0}, {float64(w), 0}, {0, float64(h)}, {float64(w), float64(h)}} {
			x, y := Map(H, c[0], c[1])
			if x < -0.5 || y < -0.5 || x > float64(ob.Dx())+0.5 || y > float64(ob.Dy())+0.5 {
				t.Errorf("%+v: page corner %v maps off the canvas to (%.1f, %.1f)", o, c, x, y)
			}
		}
	}
}

// The presets without a lens warp keep H exact through tint, blur, noise,
// JPEG and binarisation: dots land within 1 px of H's prediction.
func TestPresetsKeepGeometry(t *testing.T) {
	w, h := 900, 600
	pts := dotGrid(w, h, 0.15)
	src := dotPage(w, h, pts)
	for _, name := range []string{"scan", "gray", "fax", "lowres", "penmarks"} {
		o, err := Preset(name, 300, 21)
		if err != nil {
			t.Fatal(err)
		}
		o.PenMarks = 0 // strokes would add blobs of their own
		out, H, err := Apply(src, o)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		got := blobs(out)
		worst := worstDotError(H, pts, got)
		t.Logf("%s: %d blobs, worst dot error %.3f px", name, len(got), worst)
		if len(got) != len(pts) || worst > 1 {
			t.Errorf("%s: %d blobs (want %d), worst error %.2f px", name, len(got), len(pts), worst)
		}
	}
}

func TestBinarizeIsTwoLevel(t *testing.T) {
	src := dotPage(300, 200, [][2]float64{{50.5, 50.5}, {150.5, 100.5}})
	o, err := Preset("fax", 300, 4)
	if err != nil {
		t.Fatal(err)
	}
	out, _, err := Apply(src, o)
	if err != nil {
		t.Fatal(err)
	}
	g, ok := out.(*image.Gray)
	if !ok {
		t.Fatalf("fax output is %T, want *image.Gray", out)
	}
	var n0, n255 int
	for _, v := range g.Pix {
		switch v {
		case 0:
			n0++
		case 255:
			n255++
		default:
			t.Fatalf("binarised pixel value %d", v)
		}
	}
	if n0 == 0 || n255 == 0 {
		t.Errorf("binarised output has %d black and %d white pixels", n0, n255)
	}
	// Fax resolutions 204 dpi across and 98 or 196 dpi down (ITU-T T.4).
	if math.Abs(o.ScaleX-204.0/300) > 1e-12 || (math.Abs(o.ScaleY-98.0/300) > 1e-12 && math.Abs(o.ScaleY-196.0/300) > 1e-12) {
		t.Errorf("fax scales %g × %g", o.ScaleX, o.ScaleY)
	}
}

func TestPresetsDeterministic(t *testing.T) {
	src := dotPage(240, 160, [][2]float64{{40.5, 40.5}, {200.5, 120.5}})
	for _, name := range PresetNames() {
		a, err := Preset(name, 300, 9)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		b, _ := Preset(name, 300, 9)
		if a != b {
			t.Errorf("%s: options differ for the same seed", name)
		}
		ia, ha, err := Apply(src, a)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		ib, hb, _ := Apply(src, b)
		if ha != hb || !samePixels(ia, ib) {
			t.Errorf("%s: output differs for the same seed", name)
		}
		if name != "clean" {
			c, _ := Preset(name, 300, 10)
			if c == a {
				t.Errorf("%s: seeds 9 and 10 give the same options", name)
			}
		}
	}
}

func samePixels(a, b image.Image) bool {
	if a.Bounds() != b.Bounds() {
		return false
	}
	switch x := a.(type) {
	case *image.Gray:
		y, ok := b.(*image.Gray)
		return ok && string(x.Pix) == string(y.Pix)
	case *image.NRGBA:
		y, ok := b.(*image.NRGBA)
		return ok && string(x.Pix) == string(y.Pix)
	}
	return false
}

func TestBadOptions(t *testing.T) {
	src := dotPage(50, 50, nil)
	bad := map[string]Options{
		"rotation":    {RotationDeg: 90},
		"scale":       {ScaleX: -1},
		"perspective": {Perspective: 0.7},
		"lens":        {LensK1: 1},
		"lighting":    {Lighting: 2},
		"blur":        {BlurPx: -1},
		"noise NaN":   {NoiseSD: math.NaN()},
		"jpeg":        {JPEGQuality: 101},
		"pen":         {PenMarks: -2},
	}
	for name, o := range bad {
		if _, _, err := Apply(src, o); !errors.Is(err, ErrOptions) {
			t.Errorf("%s: err = %v, want ErrOptions", name, err)
		}
	}
	if _, _, err := Apply(image.NewGray(image.Rect(0, 0, 0, 0)), Options{}); !errors.Is(err, ErrOptions) {
		t.Errorf("empty image: err = %v", err)
	}
	if _, _, err := Apply(nil, Options{}); !errors.Is(err, ErrOptions) {
		t.Errorf("nil image: err = %v", err)
	}
	if _, err := Preset("watercolour", 300, 1); !errors.Is(err, ErrOptions) {
		t.Errorf("unknown preset: err = %v", err)
	}
	if _, err := Preset("scan", 0, 1); !errors.Is(err, ErrOptions) {
		t.Errorf("zero dpi: err = %v", err)
	}
}

// The clean preset leaves pixels untouched and H the identity.
func TestCleanIsIdentity(t *testing.T) {
	src := dotPage(120, 80, [][2]float64{{30.5, 30.5}})
	o, _ := Preset("clean", 300, 1)
	out, H, err := Apply(src, o)
	if err != nil {
		t.Fatal(err)
	}
	if H != [9]float64{1, 0, 0, 0, 1, 0, 0, 0, 1} || !samePixels(src, out) {
		t.Error("clean preset changed the image")
	}
}

// A pincushion warp enlarges the canvas so the page corners stay visible.
func TestPincushionKeepsCorners(t *testing.T) {
	w, h := 400, 300
	pts := [][2]float64{{4.5, 4.5}, {395.5, 4.5}, {4.5, 295.5}, {395.5, 295.5}}
	for _, o := range []Options{{LensK1: -0.3}, {LensK1: -0.05, RotationDeg: 8}, {LensK1: -0.04, Perspective: 0.15, Seed: 2}} {
		out, _, err := Apply(dotPage(w, h, pts), o)
		if err != nil {
			t.Fatal(err)
		}
		if n := len(blobs(out)); n != 4 {
			t.Errorf("%+v: %d of 4 corner dots visible", o, n)
		}
	}
}

// Lens warp leaves the canvas centre fixed and moves corners inward for
// barrel distortion (positive k1 samples farther out, so content shrinks).
func TestLensWarp(t *testing.T) {
	w, h := 400, 300
	pts := [][2]float64{{200.5, 150.5}, {40.5, 40.5}}
	out, H, err := Apply(dotPage(w, h, pts), Options{LensK1: 0.1})
	if err != nil {
		t.Fatal(err)
	}
	got := blobs(out)
	if len(got) != 2 {
		t.Fatalf("found %d dots", len(got))
	}
	cx, cy := Map(H, pts[0][0], pts[0][1])
	var centre, corner [2]float64
	for _, g := range got {
		if math.Hypot(g[0]-cx, g[1]-cy) < 3 {
			centre = g
		} else {
			corner = g
		}
	}
	if math.Hypot(centre[0]-cx, centre[1]-cy) > 0.5 {
		t.Errorf("centre dot moved to %v", centre)
	}
	// Pre-warp position q' = c + (q − c)(1 + k1 r²/R²); solve for q by
	// fixed-point iteration and compare.
	qx, qy := pts[1][0], pts[1][1]
	R2 := float64(w*w+h*h) / 4
	for range 50 {
		f := 1 + 0.1*((qx-200)*(qx-200)+(qy-150)*(qy-150))/R2
		qx, qy = 200+(pts[1][0]-200)/f, 150+(pts[1][1]-150)/f
	}
	if d := math.Hypot(corner[0]-qx, corner[1]-qy); d > 1 {
		t.Errorf("corner dot at %v, model says (%.1f, %.1f)", corner, qx, qy)
	}
}

func BenchmarkPhotoA4(b *testing.B) { benchPresetA4(b, "photo") }

func BenchmarkScanA4(b *testing.B) { benchPresetA4(b, "scan") }

// benchPresetA4 applies preset name (seed 1) to a blank landscape A4 page
// at 300 dpi (3508 × 2480 px).
func benchPresetA4(b *testing.B, name string) {
	b.Helper()
	src := dotPage(3508, 2480, nil)
	o, _ := Preset(name, 300, 1)
	for b.Loop() {
		if _, _, err := Apply(src, o); err != nil {
			b.Fatal(err)
		}
	}
}

// Sensor noise has the requested SD on a flat mid-grey page (the lookup
// table of normal deviates must not distort the distribution).
func TestNoiseSD(t *testing.T) {
	src := image.NewNRGBA(image.Rect(0, 0, 400, 300))
	for i := range src.Pix {
		src.Pix[i] = 128
		if i%4 == 3 {
			src.Pix[i] = 255
		}
	}
	for _, sd := range []float64{3, 10} {
		out, _, err := Apply(src, Options{NoiseSD: sd, Seed: 2})
		if err != nil {
			t.Fatal(err)
		}
		pix := out.(*image.NRGBA).Pix
		var s, s2, n float64
		for i, v := range pix {
			if i%4 == 3 {
				continue
			}
			d := float64(v) - 128
			s += d
			s2 += d * d
			n++
		}
		mean := s / n
		got := math.Sqrt(s2/n - mean*mean)
		// Rounding to 8 bits adds 1/12 grey level² of variance.
		want := math.Sqrt(sd*sd + 1.0/12)
		if math.Abs(got-want) > 0.03*want || math.Abs(mean) > 0.1 {
			t.Errorf("noise SD %g: got SD %.3f mean %.3f, want SD %.3f", sd, got, mean, want)
		}
	}
}

// Grey and translucent sources are read correctly: grey copies to equal
// RGB, transparent pixels become white paper.
func TestSourceTypes(t *testing.T) {
	g := image.NewGray(image.Rect(10, 20, 14, 22)) // non-zero origin
	g.SetGray(11, 21, color.Gray{Y: 40})
	out, _, err := Apply(g, Options{})
	if err != nil {
		t.Fatal(err)
	}
	n := out.(*image.NRGBA)
	if c := n.NRGBAAt(1, 1); c != (color.NRGBA{40, 40, 40, 255}) || n.NRGBAAt(0, 0) != (color.NRGBA{0, 0, 0, 255}) {
		t.Errorf("grey source: %v %v", n.NRGBAAt(1, 1), n.NRGBAAt(0, 0))
	}
	tr := image.NewNRGBA(image.Rect(0, 0, 2, 1)) // fully transparent
	out, _, _ = Apply(tr, Options{})
	if c := out.(*image.NRGBA).NRGBAAt(0, 0); c != (color.NRGBA{255, 255, 255, 255}) {
		t.Errorf("transparent source became %v, want white", c)
	}
}

// The blur is a Gaussian of the requested SD in both directions: a one-
// pixel line spreads into a profile whose variance, sampled at pixel
// centres, is that of the sampled kernel, within 1 % of σ² for σ ≥ 0.7
// (e.g. 0.488 for σ = 0.7), on colour and grey outputs alike; 8-bit
// rounding costs a few per cent more.
func TestBlurSigma(t *testing.T) {
	const w, h = 120, 120
	src := image.NewNRGBA(image.Rect(0, 0, w, h))
	for i := range src.Pix {
		src.Pix[i] = 255
	}
	for k := range w {
		src.SetNRGBA(60, k, color.NRGBA{0, 0, 0, 255}) // vertical line at x = 60
		src.SetNRGBA(k, 30, color.NRGBA{0, 0, 0, 255}) // horizontal line at y = 30
	}
	for _, sigma := range []float64{0.7, 2} {
		for _, grey := range []bool{false, true} {
			out, _, err := Apply(src, Options{BlurPx: sigma, Grayscale: grey})
			if err != nil {
				t.Fatal(err)
			}
			dark := func(x, y int) float64 {
				r, _, _, _ := out.At(x, y).RGBA()
				return 1 - float64(r)/65535
			}
			variance := func(along func(i int) float64, centre int) float64 {
				var s, s2 float64
				for i := centre - 15; i <= centre+15; i++ {
					d := along(i)
					s += d
					s2 += d * float64((i-centre)*(i-centre))
				}
				return s2 / s
			}
			vx := variance(func(i int) float64 { return dark(i, 90) }, 60)
			vy := variance(func(i int) float64 { return dark(20, i) }, 30)
			want := sigma * sigma
			t.Logf("σ %g grey %v: variances %.3f, %.3f", sigma, grey, vx, vy)
			if math.Abs(vx-want) > 0.05*want || math.Abs(vy-want) > 0.05*want {
				t.Errorf("σ %g grey %v: variances %.3f (x) and %.3f (y), want %.3f", sigma, grey, vx, vy, want)
			}
		}
	}
}

// Random valid options on small and degenerate pages never panic and
// always return an image that holds the mapped page centre.
func TestRandomOptionsRobust(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	u := func(a, b float64) float64 { return a + (b-a)*rng.Float64() }
	for i := range 150 {
		w, h := 1+rng.IntN(60), 1+rng.IntN(40)
		o := Options{
			RotationDeg: u(-45, 45), ScaleX: u(0.05, 4), ScaleY: u(0.05, 4),
			Perspective: u(0, 0.49) * float64(rng.IntN(2)), LensK1: u(-0.3, 0.3) * float64(rng.IntN(2)),
			Lighting: u(0, 1), BlurPx: u(0, 5), NoiseSD: u(0, 50), JPEGQuality: rng.IntN(101),
			Grayscale: rng.IntN(2) == 0, Binarize: rng.IntN(4) == 0, PenMarks: rng.IntN(4),
			PaperTint: color.RGBA{uint8(rng.IntN(256)), 200, 100, 255}, Seed: rng.Uint64(),
		}
		out, H, err := Apply(dotPage(w, h, nil), o)
		if err != nil {
			t.Fatalf("case %d %dx%d %+v: %v", i, w, h, o, err)
		}
		x, y := Map(H, float64(w)/2, float64(h)/2)
		b := out.Bounds()
		if b.Empty() || x < 0 || y < 0 || x > float64(b.Dx()) || y > float64(b.Dy()) {
			t.Errorf("case %d: centre maps to (%.1f, %.1f) on a %v canvas", i, x, y, b)
		}
	}
}

// Preset parameters stay within the documented ranges for many seeds and
// resolutions.
func TestPresetRanges(t *testing.T) {
	for seed := range uint64(200) {
		dpi := []float64{150, 200, 300, 600}[seed%4]
		k := dpi / 300
		get := func(name string) Options {
			o, err := Preset(name, dpi, seed)
			if err != nil {
				t.Fatal(err)
			}
			if err := o.validate(); err != nil {
				t.Fatalf("%s seed %d: %v", name, seed, err)
			}
			return o
		}
		for _, name := range []string{"scan", "gray", "overlap", "penmarks"} {
			o := get(name)
			if math.Abs(o.RotationDeg) > 3 || o.BlurPx < 0.3*k || o.BlurPx > 0.8*k || o.JPEGQuality < 75 || o.JPEGQuality > 92 {
				t.Errorf("%s seed %d: %+v", name, seed, o)
			}
			if (name == "penmarks") != (o.PenMarks >= 3 && o.PenMarks <= 8) || (name == "gray") != o.Grayscale {
				t.Errorf("%s seed %d: pen marks %d, grey %v", name, seed, o.PenMarks, o.Grayscale)
			}
		}
		if o := get("fax"); math.Abs(o.RotationDeg) > 2 || !o.Binarize || math.Abs(o.ScaleX*dpi-204) > 1e-9 || (math.Abs(o.ScaleY*dpi-98) > 1e-9 && math.Abs(o.ScaleY*dpi-196) > 1e-9) {
			t.Errorf("fax seed %d at %g dpi: %+v", seed, dpi, o)
		}
		if o := get("photo"); math.Abs(o.RotationDeg) > 10 || o.Perspective < 0.04 || o.Perspective > 0.15 ||
			math.Abs(o.LensK1) < 0.01 || math.Abs(o.LensK1) > 0.04 || o.Lighting < 0.3 || o.Lighting > 0.8 || o.Background == (color.RGBA{}) {
			t.Errorf("photo seed %d: %+v", seed, o)
		}
		if o := get("lowres"); o.ScaleX != o.ScaleY || o.ScaleX*dpi < 100 || o.ScaleX*dpi > 150 {
			t.Errorf("lowres seed %d at %g dpi: scale %g", seed, dpi, o.ScaleX)
		}
	}
}

// Grey conversion uses the ITU-R BT.601 luma weights 0.299, 0.587, 0.114.
func TestGreyLuma(t *testing.T) {
	cases := []struct {
		c    color.NRGBA
		want uint8
	}{
		{color.NRGBA{255, 0, 0, 255}, 76},  // 0.299·255 = 76.2
		{color.NRGBA{0, 255, 0, 255}, 150}, // 0.587·255 = 149.7
		{color.NRGBA{0, 0, 255, 255}, 29},  // 0.114·255 = 29.1
		{color.NRGBA{240, 150, 150, 255}, 177},
		{color.NRGBA{255, 255, 255, 255}, 255},
	}
	for _, c := range cases {
		src := image.NewNRGBA(image.Rect(0, 0, 1, 1))
		src.SetNRGBA(0, 0, c.c)
		out, _, err := Apply(src, Options{Grayscale: true})
		if err != nil {
			t.Fatal(err)
		}
		if got := out.(*image.Gray).Pix[0]; got != c.want {
			t.Errorf("%v → %d, want %d", c.c, got, c.want)
		}
	}
}

// An output canvas beyond the pixel budget is refused before allocation.
func TestCanvasBudget(t *testing.T) {
	src := image.NewGray(image.Rect(0, 0, 4000, 4000))
	if _, _, err := Apply(src, Options{ScaleX: 4, ScaleY: 4}); !errors.Is(err, ErrOptions) {
		t.Errorf("16 000 × 16 000 px canvas: err = %v, want ErrOptions", err)
	}
}
