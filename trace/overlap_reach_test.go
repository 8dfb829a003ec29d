package trace

import (
	"image"
	"math"
	"testing"
)

// TestReachPast checks the band heights reachPast gives on the row pitches
// of the common A4 layouts at 20 mm/mV (236 px/mV at 300 dpi): 3 × 4 rows
// 698 px apart reach 0.6 mV past the neighbour's baseline (840 px), closer
// rows keep the 3 mV band Pass 1 gave them, 12 × 1 rows their 1.5 pitches,
// and the top and bottom rows reach 4 mV on their open side.
func TestReachPast(t *testing.T) {
	const pxMV = 236.0
	reach3 := 3 * pxMV
	rowsAt := func(pitch float64, n int) []rowInfo {
		rs := make([]rowInfo, n)
		for i := range rs {
			rs[i].baseY = 300 + float64(i)*pitch
		}
		return rs
	}
	for _, tc := range []struct {
		name           string
		pitch          float64
		ri             int
		up, down       float64 // as Pass 1 set them
		wantUp, wantDn float64
	}{
		{"3x4 middle row", 698, 1, reach3, reach3, 698 + 0.6*pxMV, 698 + 0.6*pxMV},
		{"3x4 top row", 698, 0, reach3, reach3, 4 * pxMV, 698 + 0.6*pxMV},
		{"3x4 bottom row", 698, 2, reach3, reach3, 698 + 0.6*pxMV, 4 * pxMV},
		{"3x4+1 middle row", 520, 1, reach3, reach3, reach3, reach3},
		{"12x1 middle row", 200, 5, 300, 300, 300, 300},
		{"3x4 at 10 mm/mV", 698, 1, 1.5 * pxMV, 1.5 * pxMV, 2 * pxMV, 2 * pxMV},
	} {
		t.Run(tc.name, func(t *testing.T) {
			px := pxMV
			if tc.name == "3x4 at 10 mm/mV" {
				px = pxMV / 2
			}
			n := 12
			if tc.pitch > 400 {
				n = 3
			}
			up, down := reachPast(rowsAt(tc.pitch, n), tc.ri, tc.up, tc.down, px)
			if math.Abs(up-tc.wantUp) > 1e-9 || math.Abs(down-tc.wantDn) > 1e-9 {
				t.Errorf("up, down = %.1f, %.1f px; want %.1f, %.1f", up, down, tc.wantUp, tc.wantDn)
			}
		})
	}
}

// TestPenWidthIn: the pen width measured on the runs of a tall band cut to
// a smaller band is the one scanning the smaller band gives, whatever the
// extra rows hold.
func TestPenWidthIn(t *testing.T) {
	m := image.NewGray(image.Rect(0, 0, 200, 600))
	stroke(m, gaussWave(300, 150, 60, 2.5), 2)
	stroke(m, gaussWave(300, 120, 140, 2.5), 2)
	// Below the small band: two heavier traces (a bold pen, or a smudge).
	stroke(m, []Point{{0, 500}, {200, 500}}, 6)
	stroke(m, []Point{{0, 560}, {200, 560}}, 6)
	small := image.Rect(0, 100, 200, 450)
	var a, b columnRuns
	a.scan(m, small)
	b.scan(m, m.Rect)
	if want, got := penWidth(&a), penWidthIn(&b, small.Min.Y, small.Max.Y); got != want {
		t.Errorf("penWidthIn = %g px, scanning the band gives %g px", got, want)
	}
	if penWidth(&b) == penWidth(&a) {
		t.Errorf("the extra rows should change the whole band's median run (%g px)", penWidth(&b))
	}
}
