package scansim

import (
	"fmt"
	"image/color"
	"math/rand/v2"
)

var presetNames = []string{"clean", "scan", "gray", "fax", "photo", "lowres", "penmarks", "overlap"}

// PresetNames lists the names Preset accepts.
func PresetNames() []string { return append([]string(nil), presetNames...) }

// Preset returns the options of a named evaluation condition for a page
// rendered at dpi dots per inch, with random parameters drawn from the
// ranges below (deterministic given seed):
//
//   - clean: unchanged.
//   - scan: colour, skew within ±3°, yellowish tint, blur σ 0.3–0.8 px
//     (at 300 dpi), noise SD 2–5, JPEG quality 75–92.
//   - gray: scan, converted to grey.
//   - fax: 204 dpi across and 98 or 196 dpi down the page (ITU-T T.4),
//     skew within ±2°, slight blur and noise, binarised.
//   - photo: perspective tilt 0.04–0.15, skew within ±10°, lighting
//     0.3–0.8, lens k1 ±0.01–0.04, blur σ 0.8–1.8 px, noise SD 3–8, JPEG
//     quality 70–90, on a desk-coloured background.
//   - lowres: resampled to 100–150 dpi, mild blur, JPEG quality 85.
//   - penmarks: scan with 3–8 ballpoint strokes.
//   - overlap: same as scan (the renderer makes the amplitudes large).
func Preset(name string, dpi float64, seed uint64) (Options, error) {
	if !(dpi >= 50 && dpi <= 2400) {
		return Options{}, fmt.Errorf("%w: dpi %g outside [50, 2400]", ErrOptions, dpi)
	}
	rng := rand.New(rand.NewPCG(seed, seed^0x70e5e7))
	u := func(a, b float64) float64 { return a + (b-a)*rng.Float64() }
	k := dpi / 300 // blur and pen sizes are given at 300 dpi
	scan := func() Options {
		t := u(0, 1)
		return Options{
			RotationDeg: u(-3, 3),
			PaperTint:   color.RGBA{255, uint8(250 - 8*t), uint8(240 - 25*t), 255},
			BlurPx:      u(0.3, 0.8) * k,
			NoiseSD:     u(2, 5),
			JPEGQuality: 75 + rng.IntN(18),
			Seed:        rng.Uint64(),
		}
	}
	var o Options
	switch name {
	case "clean":
		o = Options{Seed: rng.Uint64()}
	case "scan", "overlap":
		o = scan()
	case "gray":
		o = scan()
		o.Grayscale = true
	case "fax":
		down := 98.0
		if rng.IntN(2) == 0 {
			down = 196
		}
		o = Options{
			RotationDeg: u(-2, 2),
			ScaleX:      204 / dpi,
			ScaleY:      down / dpi,
			BlurPx:      0.4,
			NoiseSD:     u(4, 10),
			Binarize:    true,
			Seed:        rng.Uint64(),
		}
	case "photo":
		k1 := u(0.01, 0.04)
		if rng.IntN(2) == 0 {
			k1 = -k1
		}
		o = Options{
			RotationDeg: u(-10, 10),
			Perspective: u(0.04, 0.15),
			LensK1:      k1,
			Lighting:    u(0.3, 0.8),
			PaperTint:   color.RGBA{255, 252, 245, 255},
			Background:  desk(u(80, 170), u(0.68, 0.8), u(0.48, 0.6)),
			BlurPx:      u(0.8, 1.8) * k,
			NoiseSD:     u(3, 8),
			JPEGQuality: 70 + rng.IntN(21),
			Seed:        rng.Uint64(),
		}
	case "lowres":
		s := u(100, 150) / dpi
		o = Options{ScaleX: s, ScaleY: s, BlurPx: 0.4, NoiseSD: 2, JPEGQuality: 85, Seed: rng.Uint64()}
	case "penmarks":
		o = scan()
		o.PenMarks = 3 + rng.IntN(6)
	default:
		return Options{}, fmt.Errorf("%w: unknown preset %q (want one of %v)", ErrOptions, name, presetNames)
	}
	return o, nil
}

// desk is a wood or laminate desk colour: red level r, green and blue as
// fractions of it.
func desk(r, g, b float64) color.RGBA {
	return color.RGBA{uint8(r), uint8(r * g), uint8(r * b), 255}
}
