package render

import (
	"bytes"
	"errors"
	"image"
	"io"
	"math"
	"math/rand/v2"
	"testing"

	"tracelift/ecg"
)

// ink returns the "blackness" 255 − max(R, G, B) of pixel (x, y): near 0
// on paper and on coloured grid ink, near 230 on the dark trace.
func ink(img *image.RGBA, x, y int) float64 {
	i := img.PixOffset(x, y)
	p := img.Pix[i : i+3]
	return 255 - float64(max(p[0], p[1], p[2]))
}

// inkCentre returns the blackness-weighted centre row (pixel-centre
// coordinates) of trace ink in column x between rows y0 and y1, counting
// blackness above 40 (full-strength red grid ink reaches 31), and
// ok=false if there is none.
func inkCentre(img *image.RGBA, x, y0, y1 int) (float64, bool) {
	var sw, sy float64
	for y := max(y0, 0); y < min(y1, img.Bounds().Dy()); y++ {
		if b := ink(img, x, y) - 40; b > 0 {
			sw += b
			sy += b * float64(y)
		}
	}
	if sw == 0 {
		return 0, false
	}
	return sy / sw, true
}

// sineRecord has every standard lead equal to amp·sin(2π f t) + off mV.
func sineRecord(fs, dur, f, amp, off float64) ecg.Record {
	var rec ecg.Record
	n := int(dur * fs)
	for _, l := range ecg.Standard12 {
		s := make([]float64, n)
		for k := range s {
			s[k] = amp*math.Sin(2*math.Pi*f*float64(k)/fs) + off
		}
		rec.Set(ecg.Signal{Lead: l, SampleRate: fs, Samples: s})
	}
	return rec
}

func hidden() *Header { return &Header{Hidden: true} }

// TestGridPitch measures the grid pitch back from a grid-only raster by an
// independent method — the centre of every minor line from the column and
// row darkness profiles, then a least-squares line through centre against
// line number — and compares it with dpi/25.4 px per mm (1 mm minor
// squares; standards.md §1.1, common practice). The fitted line must also
// put line k at (x0+k)·dpi/25.4 − 0.5 px, the truth's pixel convention.
func TestGridPitch(t *testing.T) {
	worstPitch := 0.0
	defer func() { t.Logf("worst pitch error %.5f px/mm", worstPitch) }()
	for _, dpi := range []float64{100, 150, 200, 300, 600} {
		for _, kind := range []string{GridLines, GridMajor, GridDots} {
			r := newRaster(80, 50, dpi)
			r.drawGrid(kind, gridPresets["red"], 10, 10, 70, 40)
			s := pxPerMM(dpi)
			// Darkness profile along x, averaged over the grid rows.
			prof := make([]float64, r.img.Bounds().Dx())
			// Rows between horizontal lines (half-millimetres) for line
			// grids, rows through the dot centres for dot grids.
			for y := int(12 * s); y < int(38*s); y++ {
				ymm := (float64(y) + 0.5) / s
				f := ymm - math.Floor(ymm)
				if kind == GridDots && math.Min(f, 1-f) > 0.5/s {
					continue
				}
				if kind != GridDots && math.Abs(f-0.5) > 0.2 {
					continue
				}
				for x := range prof {
					i := r.img.PixOffset(x, y)
					prof[x] += 255 - float64(r.img.Pix[i+1]) // green channel: red ink is dark
				}
			}
			step := 1
			if kind == GridMajor {
				step = 5
			}
			var xs, ks []float64
			for k := 0; k <= 60; k += step {
				c := (10 + float64(k)) * s // raster coordinate of the line
				lo, hi := int(c-0.45*s*float64(step)), int(c+0.45*s*float64(step))
				if step == 1 {
					lo, hi = int(c-0.45*s), int(c+0.45*s)+1
				}
				var sw, sx, base float64
				base = math.Inf(1)
				for x := max(lo, 0); x < min(hi, len(prof)); x++ {
					base = math.Min(base, prof[x])
				}
				for x := max(lo, 0); x < min(hi, len(prof)); x++ {
					w := prof[x] - base
					sw += w
					sx += w * float64(x)
				}
				if sw == 0 {
					t.Fatalf("dpi %g %s: no line near x=%g px", dpi, kind, c)
				}
				xs = append(xs, sx/sw)
				ks = append(ks, float64(k))
			}
			slope, icpt := fitLine(ks, xs)
			worstPitch = math.Max(worstPitch, math.Abs(slope-s))
			if math.Abs(slope-s) > 0.1 {
				t.Errorf("dpi %g %s: pitch %.4f px/mm, want %.4f ± 0.1", dpi, kind, slope, s)
			}
			if want := 10*s - 0.5; math.Abs(icpt-want) > 0.25 {
				t.Errorf("dpi %g %s: first line at %.3f px, want %.3f", dpi, kind, icpt, want)
			}
		}
	}
}

func fitLine(x, y []float64) (slope, icpt float64) {
	var sx, sy, sxx, sxy float64
	n := float64(len(x))
	for i := range x {
		sx += x[i]
		sy += y[i]
		sxx += x[i] * x[i]
		sxy += x[i] * y[i]
	}
	slope = (n*sxy - sx*sy) / (n*sxx - sx*sx)
	return slope, (sy - slope*sx) / n
}

// TestPulseHeight checks that the calibration pulse is gain × 1 mV tall
// (the 1 mV standardisation mark; standards.md §1.1, AAMI EC11 via V2):
// the distance between the centre of the pulse's top stroke and the centre
// of the baseline stroke before it, measured in the image, divided by px
// per mm, must equal the gain in mm within half a pixel.
func TestPulseHeight(t *testing.T) {
	worstMM := 0.0
	defer func() { t.Logf("worst pulse height error %.4f mm", worstMM) }()
	for _, gain := range []float64{5, 10, 20} {
		for _, dpi := range []float64{150, 300} {
			p, err := Render(sineRecord(500, 10, 0.5, 0.2, 0), &Options{GainMMPerMV: gain, DPI: dpi, Header: hidden()})
			if err != nil {
				t.Fatal(err)
			}
			img := p.Image.(*image.RGBA)
			tr := p.Truth
			s := tr.PxPerMMY
			for _, pu := range tr.Pulses {
				mid := (pu.X0MM + pu.X1MM) / 2
				um, vb := tr.PaperToPx(mid, pu.BaselineYMM)
				ul, _ := tr.PaperToPx(pu.X0MM-1, pu.BaselineYMM)
				_, vt := tr.PaperToPx(mid, pu.BaselineYMM-pu.HeightMM)
				// Top stroke: search from 2 mm below the expected top to
				// 2 mm above it; baseline: ±2 mm around the expected foot.
				top, ok1 := inkCentre(img, int(math.Round(um)), int(vt-2*s), int(vt+2*s))
				base, ok2 := inkCentre(img, int(math.Round(ul)), int(vb-2*s), int(vb+2*s))
				if !ok1 || !ok2 {
					t.Fatalf("gain %g dpi %g row %d: pulse not found", gain, dpi, pu.Row)
				}
				got := (base - top) / s
				worstMM = math.Max(worstMM, math.Abs(got-gain))
				if math.Abs(got-gain) > 0.5/s {
					t.Errorf("gain %g dpi %g row %d: pulse %.3f mm tall, want %g", gain, dpi, pu.Row, got, gain)
				}
				if pu.HeightMM != gain {
					t.Errorf("truth pulse height %g, want %g", pu.HeightMM, gain)
				}
			}
		}
	}
}

// TestTracePosition renders a slowly varying signal and checks, column by
// column, that the ink centre lies where the truth's homography puts the
// signal: within half a pixel.
func TestTracePosition(t *testing.T) {
	cases := []struct {
		layout string
		grid   string
		dpi    float64
		speed  float64
	}{
		{Layout12x1, GridNone, 300, 25},
		{Layout3x4R1, GridLines, 300, 25},
		{LayoutCabrera3x4, GridLines, 200, 25},
		{Layout6x2, GridDots, 150, 50},
	}
	for _, c := range cases {
		rec := sineRecord(500, 10, 0.4, 0.4, 0.1)
		p, err := Render(rec, &Options{Layout: c.layout, Grid: Grid{Kind: c.grid}, DPI: c.dpi, SpeedMMPerS: c.speed, Header: hidden()})
		if err != nil {
			t.Fatal(err)
		}
		img := p.Image.(*image.RGBA)
		tr := p.Truth
		s := tr.PxPerMMY
		var n int
		var worst float64
		for _, pn := range tr.Panels {
			sig := rec.Signal(mustLead(t, pn.Lead))
			u0, _ := tr.PaperToPx(pn.X0MM+3, 0)
			u1, _ := tr.PaperToPx(pn.X1MM-3, 0)
			for u := int(math.Ceil(u0)); u <= int(u1); u += 7 {
				xmm := (float64(u) + 0.5) / tr.PxPerMMX
				ts := pn.T0 + (xmm-pn.X0MM)/tr.SpeedMMPerS
				v := sampleLinear(sig, ts)
				_, ymm := tr.PanelPoint(pn, ts, v)
				_, vwant := tr.PaperToPx(xmm, ymm)
				got, ok := inkCentre(img, u, int(vwant-s), int(vwant+s)+1)
				if !ok {
					t.Fatalf("%s %s: no ink at column %d", c.layout, pn.Lead, u)
				}
				worst = math.Max(worst, math.Abs(got-vwant))
				n++
			}
		}
		if worst > 0.5 {
			t.Errorf("%s: worst trace offset %.3f px over %d columns, want ≤ 0.5", c.layout, worst, n)
		}
		t.Logf("%s grid %s %g dpi %g mm/s: worst offset %.3f px over %d columns", c.layout, c.grid, c.dpi, c.speed, worst, n)
	}
}

func mustLead(t *testing.T, name string) ecg.Lead {
	t.Helper()
	if len(name) > 0 && name[0] == '-' {
		name = name[1:]
	}
	l, err := ecg.ParseLead(name)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

func sampleLinear(s *ecg.Signal, t float64) float64 {
	x := (t - s.Start) * s.SampleRate
	i := int(math.Floor(x))
	f := x - float64(i)
	return s.Samples[i]*(1-f) + s.Samples[i+1]*f
}

// TestLayouts checks which lead each layout prints in which row and
// column, over which time window (standards.md §1.2, common practice: the
// 3 × 4 columns are consecutive 2.5 s windows at 25 mm/s).
func TestLayouts(t *testing.T) {
	type cell struct {
		lead     string
		row, col int
		t0, t1   float64
		rhythm   bool
	}
	rec := sineRecord(500, 10, 1, 1, 0)
	tests := []struct {
		layout string
		speed  float64
		n      int
		want   []cell // a selection of the panels
	}{
		{Layout3x4, 25, 12, []cell{{"I", 0, 0, 0, 2.5, false}, {"aVR", 0, 1, 2.5, 5, false}, {"V2", 1, 2, 5, 7.5, false}, {"V6", 2, 3, 7.5, 10, false}}},
		{Layout3x4R1, 25, 13, []cell{{"III", 2, 0, 0, 2.5, false}, {"II", 3, 0, 0, 10, true}}},
		{Layout3x4R3, 25, 15, []cell{{"II", 3, 0, 0, 10, true}, {"V1", 4, 0, 0, 10, true}, {"V5", 5, 0, 0, 10, true}}},
		{Layout3x4, 50, 12, []cell{{"aVL", 1, 1, 1.25, 2.5, false}, {"V4", 0, 3, 3.75, 5, false}}},
		{Layout6x2, 25, 12, []cell{{"I", 0, 0, 0, 5, false}, {"aVF", 5, 0, 0, 5, false}, {"V1", 0, 1, 5, 10, false}, {"V6", 5, 1, 5, 10, false}}},
		{Layout12x1, 25, 12, []cell{{"I", 0, 0, 0, 10, false}, {"V6", 11, 0, 0, 10, false}}},
		{LayoutCabrera3x4, 25, 12, []cell{{"aVL", 0, 0, 0, 2.5, false}, {"I", 1, 0, 0, 2.5, false}, {"-aVR", 2, 0, 0, 2.5, false},
			{"II", 0, 1, 2.5, 5, false}, {"aVF", 1, 1, 2.5, 5, false}, {"III", 2, 1, 2.5, 5, false}, {"V1", 0, 2, 5, 7.5, false}}},
	}
	for _, tc := range tests {
		p, err := Render(rec, &Options{Layout: tc.layout, SpeedMMPerS: tc.speed, DPI: 100})
		if err != nil {
			t.Fatalf("%s: %v", tc.layout, err)
		}
		tr := p.Truth
		if len(tr.Panels) != tc.n || tr.Layout != tc.layout {
			t.Errorf("%s: %d panels (layout %q), want %d", tc.layout, len(tr.Panels), tr.Layout, tc.n)
		}
		for _, w := range tc.want {
			found := false
			for _, pn := range tr.Panels {
				if pn.Lead == w.lead && pn.Row == w.row && pn.Col == w.col {
					found = true
					if math.Abs(pn.T0-w.t0) > 1e-9 || math.Abs(pn.T1-w.t1) > 1e-9 || pn.Rhythm != w.rhythm {
						t.Errorf("%s %s: window %g–%g rhythm %v, want %g–%g %v", tc.layout, w.lead, pn.T0, pn.T1, pn.Rhythm, w.t0, w.t1, w.rhythm)
					}
					if got := (pn.X1MM - pn.X0MM) / tc.speed; math.Abs(got-(w.t1-w.t0)) > 1e-9 {
						t.Errorf("%s %s: printed width %g s, want %g", tc.layout, w.lead, got, w.t1-w.t0)
					}
				}
			}
			if !found {
				t.Errorf("%s: no panel %s at row %d col %d", tc.layout, w.lead, w.row, w.col)
			}
		}
		// Every row has one pulse, at the left, on the row's baseline.
		rows := map[int]float64{}
		for _, pn := range tr.Panels {
			rows[pn.Row] = pn.BaselineYMM
		}
		for _, pu := range tr.Pulses {
			if b, ok := rows[pu.Row]; ok && b != pu.BaselineYMM {
				t.Errorf("%s: pulse of row %d on %g mm, panels on %g", tc.layout, pu.Row, pu.BaselineYMM, b)
			}
		}
	}
}

// TestPaperSizes: A4 is 297 × 210 mm (ISO 216) and US Letter 11 × 8.5 in,
// both landscape; the image is the paper at the chosen dpi.
func TestPaperSizes(t *testing.T) {
	rec := sineRecord(500, 10, 1, 1, 0)
	for _, c := range []struct {
		paper string
		dpi   float64
		w, h  int
	}{
		{PaperA4, 100, 1169, 827},
		{PaperA4, 300, 3508, 2480},
		{PaperLetter, 100, 1100, 850},
		{PaperLetter, 300, 3300, 2550},
	} {
		p, err := Render(rec, &Options{Paper: c.paper, DPI: c.dpi, Grid: Grid{Kind: GridNone}})
		if err != nil {
			t.Fatal(err)
		}
		if b := p.Image.Bounds(); b.Dx() != c.w || b.Dy() != c.h {
			t.Errorf("%s at %g dpi: %v, want %d × %d", c.paper, c.dpi, b.Size(), c.w, c.h)
		}
		// All printed trace lies on the paper, right of the pulses.
		for _, pn := range p.Truth.Panels {
			if pn.X0MM < 10 || pn.X1MM > p.Truth.PaperWidthMM-5 {
				t.Errorf("%s: panel %s spans %g–%g mm", c.paper, pn.Lead, pn.X0MM, pn.X1MM)
			}
		}
	}
}

// TestRhythmLayout prints a 95 s record as continuous rows; each row
// continues where the previous one stopped.
func TestRhythmLayout(t *testing.T) {
	rec := sineRecord(250, 95, 1, 1, 0)
	p, err := Render(rec, &Options{Layout: LayoutRhythm, RhythmLead: ecg.LeadV5, DPI: 100})
	if err != nil {
		t.Fatal(err)
	}
	tr := p.Truth
	if len(tr.Panels) < 6 {
		t.Fatalf("%d rhythm rows, want ≥ 6 on A4", len(tr.Panels))
	}
	for i, pn := range tr.Panels {
		if pn.Lead != "V5" || !pn.Rhythm || pn.Row != i || math.Abs(pn.T0-10*float64(i)) > 1e-9 || math.Abs(pn.T1-pn.T0-10) > 1e-9 {
			t.Errorf("row %d: %+v", i, pn)
		}
	}
	// Beats past the printed rows are left out of the truth.
	rec.Beats = []ecg.Beat{ecg.NewBeat(ecg.BeatNormal, 5), ecg.NewBeat(ecg.BeatNormal, 94)}
	p2, err := Render(rec, &Options{Layout: LayoutRhythm, RhythmLead: ecg.LeadV5, DPI: 50})
	if err != nil {
		t.Fatal(err)
	}
	if len(p2.Truth.Beats) != 1 || p2.Truth.Beats[0].R != 5 {
		t.Errorf("truth beats %+v, want only the printed one at 5 s", p2.Truth.Beats)
	}
	// The truth's signals cover the printed rows, not the whole record.
	last := tr.Panels[len(tr.Panels)-1]
	for _, sg := range tr.Signals {
		end := sg.StartS + float64(len(sg.SamplesMV)-1)/sg.SampleRate
		if sg.StartS > 1e-9 || end < math.Min(last.T1, 95)-0.01 || end > last.T1+0.01 {
			t.Errorf("truth signal %s spans %g–%g s, printed 0–%g s", sg.Lead, sg.StartS, end, last.T1)
		}
	}
	// A strip holds the whole record in one row.
	p, err = Render(rec, &Options{Paper: PaperStrip, DPI: 100})
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Truth.Panels) != 1 || p.Truth.Panels[0].T1 < 95 || p.Truth.Paper != "strip" {
		t.Errorf("strip: %+v", p.Truth.Panels)
	}
	if w := p.Truth.PaperWidthMM; w < 95*25 {
		t.Errorf("strip %g mm wide, want ≥ %g", w, 95*25.0)
	}
}

// TestOverlap: tall complexes are not clipped at the row boundary; the
// ink reaches into the row above.
func TestOverlap(t *testing.T) {
	rec := sineRecord(500, 10, 0.5, 3, 0) // ±3 mV: 60 mm peak-to-peak at 20 mm/mV
	p, err := Render(rec, &Options{Layout: Layout12x1, GainMMPerMV: 20, DPI: 100, Header: hidden(), Grid: Grid{Kind: GridNone}})
	if err != nil {
		t.Fatal(err)
	}
	tr := p.Truth
	img := p.Image.(*image.RGBA)
	pn := tr.Panels[5]
	prev := tr.Panels[4]
	// Time of the positive peak: 0.5 s.
	x, y := tr.PanelPoint(pn, 0.5, 3)
	if y >= prev.BaselineYMM {
		t.Fatalf("test setup: peak at %g mm not above the previous baseline %g", y, prev.BaselineYMM)
	}
	u, v := tr.PaperToPx(x, y)
	if got, ok := inkCentre(img, int(math.Round(u)), int(v-3), int(v+4)); !ok || math.Abs(got-v) > 1 {
		t.Errorf("peak above the row boundary not printed (got %v, %v; want %.1f)", got, ok, v)
	}
}

// TestTruthRoundTrip writes and reads back the sidecar.
func TestTruthRoundTrip(t *testing.T) {
	rec := testRecord(500, 10)
	rec.Signals[3].Samples[7] = math.NaN()
	rec.Beats[0].PPeak = 0.3
	p, err := Render(rec, &Options{Layout: LayoutCabrera3x4, DPI: 100, Condition: "clean"})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := p.WriteTruth(&buf); err != nil {
		t.Fatal(err)
	}
	got, err := ReadTruth(&buf)
	if err != nil {
		t.Fatal(err)
	}
	want := p.Truth
	if got.Version != 1 || got.Condition != "clean" || got.Layout != want.Layout || got.PaperToImage != want.PaperToImage ||
		got.WidthPx != want.WidthPx || got.Grid != want.Grid || len(got.Panels) != len(want.Panels) || len(got.Pulses) != len(want.Pulses) {
		t.Fatalf("round trip changed the header fields:\n got %+v\nwant %+v", got.Grid, want.Grid)
	}
	for i := range want.Panels {
		if got.Panels[i] != want.Panels[i] {
			t.Errorf("panel %d: %+v, want %+v", i, got.Panels[i], want.Panels[i])
		}
	}
	back := got.Record()
	for _, s := range rec.Signals {
		b := back.Signal(s.Lead)
		if b == nil || len(b.Samples) != len(s.Samples) || b.SampleRate != s.SampleRate {
			t.Fatalf("lead %v lost", s.Lead)
		}
		for k, v := range s.Samples {
			w := b.Samples[k]
			if math.IsNaN(v) != math.IsNaN(w) || (!math.IsNaN(v) && math.Abs(v-w) > 1e-6*math.Max(1, math.Abs(v))) {
				t.Fatalf("lead %v sample %d: %g, want %g", s.Lead, k, w, v)
			}
		}
	}
	if len(back.Beats) != len(rec.Beats) || back.Beats[0].PPeak != 0.3 || !math.IsNaN(back.Beats[1].PPeak) || back.Beats[0].Class != ecg.BeatNormal {
		t.Errorf("beats: %+v", back.Beats[:2])
	}
	// Corrupt and wrong-version sidecars are refused.
	for _, bad := range []string{"", "{", `{"version": 7}`} {
		if _, err := ReadTruth(bytes.NewBufferString(bad)); !errors.Is(err, ecg.ErrUnreadable) {
			t.Errorf("ReadTruth(%q) = %v, want ErrUnreadable", bad, err)
		}
	}
}

// TestBadInput: clear errors of the right class, never a panic.
func TestBadInput(t *testing.T) {
	rec := sineRecord(500, 10, 1, 1, 0)
	tests := []struct {
		name string
		rec  ecg.Record
		opt  Options
		want error
	}{
		{"empty record", ecg.Record{}, Options{}, ecg.ErrNoECG},
		{"bad layout", rec, Options{Layout: "5x5"}, ErrOption},
		{"bad paper", rec, Options{Paper: "A0"}, ErrOption},
		{"bad grid", rec, Options{Grid: Grid{Kind: "hex"}}, ErrOption},
		{"bad colour", rec, Options{Grid: Grid{Color: "#zz0000"}}, ErrOption},
		{"bad speed", rec, Options{SpeedMMPerS: -25}, ErrOption},
		{"bad dpi", rec, Options{DPI: 1e6}, ErrOption},
		{"huge strip", sineRecord(10, 20000, 1, 1, 0), Options{Paper: PaperStrip}, ErrOption},
		{"zero rate", ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, Samples: []float64{1}}}}, Options{}, ecg.ErrUnreadable},
		{"missing rhythm lead", rec, Options{Layout: LayoutRhythm, RhythmLead: ecg.LeadV7}, ecg.ErrNoECG},
	}
	for _, tc := range tests {
		if _, err := Render(tc.rec, &tc.opt); !errors.Is(err, tc.want) {
			t.Errorf("%s: err = %v, want %v", tc.name, err, tc.want)
		}
	}
	// NaN gaps and a record shorter than the page print without error.
	short := sineRecord(500, 3, 1, 1, 0)
	short.Signals[0].Samples[100] = math.NaN()
	if _, err := Render(short, &Options{DPI: 100}); err != nil {
		t.Errorf("short record: %v", err)
	}
}

// TestOddRecords: hostile sample values and rates print without panics.
func TestOddRecords(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	for k := 0; k < 20; k++ {
		var rec ecg.Record
		for _, l := range []ecg.Lead{ecg.LeadI, ecg.LeadII, ecg.LeadV1, ecg.LeadV5} {
			fs := []float64{1, 50, 257.3, 500, 10000}[rng.IntN(5)]
			n := rng.IntN(3000)
			s := make([]float64, n)
			for i := range s {
				switch rng.IntN(40) {
				case 0:
					s[i] = math.NaN()
				case 1:
					s[i] = math.Inf(1 - 2*rng.IntN(2))
				case 2:
					s[i] = 1e9 * (rng.Float64() - 0.5)
				default:
					s[i] = rng.NormFloat64()
				}
			}
			rec.Set(ecg.Signal{Lead: l, SampleRate: fs, Start: 5 * (rng.Float64() - 0.5), Samples: s})
		}
		lay := LayoutNames()[rng.IntN(len(LayoutNames()))]
		p, err := Render(rec, &Options{Layout: lay, DPI: 60})
		if err != nil {
			continue // a clear error is fine; a panic is not
		}
		var buf bytes.Buffer
		if err := p.WriteTruth(&buf); err != nil {
			t.Errorf("%s: truth: %v", lay, err)
		}
		if err := WritePDF(io.Discard, rec, &Options{Layout: lay}); err != nil {
			t.Errorf("%s: pdf: %v", lay, err)
		}
	}
}

func BenchmarkRenderA4(b *testing.B) {
	rec := testRecord(500, 10)
	h := DemoHeader(1)
	opt := &Options{Layout: Layout3x4R1, Header: &h}
	for b.Loop() {
		if _, err := Render(rec, opt); err != nil {
			b.Fatal(err)
		}
	}
}

// TestDeterministic: the same record and options give the same pixels
// and truth (the evaluation corpus relies on it), also with a scan.
func TestDeterministic(t *testing.T) {
	rec := testRecord(500, 10)
	o, err := ConditionOptions("scan", 11)
	if err != nil {
		t.Fatal(err)
	}
	o.DPI = 80
	o.Scan, err = ConditionScan("scan", 80, 11)
	if err != nil {
		t.Fatal(err)
	}
	var a, b [2]bytes.Buffer
	for _, buf := range []*[2]bytes.Buffer{&a, &b} {
		p, err := Render(rec, o)
		if err != nil {
			t.Fatal(err)
		}
		if err := p.WritePNG(&buf[0]); err != nil {
			t.Fatal(err)
		}
		if err := p.WriteTruth(&buf[1]); err != nil {
			t.Fatal(err)
		}
	}
	if !bytes.Equal(a[0].Bytes(), b[0].Bytes()) || !bytes.Equal(a[1].Bytes(), b[1].Bytes()) {
		t.Error("two renders of the same input differ")
	}
}

func BenchmarkWritePDF(b *testing.B) {
	rec := testRecord(500, 10)
	opt := &Options{Layout: Layout3x4R1}
	for b.Loop() {
		if err := WritePDF(io.Discard, rec, opt); err != nil {
			b.Fatal(err)
		}
	}
}
