package synth

import (
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"testing"

	"tracelift/ecg"
)

// TestPlot draws the twelve leads of a default record to
// $SYNTH_PLOT_DIR/synth12.png for a visual check; it is skipped unless
// that variable is set.
func TestPlot(t *testing.T) {
	dir := os.Getenv("SYNTH_PLOT_DIR")
	if dir == "" {
		t.Skip("set SYNTH_PLOT_DIR to draw the 12-lead plot")
	}
	for name, p := range map[string]Params{
		"default": Default(),
		"ectopic": func() Params { q := Default(); q.EctopicRate = 0.3; q.HRVStdMS = 40; return q }(),
		"noisy": func() Params {
			q := Default()
			q.NoiseMV = 0.03
			q.BaselineWanderMV = 0.3
			q.PowerlineMV = 0.05
			return q
		}(),
	} {
		rec, err := Generate(p, 8)
		if err != nil {
			t.Fatal(err)
		}
		if err := plot(filepath.Join(dir, "synth_"+name+".png"), rec, 10, 4); err != nil {
			t.Fatal(err)
		}
		if err := plot(filepath.Join(dir, "synth_"+name+"_zoom.png"), rec, 2.5, 8); err != nil {
			t.Fatal(err)
		}
	}
}

// plot draws the first dur seconds of each lead in its own row at 25 mm/s
// and 10 mm/mV with pxmm px/mm,
// with a pink 1 mm / 5 mm grid and blue marks at the true fiducials.
func plot(path string, rec ecg.Record, dur, pxmm float64) error {
	rowH := 25 * pxmm
	w := int(dur*25*pxmm) + 1
	h := int(rowH * float64(len(rec.Signals)))
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			c := color.RGBA{255, 255, 255, 255}
			if x%int(pxmm) == 0 || y%int(pxmm) == 0 {
				c = color.RGBA{255, 220, 220, 255}
			}
			if x%int(5*pxmm) == 0 || y%int(5*pxmm) == 0 {
				c = color.RGBA{240, 150, 150, 255}
			}
			img.SetRGBA(x, y, c)
		}
	}
	for _, b := range rec.Beats {
		for _, tt := range []float64{b.POn, b.POff, b.QRSOn, b.QRSOff, b.TEnd} {
			if math.IsNaN(tt) {
				continue
			}
			x := int(tt * 25 * pxmm)
			for y := 0; y < h; y += 2 {
				img.SetRGBA(x, y, color.RGBA{80, 80, 255, 255})
			}
		}
	}
	for row, s := range rec.Signals {
		base := rowH*float64(row) + rowH/2
		prev := -1
		for i, v := range s.Samples {
			x := int(s.Time(i) * 25 * pxmm)
			y := int(base - v*10*pxmm)
			if prev < 0 {
				prev = y
			}
			lo, hi := min(prev, y), max(prev, y)
			for yy := lo; yy <= hi; yy++ {
				if yy >= 0 && yy < h && x < w {
					img.SetRGBA(x, yy, color.RGBA{0, 0, 0, 255})
				}
			}
			prev = y
		}
	}
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := png.Encode(f, img); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
