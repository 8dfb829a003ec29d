package grid

import (
	"fmt"
	"image"
	"math"
	"math/rand/v2"
	"testing"

	"tracelift/imageproc"
	"tracelift/render"
)

// drawLine paints a vertical (or horizontal) stroke of width w px centred
// on c into m, each pixel's ink proportional to the share of it the stroke
// covers (an anti-aliased print, unsaturated).
func drawLine(m *image.Gray, c, w float64, vertical bool) {
	b := m.Rect
	n, l := b.Dx(), b.Dy()
	if !vertical {
		n, l = l, n
	}
	for i := 0; i < n; i++ {
		cov := math.Max(0, math.Min(float64(i)+0.5, c+w/2)-math.Max(float64(i)-0.5, c-w/2))
		for j := 0; j < l; j++ {
			x, y := i, j
			if !vertical {
				x, y = j, i
			}
			m.Pix[y*m.Stride+x] = uint8(math.Round(255 * math.Min(cov, 1)))
		}
	}
}

// TestLineCentre: the centre of an anti-aliased stroke 3.5 px wide comes
// back within 0.05 px on both axes (the centroid of pixel samples puts a
// partly covered pixel's ink at the pixel's centre, not at the covered
// part's: at most 0.04 px here), and a crossing speck on a few of its
// lines does not move the median.
func TestLineCentre(t *testing.T) {
	for _, c := range []float64{20, 20.25, 20.5, 20.73} {
		m := image.NewGray(image.Rect(0, 0, 40, 60))
		drawLine(m, c, 3.5, true)
		for y := 10; y < 13; y++ { // a speck beside the stroke
			m.Pix[y*m.Stride+24] = 255
		}
		got, ok := LineCentre(m, 15, 26, 5, 50, true)
		if !ok || math.Abs(got-c) > 0.05 {
			t.Errorf("vertical stroke at %.2f: got %.3f (ok %v)", c, got, ok)
		}
		h := image.NewGray(image.Rect(0, 0, 60, 40))
		drawLine(h, c, 3.5, false)
		got, ok = LineCentre(h, 15, 26, 5, 50, false)
		if !ok || math.Abs(got-c) > 0.05 {
			t.Errorf("horizontal stroke at %.2f: got %.3f (ok %v)", c, got, ok)
		}
	}
	m := image.NewGray(image.Rect(0, 0, 40, 60))
	if _, ok := LineCentre(m, 15, 26, 5, 50, true); ok {
		t.Error("an empty window located a line")
	}
	if _, ok := LineCentre(m, -2, 26, 5, 50, true); ok {
		t.Error("a window leaving the map located a line")
	}
}

// TestRefitLatticeOutlier: 5 mm lines 59.055 px apart located to ±0.05
// px, with a partial line at the far end of the axis 1.2 px off the
// lattice (what tilted the fit of a major-only grid by 0.04 %): the pitch
// comes back within 0.002 %.
func TestRefitLatticeOutlier(t *testing.T) {
	const pitch, phase = 59.055, 76.4
	rng := rand.New(rand.NewPCG(3, 4))
	var pos, wt []float64
	for k := 0; k < 60; k++ {
		x := phase + float64(k)*pitch + 0.05*(2*rng.Float64()-1)
		if k == 59 {
			x += 1.2
		}
		pos = append(pos, x)
		wt = append(wt, 1)
	}
	wt[30] = 2
	got, _, _, ok := fitLattice(pos, wt, 59.0)
	if !ok {
		t.Fatal("no fit")
	}
	if e := math.Abs(got-pitch) / pitch; e > 2e-5 {
		t.Errorf("pitch %.5f, want %.5f (error %.4f %%)", got, pitch, 100*e)
	}
}

// TestMajorGridPitch: on scanned pages printed with 5 mm lines only (the
// eval corpus's scan condition, seed 2), px/mm along both axes is measured
// within 0.005 % of the renderer's truth (it was 0.036 % along x before
// the fit dropped lines off the lattice: 3.6 ms over a 10 s row).
func TestMajorGridPitch(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, layout := range []string{"6x2", "3x4"} {
		if o, err := render.ConditionOptions("scan", 2); err != nil || o.Grid.Kind != render.GridMajor {
			t.Fatalf("seed 2 does not draw a grid of 5 mm lines (%v)", err)
		}
		pg, p, r := detectPage(t, "scan", layout, 2)
		tr := pg.Truth
		s := Evaluate(p, r, Reference{PaperToImage: tr.PaperToImage, ImageToPaper: tr.PxToPaper, GridRectMM: tr.GridRectMM,
			RotationDeg: tr.RotationDeg, GainMMPerMV: tr.GainMMPerMV, SpeedMMPerS: tr.SpeedMMPerS})
		if s.PxPerMMErrX > 5e-5 || s.PxPerMMErrY > 5e-5 {
			t.Errorf("%s: px/mm error x %.4f %% y %.4f %%", layout, 100*s.PxPerMMErrX, 100*s.PxPerMMErrY)
		}
	}
}

// TestPulseEdgesSubPixel: the pulses of a grey scan are located on the
// upright page within 0.1 px of where the renderer drew them (its truth
// mapped through the page's own mapping), edges and levels.
func TestPulseEdgesSubPixel(t *testing.T) {
	if testing.Short() {
		t.Skip("renders a full page")
	}
	pg, p, r := detectPage(t, "gray", "", 2)
	if len(r.Pulses) < 3 {
		t.Fatalf("%d pulses found", len(r.Pulses))
	}
	for _, got := range r.Pulses {
		best := math.Inf(1)
		var want Pulse
		for _, tp := range pg.Truth.Pulses {
			if w := truthPulse(t, pg, p, tp); math.Abs(w.BaseY-got.BaseY) < best {
				best, want = math.Abs(w.BaseY-got.BaseY), w
			}
		}
		if off := pulseOff(got, want, 0.1); off != "" {
			t.Errorf("pulse at y %.0f: %s", want.BaseY, off)
		}
	}
}

// TestLowresPulseNotOutvoted: on a 100-dpi rhythm page (the eval's lowres
// condition, record 3) two pairs of QRS strokes with a grid dash across
// their feet passed the pulse test as "pulses" 0.9 mm tall; read to a
// fraction of a pixel they agreed with each other and outvoted the one
// real pulse (gain 0.94 mm/mV). Pulses under minPulseMM are not pulses:
// the real one is found, its edges within 0.2 px of the truth.
func TestLowresPulseNotOutvoted(t *testing.T) {
	pg, p, r := detectPage(t, "lowres", render.LayoutRhythm, 3)
	if len(r.Pulses) != 1 {
		t.Fatalf("%d pulses: %+v", len(r.Pulses), r.Pulses)
	}
	if off := pulseOff(r.Pulses[0], truthPulse(t, pg, p, pg.Truth.Pulses[0]), 0.2); off != "" {
		t.Error(off)
	}
}

// detectPage renders the eval corpus's page of record seed under a
// condition in a layout (render.CorpusRecord, render.ConditionOptions)
// (its own layout when layout is "") and runs the front end and Detect on
// it.
func detectPage(t *testing.T, cond, layout string, seed uint64) (*render.Page, *imageproc.Page, *Result) {
	t.Helper()
	rec, err := render.CorpusRecord(seed, cond == "overlap")
	if err != nil {
		t.Fatal(err)
	}
	o, err := render.ConditionOptions(cond, seed)
	if err != nil {
		t.Fatal(err)
	}
	if layout != "" {
		o.Layout = layout
	}
	pg, err := render.Render(rec, o)
	if err != nil {
		t.Fatal(err)
	}
	var opt imageproc.Options
	if cond == "fax" {
		// A fax file carries its resolution (see corpusScore).
		opt.DPIX, opt.DPIY, _ = pg.Truth.Resolution()
	}
	p, err := imageproc.Prepare(pg.Image, &opt)
	if err != nil {
		t.Fatal(err)
	}
	r, err := Detect(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	return pg, p, r
}

// truthPulse is the renderer's pulse tp on the upright page p.
func truthPulse(t *testing.T, pg *render.Page, p *imageproc.Page, tp render.TruthPulse) Pulse {
	t.Helper()
	inv, ok := imageproc.Invert(p.ToSource)
	if !ok {
		t.Fatal("singular page mapping")
	}
	u0, v0 := pg.Truth.PaperToPx(tp.X0MM, tp.BaselineYMM)
	u1, v1 := pg.Truth.PaperToPx(tp.X1MM, tp.BaselineYMM-tp.HeightMM)
	x0, yb := imageproc.Apply(inv, u0, v0)
	x1, yt := imageproc.Apply(inv, u1, v1)
	return Pulse{X0: x0, X1: x1, BaseY: yb, TopY: yt}
}

// pulseOff reports the first of got's edges and levels more than tol px
// from want's ("" when none is).
func pulseOff(got, want Pulse, tol float64) string {
	for _, d := range []struct {
		name      string
		got, want float64
	}{{"X0", got.X0, want.X0}, {"X1", got.X1, want.X1}, {"BaseY", got.BaseY, want.BaseY}, {"TopY", got.TopY, want.TopY}} {
		if math.Abs(d.got-d.want) > tol {
			return fmt.Sprintf("%s %.2f, truth %.2f", d.name, d.got, d.want)
		}
	}
	return ""
}

// TestFaxGainFromReadLevels: on the eval's fax pages of record 6 two
// pulses are found; one's foot line was broken by the fax, its height
// from the strokes' ends read 10.5 mm, and the median of two took it:
// gain 10.5 mm/mV. Heights whose top and foot were both located on their
// lines are preferred (levelsRead): 10 mm/mV, read from the pulse.
func TestFaxGainFromReadLevels(t *testing.T) {
	if testing.Short() {
		t.Skip("renders two pages")
	}
	for _, layout := range []string{"3x4", "cabrera-3x4"} {
		_, _, r := detectPage(t, "fax", layout, 6)
		if g := r.Calibration.GainMMPerMV; g.V != 10 || g.Origin != FromPulse {
			t.Errorf("%s: gain %.2f mm/mV (%s), want 10 from the pulses", layout, g.V, g.Origin)
		}
	}
}

// TestPulseEdgeOnGridLine: on the eval's photo of a rhythm page of record
// 9 (a grey grid, which the front end tells from ink by shape alone) the
// pulse's rising edge is printed on a 5 mm line and 3.6 of its 10 mm went
// with the line; its partner then did not match it, no pulse was found,
// and with the trace's flat stretches gone the same way the page came
// back empty. The edge's missing stretch is taken from the luminance
// (matchExtent): the pulse is found and the gain read from it.
func TestPulseEdgeOnGridLine(t *testing.T) {
	if testing.Short() {
		t.Skip("renders a photo")
	}
	_, _, r := detectPage(t, "photo", render.LayoutRhythm, 9)
	if len(r.Pulses) != 1 {
		t.Fatalf("%d pulses", len(r.Pulses))
	}
	if g := r.Calibration.GainMMPerMV; g.V != 10 || g.Origin != FromPulse {
		t.Errorf("gain %.2f mm/mV (%s), want 10 from the pulse", g.V, g.Origin)
	}
}
