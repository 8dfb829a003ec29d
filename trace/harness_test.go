package trace

import (
	"flag"
	"image"
	"image/color"
	"image/draw"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/grid"
	"tracelift/render"
	"tracelift/synth"
)

// overlayDir, when set (go test -args -trace.overlay=/tmp/x), receives
// PNG overlays of the followed paths for visual inspection.
var overlayDir = flag.String("trace.overlay", "", "folder for overlay PNGs of the followed paths")

// page is a rendered test page with what the tests need from its truth.
type page struct {
	img   image.Image
	truth render.Truth
	rec   ecg.Record // the printed record
}

func renderPage(t testing.TB, rec ecg.Record, o render.Options) page {
	t.Helper()
	h := render.DemoHeader(7)
	o.Header = &h
	p, err := render.Render(rec, &o)
	if err != nil {
		t.Fatalf("render: %v", err)
	}
	return page{img: p.Image, truth: p.Truth, rec: rec}
}

func synthRecord(t testing.TB, seed uint64) ecg.Record {
	t.Helper()
	rec, err := synth.Generate(synth.Params{}, seed)
	if err != nil {
		t.Fatalf("synth: %v", err)
	}
	return rec
}

// naiveInk builds an ink map from a clean colour page: the darkness of the
// page's brightest channel, so a saturated red grid (one channel at full
// strength) counts as no ink and a near-black trace as full ink. It stands
// in for imageproc on clean pages only.
func naiveInk(img image.Image) *image.Gray {
	b := img.Bounds()
	g := image.NewGray(image.Rect(0, 0, b.Dx(), b.Dy()))
	for y := 0; y < b.Dy(); y++ {
		for x := 0; x < b.Dx(); x++ {
			r, gg, bb, _ := img.At(b.Min.X+x, b.Min.Y+y).RGBA()
			m := max(r, gg, bb) >> 8
			v := 255 - int(m)
			v = v * 2 // the anti-aliased edge of a 0.3 mm stroke
			if v > 255 {
				v = 255
			}
			g.Pix[y*g.Stride+x] = uint8(v)
		}
	}
	return g
}

// truthCal is the calibration the truth says the page has.
func truthCal(tr render.Truth) grid.Calibration {
	return grid.Calibration{
		PxPerMMX:    grid.Value{V: tr.PxPerMMX, Origin: grid.FromGrid},
		PxPerMMY:    grid.Value{V: tr.PxPerMMY, Origin: grid.FromGrid},
		SpeedMMPerS: grid.Value{V: tr.SpeedMMPerS, Origin: grid.FromDefault},
		GainMMPerMV: grid.Value{V: tr.GainMMPerMV, Origin: grid.FromPulse},
	}
}

// truthPulses are the page's calibration pulses in image px.
func truthPulses(tr render.Truth) []grid.Pulse {
	var out []grid.Pulse
	for _, p := range tr.Pulses {
		x0, yb := tr.PaperToPx(p.X0MM, p.BaselineYMM)
		x1, yt := tr.PaperToPx(p.X1MM, p.BaselineYMM-p.HeightMM)
		out = append(out, grid.Pulse{X0: x0, X1: x1, BaseY: yb, TopY: yt, HeightMM: p.HeightMM})
	}
	return out
}

// printedTruth is the truth record restricted to the windows in which each
// lead was printed (NaN elsewhere), at the truth's own rate.
func printedTruth(tr render.Truth) ecg.Record {
	full := tr.Record()
	var out ecg.Record
	for _, s := range full.Signals {
		m := s.Clone()
		for i := range m.Samples {
			m.Samples[i] = math.NaN()
		}
		printed := false
		for _, p := range tr.Panels {
			l, err := ecg.ParseLead(strings.TrimPrefix(p.Lead, "-"))
			if err != nil || l != s.Lead {
				continue
			}
			printed = true
			for i := range m.Samples {
				t := s.Time(i)
				if t >= p.T0-1e-9 && t <= p.T1+1e-9 {
					m.Samples[i] = s.Samples[i]
				}
			}
		}
		if printed {
			out.Set(m)
		}
	}
	return out
}

// writeOverlay draws the followed paths over the page (green) and the
// panel bands (blue corners) into dir/name.png.
func writeOverlay(t testing.TB, name string, img image.Image, res *Result) {
	if *overlayDir == "" || res == nil {
		return
	}
	b := img.Bounds()
	out := image.NewNRGBA(image.Rect(0, 0, b.Dx(), b.Dy()))
	draw.Draw(out, out.Rect, img, b.Min, draw.Src)
	green := color.NRGBA{0, 200, 0, 255}
	blue := color.NRGBA{0, 0, 255, 255}
	for _, p := range res.Panels {
		for _, q := range p.Path {
			x, y := int(math.Round(q.X)), int(math.Round(q.Y))
			out.Set(x, y, green)
			out.Set(x, y+1, green)
		}
		r := p.Bounds
		for x := r.Min.X; x < r.Min.X+20 && x < r.Max.X; x++ {
			out.Set(x, r.Min.Y, blue)
			out.Set(x, r.Max.Y-1, blue)
		}
		for x := r.Min.X; x < r.Max.X; x++ {
			out.Set(x, int(p.ZeroY), color.NRGBA{255, 0, 255, 255})
		}
	}
	f, err := os.Create(filepath.Join(*overlayDir, name+".png"))
	if err != nil {
		t.Logf("overlay: %v", err)
		return
	}
	defer f.Close()
	png.Encode(f, out)
}

func renderBlank() image.Image {
	return image.NewGray(image.Rect(0, 0, 400, 300))
}

func renderOptions(layout string) render.Options { return render.Options{Layout: layout} }
