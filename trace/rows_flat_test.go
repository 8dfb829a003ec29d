package trace

import (
	"image"
	"testing"
)

// TestDropFlatRows: a trace with complexes is kept, a straight line
// without a pulse (a rule, the sheet's edge) and the edge of a solid dark
// region are dropped, a straight line with a pulse is kept (a lead at 0 mV
// with its pulse is still a printed lead).
func TestDropFlatRows(t *testing.T) {
	const px = 4.0
	ink := image.NewGray(image.Rect(0, 0, 1200, 400))
	set := func(x, y int) { ink.Pix[y*ink.Stride+x] = 255 }
	// Row at y 60: trace with a 2 mm bump every 25 mm.
	for x := 100; x < 1100; x++ {
		y := 60
		if (x-100)%100 < 10 {
			y = 52
		}
		set(x, y)
	}
	// Rows at y 140 and 220: straight lines.
	for x := 100; x < 1100; x++ {
		set(x, 140)
		set(x, 220)
	}
	// Row at y 320: top edge of a solid region with a 2 mm spike on 4 %
	// of its columns (relief 0.04: only the fill tells it from a flat
	// trace).
	for x := 100; x < 1100; x++ {
		y0 := 320
		if (x-100)%100 < 4 {
			y0 = 312
		}
		for y := y0; y < 400; y++ {
			set(x, y)
		}
	}
	rows := []rowInfo{
		{baseY: 60, x0: 100, x1: 1100},
		{baseY: 140, x0: 100, x1: 1100},
		{baseY: 220, x0: 100, x1: 1100, hasPulse: true},
		{baseY: 320, x0: 100, x1: 1100},
	}
	if rel := rowRelief(ink, rows[3], 24, px, px); rel < minRelief || rel > 0.1 {
		t.Fatalf("solid edge relief %.3f, want between %g and 0.1 for this test", rel, minRelief)
	}
	got := dropFlatRows(ink, rows, px, px)
	var ys []float64
	for _, r := range got {
		ys = append(ys, r.baseY)
	}
	if len(ys) != 2 || ys[0] != 60 || ys[1] != 220 {
		t.Errorf("kept rows at %v, want [60 220]", ys)
	}
}

// TestDropCrowdedRows: a profile peak between two rows of a regular page
// (at under 0.6 of the pitch from both) is dropped unless it has a pulse.
func TestDropCrowdedRows(t *testing.T) {
	ys := []float64{100, 156, 212, 240, 268, 324}
	mk := func(pulseAt float64) []rowInfo {
		var rows []rowInfo
		for _, y := range ys {
			rows = append(rows, rowInfo{baseY: y, hasPulse: y == pulseAt})
		}
		return rows
	}
	got := dropCrowdedRows(mk(0))
	if len(got) != 5 {
		t.Fatalf("%d rows kept, want 5", len(got))
	}
	for _, r := range got {
		if r.baseY == 240 {
			t.Error("the row between two rows was kept")
		}
	}
	if got := dropCrowdedRows(mk(240)); len(got) != 6 {
		t.Errorf("%d rows kept, want all 6 (the crowded row has a pulse)", len(got))
	}
}
