package grid

import (
	"errors"
	"image"
	"math"
	"math/rand/v2"
	"testing"

	"tracelift/ecg"
	"tracelift/imageproc"
)

// drawnGrid draws a red millimetre grid at ppm px/mm (minor lines every
// pitch, 1 px; major every 5, 2 px) with one 10 mm × 5 mm pulse on a
// baseline.
func drawnGrid(w, h int, ppmX, ppmY float64) *image.NRGBA {
	m := image.NewNRGBA(image.Rect(0, 0, w, h))
	for i := range m.Pix {
		m.Pix[i] = 255
	}
	set := func(x, y int, r, g, b uint8) {
		if x >= 0 && y >= 0 && x < w && y < h {
			i := y*m.Stride + 4*x
			m.Pix[i], m.Pix[i+1], m.Pix[i+2] = r, g, b
		}
	}
	for k := 0; float64(k)*ppmX < float64(w); k++ {
		x := int(math.Round(float64(k) * ppmX))
		for y := 0; y < h; y++ {
			set(x, y, 235, 120, 120)
			if k%5 == 0 {
				set(x+1, y, 225, 80, 80)
			}
		}
	}
	for k := 0; float64(k)*ppmY < float64(h); k++ {
		y := int(math.Round(float64(k) * ppmY))
		for x := 0; x < w; x++ {
			set(x, y, 235, 120, 120)
			if k%5 == 0 {
				set(x, y+1, 225, 80, 80)
			}
		}
	}
	// Baseline with a 1 mV pulse at 10 mm/mV (10 mm tall, 5 mm wide).
	base := int(60 * ppmY)
	x0, x1 := int(10*ppmX), int(15*ppmX)
	top := base - int(math.Round(10*ppmY))
	for t := 0; t < 3; t++ {
		for x := int(2 * ppmX); x < w-10; x++ {
			if x < x0 || x > x1 {
				set(x, base+t, 10, 10, 10)
			}
		}
		for x := x0; x <= x1+2; x++ {
			set(x, top+t, 10, 10, 10)
		}
		for y := top; y <= base+2; y++ {
			set(x0+t, y, 10, 10, 10)
			set(x1+t, y, 10, 10, 10)
		}
	}
	return m
}

func TestDetectDrawnGrid(t *testing.T) {
	for _, tc := range []struct {
		name       string
		ppmX, ppmY float64
	}{
		{"300 dpi", 11.811, 11.811},
		{"150 dpi", 5.906, 5.906},
		{"fax fine 204×196 dpi", 8.031, 7.717}, // standards.md §6.1 (T.4)
	} {
		t.Run(tc.name, func(t *testing.T) {
			img := drawnGrid(int(200*tc.ppmX), int(120*tc.ppmY), tc.ppmX, tc.ppmY)
			p, err := imageproc.Prepare(img, &imageproc.Options{NoOrient: true})
			if err != nil {
				t.Fatal(err)
			}
			r, err := Detect(p, nil)
			if err != nil {
				t.Fatal(err)
			}
			c := r.Calibration
			// Requirement: ≤ 0.3 % px/mm error on scans.
			if e := math.Abs(c.PxPerMMX.V/tc.ppmX - 1); e > 0.003 || c.PxPerMMX.Origin != FromGrid {
				t.Errorf("px/mm x %v, want %.3f", c.PxPerMMX, tc.ppmX)
			}
			if e := math.Abs(c.PxPerMMY.V/tc.ppmY - 1); e > 0.003 || c.PxPerMMY.Origin != FromGrid {
				t.Errorf("px/mm y %v, want %.3f", c.PxPerMMY, tc.ppmY)
			}
			if len(r.Pulses) != 1 {
				t.Fatalf("%d pulses, want 1", len(r.Pulses))
			}
			if c.GainMMPerMV != (Value{10, FromPulse}) {
				t.Errorf("gain %v, want 10 (pulse)", c.GainMMPerMV)
			}
			if c.SpeedMMPerS != (Value{25, FromDefault}) {
				t.Errorf("speed %v, want 25 (default)", c.SpeedMMPerS)
			}
		})
	}
}

func TestDetectNotAnECG(t *testing.T) {
	// A photo-like random texture: smooth colour blobs plus noise.
	r := rand.New(rand.NewPCG(3, 3))
	w, h := 900, 600
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	type blob struct{ x, y, s, c0, c1, c2 float64 }
	var bs []blob
	for i := 0; i < 25; i++ {
		bs = append(bs, blob{r.Float64() * float64(w), r.Float64() * float64(h), 30 + r.Float64()*150,
			r.Float64() * 255, r.Float64() * 255, r.Float64() * 255})
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var c [3]float64
			ws := 1e-9
			for _, b := range bs {
				d := math.Hypot(float64(x)-b.x, float64(y)-b.y) / b.s
				wt := math.Exp(-d * d)
				ws += wt
				c[0] += wt * b.c0
				c[1] += wt * b.c1
				c[2] += wt * b.c2
			}
			i := y*img.Stride + 4*x
			for k := range c {
				img.Pix[i+k] = uint8(max(0, min(255, c[k]/ws+r.NormFloat64()*14)))
			}
			img.Pix[i+3] = 255
		}
	}
	p, err := imageproc.Prepare(img, nil)
	if err == nil {
		_, err = Detect(p, nil)
	}
	if !errors.Is(err, ecg.ErrNoECG) {
		t.Fatalf("texture: err %v, want one wrapping ecg.ErrNoECG", err)
	}
	// With a resolution given by the user the same page is calibrated
	// from it, with its origin and a warning.
	if p != nil {
		res, err := Detect(p, &Options{DPIX: 300, DPIY: 300})
		if err != nil {
			t.Fatal(err)
		}
		if res.Calibration.PxPerMMX.Origin != FromOption || len(res.Warnings) == 0 {
			t.Errorf("calibration %+v warnings %v", res.Calibration, res.Warnings)
		}
	}
}

func TestSnapGain(t *testing.T) {
	for _, tc := range []struct {
		h    float64
		want float64
		snap bool
	}{{9.7, 10, true}, {10.39, 10, true}, {5.1, 5, true}, {19.3, 20, true}, {12.5, 12.5, false}, {7, 7, false}} {
		if g, s := snapGain(tc.h); g != tc.want || s != tc.snap {
			t.Errorf("snapGain(%g) = %g, %v; want %g, %v", tc.h, g, s, tc.want, tc.snap)
		}
	}
}

func TestSettle5(t *testing.T) {
	for _, tc := range []struct {
		name       string
		pitch, dpi float64
		want       float64
	}{
		{"no prior", 59.05, 0, 59.05},
		{"major taken for minor at 300 dpi", 59.05, 300, 11.81},
		{"minor taken for major at 300 dpi", 2.362, 300, 11.81},
		{"agreeing", 11.8, 300, 11.8},
		{"72 dpi default ignored", 14.17, 72, 14.17},
		{"other scale kept", 9.5, 300, 9.5},
	} {
		var w []string
		if got := settle5(tc.pitch, tc.dpi, &w, "x"); math.Abs(got-tc.want) > 0.01 {
			t.Errorf("%s: settle5(%g, %g) = %g, want %g", tc.name, tc.pitch, tc.dpi, got, tc.want)
		}
	}
}

// TestDetectLatticeFallback: a registered photo whose grid lines the
// period measurement does not find (a blank page here) is calibrated from
// the registration's lattice period (5 mm per major period, the standard
// grid: standards.md §1.1), with a warning; a resolution given by the
// user still comes first.
func TestDetectLatticeFallback(t *testing.T) {
	w, h := 600, 400
	gray := image.NewGray(image.Rect(0, 0, w, h))
	for i := range gray.Pix {
		gray.Pix[i] = 255
	}
	p := &imageproc.Page{
		Color: image.NewNRGBA(image.Rect(0, 0, w, h)),
		Gray:  gray,
		Ink:   image.NewGray(image.Rect(0, 0, w, h)),
		Grid:  image.NewGray(image.Rect(0, 0, w, h)),
		Mesh:  &imageproc.Mesh{Step: 16, NX: 2, NY: 2, X: make([]float64, 4), Y: make([]float64, 4), LatticePeriod: 59},
	}
	r, err := Detect(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	c := r.Calibration
	if c.PxPerMMX != (Value{11.8, FromGrid}) || c.PxPerMMY != (Value{11.8, FromGrid}) || len(r.Warnings) == 0 {
		t.Errorf("calibration %+v warnings %v, want 11.8 px/mm from the grid", c, r.Warnings)
	}
	r, err = Detect(p, &Options{DPIX: 254, DPIY: 254})
	if err != nil {
		t.Fatal(err)
	}
	if c := r.Calibration; c.PxPerMMX.Origin != FromOption || math.Abs(c.PxPerMMX.V-10) > 1e-9 {
		t.Errorf("with a given resolution: %+v", c)
	}
}
