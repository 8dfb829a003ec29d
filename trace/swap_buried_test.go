package trace

import (
	"image"
	"math"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/grid"
)

// buriedPage builds one row of a 2 s panel (10 px/mm, 25 mm/s, 10 mm/mV:
// 1 px per sample at 250 Hz, 100 px per mV; 0 mV at y = 150, band
// 0–300) whose trace, 3 px thick, is flat at 0 mV. blocks are solid ink
// rectangles laid over it (other rows' strokes); the path is the trace's
// flat line at level y throughout (as pathPoints keeps the level through
// a crossing run), and vals are read from it.
func buriedPage(level float64, blocks ...image.Rectangle) (*image.Gray, grid.Calibration, []*Panel, [][]float64, []float64) {
	const n = 500
	cal := grid.Calibration{
		PxPerMMX: grid.Value{V: 10}, PxPerMMY: grid.Value{V: 10},
		SpeedMMPerS: grid.Value{V: 25}, GainMMPerMV: grid.Value{V: 10},
	}
	ink := image.NewGray(image.Rect(0, 0, n, 300))
	fill := func(r image.Rectangle) {
		r = r.Intersect(ink.Rect)
		for y := r.Min.Y; y < r.Max.Y; y++ {
			for x := r.Min.X; x < r.Max.X; x++ {
				ink.Pix[y*ink.Stride+x] = 255
			}
		}
	}
	yl := int(math.Round(level))
	fill(image.Rect(0, yl-1, n, yl+2))
	for _, b := range blocks {
		fill(b)
	}
	pn := &Panel{Lead: ecg.LeadAVL, Row: 0, T0: 0, T1: 2, ZeroY: 150, Bounds: image.Rect(0, 0, n, 300)}
	v := make([]float64, n)
	for x := range n {
		pn.Path = append(pn.Path, Point{float64(x), level})
		v[x] = (pn.ZeroY - level) / 100
	}
	return ink, cal, []*Panel{pn}, [][]float64{v}, []float64{0}
}

// withheldSpan returns the first and last withheld sample (-1, -1 when
// none) and their count.
func withheldSpan(v []float64) (first, last, count int) {
	first, last = -1, -1
	for i, x := range v {
		if math.IsNaN(x) {
			if first < 0 {
				first = i
			}
			last = i
			count++
		}
	}
	return first, last, count
}

// TestWithholdBuriedMass: the path holds 0 mV for 48 ms (1.2 mm) inside a solid
// mass of ink reaching 9 mm above and below it (several rows' QRS strokes
// merged): those samples are withheld, padded by 2 ms, with a warning
// naming the lead; the rest of the lead is kept.
func TestWithholdBuriedMass(t *testing.T) {
	ink, cal, panels, vals, xs := buriedPage(150, image.Rect(100, 60, 112, 241))
	warn := withholdBuried(ink, cal, 250, panels, vals, nil, xs, defaultBuried)
	if len(warn) != 1 || !strings.Contains(warn[0], "aVL") {
		t.Fatalf("warnings %q, want one naming aVL", warn)
	}
	first, last, count := withheldSpan(vals[0])
	// Samples 100–111 (the mass), widened by padS (2 ms = 0.5 sample,
	// rounded to 1 by math.Round's half away from zero).
	if first != 99 || last != 112 || count != 14 {
		t.Errorf("withheld %d samples from %d to %d, want 14 from 99 to 112", count, first, last)
	}
}

// TestWithholdBuriedKeeps: what the check leaves alone.
func TestWithholdBuriedKeeps(t *testing.T) {
	for _, tc := range []struct {
		name   string
		level  float64
		blocks []image.Rectangle
	}{
		// Another row's stroke (4 px wide: a 0.3 mm pen and its slant)
		// crossing the flat trace: 12 ms at most, narrower than minMM (0.4 mm).
		{"one crossing stroke", 150, []image.Rectangle{image.Rect(200, 20, 204, 280)}},
		// The mass reaches only 1.5 mm below the path: the path is on a
		// stroke's end, not inside a mass.
		{"mass ending below the path", 150, []image.Rectangle{image.Rect(100, 40, 112, 166)}},
		// The level is 0.5 mV above the row's 0 mV line: an apex of the
		// lead's own (or clipped) stroke, not the line kept through.
		{"level away from 0 mV", 100, []image.Rectangle{image.Rect(100, 10, 112, 200)}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ink, cal, panels, vals, xs := buriedPage(tc.level, tc.blocks...)
			if warn := withholdBuried(ink, cal, 250, panels, vals, nil, xs, defaultBuried); len(warn) != 0 {
				t.Errorf("warnings %q, want none", warn)
			}
			if _, _, c := withheldSpan(vals[0]); c != 0 {
				t.Errorf("%d samples withheld, want none", c)
			}
		})
	}
}

// TestWithholdBuriedKeepsReRead: samples the limb check re-read (they
// differ from keep) are not withheld.
func TestWithholdBuriedKeepsReRead(t *testing.T) {
	ink, cal, panels, vals, xs := buriedPage(150, image.Rect(100, 60, 112, 241))
	keep := [][]float64{append([]float64(nil), vals[0]...)}
	for i := 100; i < 112; i++ {
		vals[0][i] = 0.9 // re-read at the identities' value
	}
	withholdBuried(ink, cal, 250, panels, vals, keep, xs, defaultBuried)
	for i := 100; i < 112; i++ {
		if vals[0][i] != 0.9 {
			t.Fatalf("sample %d = %v, want the re-read 0.9 kept", i, vals[0][i])
		}
	}
}

// BenchmarkWithholdBuried: one 2 s panel with a merged mass (the check
// scans at most 2 mm of ink above and below each path point).
func BenchmarkWithholdBuried(b *testing.B) {
	ink, cal, panels, vals, xs := buriedPage(150, image.Rect(100, 60, 112, 241), image.Rect(300, 60, 330, 241))
	v := make([]float64, len(vals[0]))
	for b.Loop() {
		copy(v, vals[0])
		withholdBuried(ink, cal, 250, panels, [][]float64{v}, nil, xs, defaultBuried)
	}
}
