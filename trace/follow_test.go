package trace

import (
	"image"
	"math"
	"math/rand/v2"
	"testing"

	"tracelift/grid"
)

// stroke draws a polyline of round pen radius r (px) into m with ink 255.
func stroke(m *image.Gray, pts []Point, r float64) {
	for i := 0; i+1 < len(pts); i++ {
		a, b := pts[i], pts[i+1]
		n := int(math.Ceil(math.Hypot(b.X-a.X, b.Y-a.Y)*4)) + 1
		for k := 0; k <= n; k++ {
			f := float64(k) / float64(n)
			disk(m, a.X+f*(b.X-a.X), a.Y+f*(b.Y-a.Y), r)
		}
	}
}

func disk(m *image.Gray, cx, cy, r float64) {
	for y := int(cy - r - 1); y <= int(cy+r+1); y++ {
		for x := int(cx - r - 1); x <= int(cx+r+1); x++ {
			if (image.Point{x, y}).In(m.Rect) && math.Hypot(float64(x)-cx, float64(y)-cy) <= r {
				m.Pix[y*m.Stride+x] = 255
			}
		}
	}
}

// followMask runs the path finder over the whole mask with the baseline
// at y = base.
func followMask(m *image.Gray, base float64) pathResult {
	var cr columnRuns
	cr.scan(m, m.Rect)
	return follow(&cr, defaultFollow(10, base))
}

// yAt returns the path's y at column x (the mean if there are two points).
func yAt(pts []Point, x float64) (float64, bool) {
	s, n := 0.0, 0
	for _, p := range pts {
		if math.Abs(p.X-x) < 0.3 {
			s += p.Y
			n++
		}
	}
	if n == 0 {
		return math.NaN(), false
	}
	return s / float64(n), true
}

func minY(pts []Point, x0, x1 float64) float64 {
	m := math.Inf(1)
	for _, p := range pts {
		if p.X >= x0 && p.X <= x1 {
			m = math.Min(m, p.Y)
		}
	}
	return m
}

func maxY(pts []Point, x0, x1 float64) float64 {
	m := math.Inf(-1)
	for _, p := range pts {
		if p.X >= x0 && p.X <= x1 {
			m = math.Max(m, p.Y)
		}
	}
	return m
}

func TestFollowFlatSubpixel(t *testing.T) {
	// A flat trace whose centre line sits between pixel rows: the
	// ink-weighted centre recovers it within a quarter pixel.
	m := image.NewGray(image.Rect(0, 0, 200, 100))
	for x := 0; x < 200; x++ {
		m.Pix[49*m.Stride+x] = 128
		m.Pix[50*m.Stride+x] = 255
		m.Pix[51*m.Stride+x] = 255
		m.Pix[52*m.Stride+x] = 128
	}
	pr := followMask(m, 50)
	if pr.onInk != 200 {
		t.Fatalf("onInk = %d, want 200", pr.onInk)
	}
	for _, p := range pr.points {
		if math.Abs(p.Y-50.5) > 0.25 {
			t.Fatalf("point %v: want y 50.5", p)
		}
	}
}

func TestFollowSteepPeaks(t *testing.T) {
	// A narrow R wave up to y = 20 and an S wave down to y = 130 from a
	// baseline at 100, drawn with a 2.5-px-radius pen: the path must keep
	// both extremes within a pixel (the amplitude of steep peaks).
	m := image.NewGray(image.Rect(0, 0, 200, 160))
	line := []Point{{0, 100}, {90, 100}, {95, 20}, {100, 130}, {104, 100}, {200, 100}}
	stroke(m, line, 2.5)
	pr := followMask(m, 100)
	if top := minY(pr.points, 88, 102); math.Abs(top-20) > 1.0 {
		t.Errorf("R apex at y %.2f, want 20 ± 1", top)
	}
	if bot := maxY(pr.points, 95, 106); math.Abs(bot-130) > 1.0 {
		t.Errorf("S nadir at y %.2f, want 130 ± 1", bot)
	}
	// Halfway up the rising stroke the centre line is at (92.5, 60).
	if y, ok := yAt(pr.points, 92); !ok || math.Abs(y-68) > 2.5 {
		t.Errorf("rising stroke at x 92: y %.2f, want 68 ± 2.5", y)
	}
}

func TestFollowCrossingMark(t *testing.T) {
	// A pen mark crosses the trace vertically and a long diagonal stroke
	// crosses it too; the path keeps the trace's level at the crossings.
	m := image.NewGray(image.Rect(0, 0, 300, 160))
	stroke(m, []Point{{0, 80}, {300, 80}}, 1.5)
	stroke(m, []Point{{100, 0}, {100, 159}}, 1.5)
	stroke(m, []Point{{150, 10}, {230, 150}}, 1.5)
	pr := followMask(m, 80)
	for _, x := range []float64{99, 100, 101, 190, 191, 192} {
		y, ok := yAt(pr.points, x)
		if !ok || math.Abs(y-80) > 1.5 {
			t.Errorf("x %g: y %.2f, want 80 ± 1.5", x, y)
		}
	}
}

func TestFollowGapAndIntrusion(t *testing.T) {
	// The trace has a 12-column drop-out (fax) and a neighbouring row's
	// spike reaches down to 8 px above it without touching; a text blob
	// sits above the trace. The path must bridge the gap at the trace's
	// level and never visit the spike or the text.
	m := image.NewGray(image.Rect(0, 0, 300, 160))
	stroke(m, []Point{{0, 100}, {120, 100}}, 1.5)
	stroke(m, []Point{{132, 100}, {300, 100}}, 1.5)
	stroke(m, []Point{{196, 0}, {200, 90}, {204, 0}}, 1.5) // intruding spike
	for y := 60; y < 75; y++ {                             // text blob
		for x := 40; x < 70; x++ {
			if (x/3+y/3)%2 == 0 {
				m.Pix[y*m.Stride+x] = 255
			}
		}
	}
	pr := followMask(m, 100)
	for _, p := range pr.points {
		if math.Abs(p.Y-100) > 1.5 {
			t.Fatalf("path left the trace at %v", p)
		}
	}
	if pr.onInk < 300-12-2 {
		t.Errorf("onInk = %d, want ≥ 286", pr.onInk)
	}
	// The samples bridge the gap (12 px < 4 mm at 10 px/mm).
	cal := testCal(10)
	vals := sampleRow(pr.points, 0, 0, 1.2, cal, 100, 250, 300)
	for k := 0; k < 300; k++ {
		if float64(k)/250 >= 1.2 {
			break
		}
		if math.IsNaN(vals[k]) || math.Abs(vals[k]) > 0.02 {
			t.Fatalf("sample %d = %v, want 0 mV", k, vals[k])
		}
	}
}

func testCal(pxPerMM float64) grid.Calibration {
	return grid.Calibration{
		PxPerMMX:    grid.Value{V: pxPerMM, Origin: grid.FromOption},
		PxPerMMY:    grid.Value{V: pxPerMM, Origin: grid.FromOption},
		SpeedMMPerS: grid.Value{V: 25, Origin: grid.FromDefault},
		GainMMPerMV: grid.Value{V: 10, Origin: grid.FromDefault},
	}
}

// TestFollowNarrowPeakOnNoisyTrace draws a 3.5 px pen (0.3 mm at 300 dpi,
// a common printer pen) along a trace with sample-to-sample jitter, which
// makes most vertical runs twice the pen's height, and a narrow R peak
// (180 px up and down within 10 px). The apex must keep its height: pen
// bounds taken from the inflated run heights once cut it by ≈ 40 px.
func TestFollowNarrowPeakOnNoisyTrace(t *testing.T) {
	const base, apex = 300.0, 120.0
	rng := rand.New(rand.NewPCG(5, 5))
	m := image.NewGray(image.Rect(0, 0, 200, 400))
	var pts []Point
	for x := 0.0; x < 200; x++ {
		y := base + 8*(rng.Float64()-0.5)
		switch {
		case x >= 95 && x <= 100:
			y = base - (base-apex)*(x-95)/5
		case x > 100 && x <= 105:
			y = apex + (base-apex)*(x-100)/5
		}
		pts = append(pts, Point{x, y})
	}
	stroke(m, pts, 1.75)
	pr := followMask(m, base)
	if got := minY(pr.points, 90, 110); math.Abs(got-apex) > 3 {
		t.Errorf("apex at y = %.1f px, drawn at %.0f (pen median %.0f px)", got, apex, pr.penPx)
	}
}

// TestFollowWideCrossingStroke draws a flat trace crossed by a near-
// vertical stroke several columns wide that reaches far above and below
// it, as a tall QRS stroke of a neighbouring row does on a 20 mm/mV page
// (the thin mark of TestFollowCrossingMark spans one or two columns). The
// path keeps the trace's level in every column of the stroke instead of
// jumping to the stroke's ends.
func TestFollowWideCrossingStroke(t *testing.T) {
	const base = 100.0
	tests := []struct {
		name  string
		other []Point
		pen   float64
	}{
		{"vertical, 7 px wide", []Point{{100, 0}, {100, 199}}, 3},
		{"slanted down-stroke", []Point{{96, 0}, {104, 199}}, 3},
		{"slanted up-stroke", []Point{{104, 0}, {96, 199}}, 3},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m := image.NewGray(image.Rect(0, 0, 200, 200))
			stroke(m, []Point{{0, base}, {200, base}}, 1.5)
			stroke(m, tc.other, tc.pen)
			pr := followMask(m, base)
			for _, p := range pr.points {
				if math.Abs(p.Y-base) > 2 {
					t.Errorf("path at (%.2f, %.1f): left the trace at y %g", p.X, p.Y, base)
				}
			}
		})
	}
}

// TestFollowNeighbourCrossing draws a flat trace crossed by a tall complex
// of a neighbouring row (20 mm/mV pages and 12 × 1 layouts print such
// complexes across the rows next to them): a neighbour's S wave coming
// down from above and reaching past the trace, a neighbour's R wave
// coming up from below, and a trace's own R wave beside a crossing S
// wave. The path must keep the trace's level where the neighbour's
// strokes cross it and keep its own R apex.
func TestFollowNeighbourCrossing(t *testing.T) {
	const base = 100.0
	tests := []struct {
		name    string
		own     []Point // the row's own trace
		other   []Point // the neighbour's complex
		flatX   [2]float64
		apex    float64 // y of the own R apex, 0 = none
		apexWin [2]float64
	}{
		{"own R beside a crossing S wave", []Point{{0, base}, {88, base}, {92, 30}, {96, base}, {200, base}}, []Point{{106, 0}, {110, 160}, {114, 0}}, [2]float64{100, 125}, 30, [2]float64{85, 99}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m := image.NewGray(image.Rect(0, 0, 200, 200))
			stroke(m, tc.own, 1.5)
			stroke(m, tc.other, 1.5)
			pr := followMask(m, base)
			for _, p := range pr.points {
				if p.X >= tc.flatX[0] && p.X <= tc.flatX[1] && math.Abs(p.Y-base) > 2 {
					t.Errorf("path at (%.1f, %.1f): left the flat trace at y %g for the neighbour's stroke", p.X, p.Y, base)
				}
			}
			if tc.apex > 0 {
				if got := minY(pr.points, tc.apexWin[0], tc.apexWin[1]); math.Abs(got-tc.apex) > 1.5 {
					t.Errorf("own R apex at y %.1f, drawn at %g", got, tc.apex)
				}
			}
		})
	}
}

// TestFollowSteepPeakBesideJitter draws a trace whose sample-to-sample
// jitter makes its vertical runs ≈ 2 mm tall (at 10 px/mm), and a
// near-vertical R wave (up 15 mm within 3 columns and down within 3, as
// 20 mm/mV pages print tall complexes). Pen bounds built from the
// inflated run heights held such apexes down towards the flat trace's
// level (65 px, 6.5 mm, short); with the bound radius capped at
// maxPenRadiusMM the apex comes within 15 px (the 0.3 mm radius is twice
// this pen's; a smaller cap scored worse on the overlap corpus), and must
// stay within 2 mm.
func TestFollowSteepPeakBesideJitter(t *testing.T) {
	const base, apex = 300.0, 150.0
	rng := rand.New(rand.NewPCG(9, 9))
	m := image.NewGray(image.Rect(0, 0, 200, 400))
	var pts []Point
	for x := 0.0; x < 200; x++ {
		y := base + 20*(rng.Float64()-0.5)
		switch {
		case x >= 97 && x <= 100:
			y = base - (base-apex)*(x-97)/3
		case x > 100 && x <= 103:
			y = apex + (base-apex)*(x-100)/3
		}
		pts = append(pts, Point{x, y})
	}
	stroke(m, pts, 1.75)
	pr := followMask(m, base)
	if got := minY(pr.points, 90, 110); math.Abs(got-apex) > 20 {
		t.Errorf("apex at y = %.1f px, drawn at %.0f (pen median %.0f px)", got, apex, pr.penPx)
	}
}

// TestFollowRuledLineOnTrace: a major grid line left in the ink map (a
// grey scan's structural split keeps its stretch between the grid's
// border and the trace) stands on a flat trace; it is one column wide
// with fragments in the next, so no pen could have drawn it, and the path
// keeps the trace's level there instead of climbing it (on the grey
// 3x4+3 page of seed 3 such lines made every QRS of the top row a 20 mm
// spike: aVR 2.1 dB, I 4.8 dB). A pen-wide spike keeps its apex
// (TestFollowSteepPeaks).
func TestFollowRuledLineOnTrace(t *testing.T) {
	m := image.NewGray(image.Rect(0, 0, 200, 140))
	stroke(m, []Point{{0, 110}, {200, 110}}, 2)
	for y := 5; y <= 110; y++ {
		m.Pix[y*m.Stride+80] = 200
		if y >= 60 && (y >= 95 || y%7 != 0) {
			m.Pix[y*m.Stride+81] = 200 // the line's broken second column
		}
	}
	pr := followMask(m, 110)
	for _, x := range []float64{78, 79, 82, 83} {
		if y, ok := yAt(pr.points, x); !ok || math.Abs(y-110) > 1.5 {
			t.Errorf("x %g: y %.2f, want 110 ± 1.5", x, y)
		}
	}
	// Beside the line, column 81 holds ink from 95 px down to the trace,
	// which pulls the level there by a few px; never up the line.
	if top := minY(pr.points, 70, 90); top < 100 {
		t.Errorf("the path climbs the ruled line to y %.1f", top)
	}
}

// TestFollowOwnApexBesideNeighbourStroke: a narrow R wave rises 60 mm
// from the trace while the next row's R wave, printed in the same columns
// a pixel later, rises from 59 mm below into this row, its apex 18 mm
// above this row's baseline (a 3 × 4 page at 20 mm/mV with R waves of
// 3–4 mV). In those columns the neighbour's stroke is the tallest run and
// holds this row's baseline; the path must still climb its own stroke to
// its apex, not pass through the neighbour's (maxInkRewardMM: with the
// ink reward paid for the full 60 mm of the neighbour's runs it read
// 10 mm of the 60).
func TestFollowOwnApexBesideNeighbourStroke(t *testing.T) {
	m := image.NewGray(image.Rect(0, 0, 200, 1300))
	const base, apex = 650.0, 50.0
	stroke(m, gaussWave(base, base-apex, 95, 2.2), 2)
	stroke(m, gaussWave(1240, 1240-(base-180), 96, 2.2), 2)
	pr := followMask(m, base)
	if y := minY(pr.points, 88, 104); y > apex+20 {
		t.Errorf("apex read at y = %.0f px, drawn at %.0f px (%.1f of %.1f mm)", y, apex, (base-y)/10, (base-apex)/10)
	}
	for _, x := range []float64{40, 150} {
		if y, ok := yAt(pr.points, x); !ok || math.Abs(y-base) > 1 {
			t.Errorf("x = %.0f: y = %.1f, want the trace at %.0f", x, y, base)
		}
	}
}

// gaussWave is a 200 px trace at y = base with a Gaussian wave of height h
// px (upwards) centred at x = xc, σ = sigma px, sampled every 0.25 px.
func gaussWave(base, h, xc, sigma float64) []Point {
	var pts []Point
	for x := 0.0; x <= 200; x += 0.25 {
		d := (x - xc) / sigma
		pts = append(pts, Point{x, base - h*math.Exp(-d*d/2)})
	}
	return pts
}

// TestFollowDeepSThroughNeighbourR: a deep S wave goes down 49 mm while
// the next row's R wave, 52 mm lower, rises 36 mm in the same columns (an
// aVR over an aVL at 20 mm/mV): the strokes merge into single runs from
// the S wave's flanks down to the R wave's base. A pen going down keeps
// going down through the merged runs to its trough; the path must not
// turn back at the R wave's apex.
func TestFollowDeepSThroughNeighbourR(t *testing.T) {
	m := image.NewGray(image.Rect(0, 0, 200, 900))
	const base, trough = 300.0, 790.0
	stroke(m, gaussWave(base, base-trough, 95, 2.8), 2.5)
	stroke(m, gaussWave(820, 360, 95.3, 2.5), 2.5)
	pr := followMask(m, base)
	if y := maxY(pr.points, 85, 105); y < trough-20 {
		t.Errorf("S wave read down to y = %.0f px, drawn to %.0f px (%.1f of %.1f mm)", y, trough, (y-base)/10, (trough-base)/10)
	}
	for _, x := range []float64{40, 150} {
		if y, ok := yAt(pr.points, x); !ok || math.Abs(y-base) > 1 {
			t.Errorf("x = %.0f: y = %.1f, want the trace at %.0f", x, y, base)
		}
	}
}

// TestFollowFinePenOnNoisyTrace draws a noisy trace (a 500 Hz sample
// every 0.6 px jittering ±6 px, as 20 µV of noise prints at 20 mm/mV)
// with a narrow 400 px R wave (σ 3 px), in a 3.5 px pen, at 11.8 px/mm. The runs are all tall
// with the jitter, and the radius taken from them holds the R wave's apex
// and flanks low; with the pen's width from a calibration pulse the fine
// reading keeps them (follow_fine.go).
func TestFollowFinePenOnNoisyTrace(t *testing.T) {
	const base, h, xc, sigma = 500.0, 400.0, 100.0, 3.0
	rng := rand.New(rand.NewPCG(7, 7))
	m := image.NewGray(image.Rect(0, 0, 200, 600))
	truth := func(x float64) float64 {
		d := (x - xc) / sigma
		return base - h*math.Exp(-d*d/2)
	}
	var pts []Point
	for x := 0.0; x < 200; x += 0.6 {
		pts = append(pts, Point{x, truth(x) + 12*(rng.Float64()-0.5)})
	}
	stroke(m, pts, 1.75)
	var cr columnRuns
	cr.scan(m, m.Rect)
	p := defaultFollow(11.8, base)
	guarded := follow(&cr, p)
	p.pulsePen = 4
	pr := follow(&cr, p)
	if pr.fine == nil {
		t.Fatalf("no fine reading (pen median %.0f px)", pr.penPx)
	}
	fine := make([]Point, len(pr.points))
	for i, q := range pr.points {
		fine[i] = q
		if y, ok := pr.fine[[2]float64{q.X, q.Y}]; ok {
			fine[i].Y = y
		}
	}
	// RMS error against the drawn wave over the QRS (the jitter is ±6
	// px: what is left beyond it is the reading's own).
	rms := func(pts []Point) float64 {
		s, n := 0.0, 0
		for x := xc - 12; x <= xc+12; x++ {
			if y, ok := yAt(pts, x); ok {
				s += (y - truth(x)) * (y - truth(x))
				n++
			}
		}
		return math.Sqrt(s / float64(n))
	}
	eg, ef := rms(guarded.points), rms(fine)
	if ef > 10 || ef > 0.6*eg {
		t.Errorf("QRS read %.1f px RMS off with the pulse's pen, %.1f px without", ef, eg)
	}
	if got := minY(fine, xc-3, xc+3); math.Abs(got-(base-h)) > 8 {
		t.Errorf("apex at y = %.1f px, drawn at %.0f", got, base-h)
	}
	t.Logf("QRS RMS error: guarded %.1f px, fine %.1f px; apex %.1f (drawn %.0f), guarded %.1f", eg, ef, minY(fine, xc-3, xc+3), base-h, minY(guarded.points, xc-3, xc+3))
}
