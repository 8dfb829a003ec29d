package trace

import (
	"image"
	"math"
	"testing"

	"tracelift/grid"
)

// TestFindPulsePenFromItsTop: the pulse's pen width, which places its
// foot, its height and the trace start (the falling stroke's centre plus
// the 2 mm tail), is read from the pulse's own flat top. Drawn: a 10 mm
// pulse 5 mm wide (1 mV at 10 mm/mV, standards.md §1.1) with a 5 px pen
// at 10 px/mm, and beside it, inside the pulse search band, the strokes
// of tall complexes from the rows above (two 5 mm runs per column over
// 27 mm, as on a page of overlapping rows): they made the band's median
// run 51 px, which put the trace start 23 px (2.3 mm, 92 ms at 25 mm/s)
// early, the foot 23 px high and the pulse 4.6 mm short (measured before
// the fix).
func TestFindPulsePenFromItsTop(t *testing.T) {
	const px = 10.0
	const b = 500 // baseline row
	ink := image.NewGray(image.Rect(0, 0, 1000, 560))
	fill := func(x0, x1, y0, y1 int) {
		for y := y0; y <= y1; y++ {
			for x := x0; x <= x1; x++ {
				ink.Pix[y*ink.Stride+x] = 255
			}
		}
	}
	yt := b - 100
	fill(100, 990, b-2, b+2)   // lead-in and trace, 5 px pen
	fill(128, 132, yt-2, b+2)  // rising stroke at x 130
	fill(130, 180, yt-2, yt+2) // flat top
	fill(178, 182, yt-2, b+2)  // falling stroke at x 180
	for x := 230; x < 500; x++ {
		fill(x, x, b-300, b-250) // other rows' strokes
		fill(x, x, b-200, b-150)
	}
	cal := grid.Calibration{PxPerMMX: grid.Value{V: px}, PxPerMMY: grid.Value{V: px}}
	r := rowInfo{baseY: b, zeroY: math.NaN(), x0: 100, x1: 990, traceX0: 100}
	findPulse(ink, &r, cal)
	if !r.hasPulse {
		t.Fatal("pulse not found")
	}
	if want := 180 + pulseTailMM*px; math.Abs(r.traceX0-want) > 0.5 {
		t.Errorf("trace starts at %.1f px, want %.0f", r.traceX0, want)
	}
	if math.Abs(r.zeroY-b) > 0.5 {
		t.Errorf("0 mV at %.1f px, want %d", r.zeroY, b)
	}
	if math.Abs(r.pulseMM-10) > 0.1 {
		t.Errorf("pulse %.2f mm, want 10", r.pulseMM)
	}
}
