package grid

import (
	"image"
	"math/rand/v2"
	"testing"
)

// TestProfileSums: the column and row profiles are the plain sums of the
// map's columns and rows (a sub-image with a stride wider than its rows).
func TestProfileSums(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	full := image.NewGray(image.Rect(0, 0, 61, 45))
	for i := range full.Pix {
		full.Pix[i] = uint8(rng.IntN(256))
	}
	m := full.SubImage(image.Rect(3, 2, 50, 41)).(*image.Gray)
	w, h := m.Rect.Dx(), m.Rect.Dy()
	cols, rows := profile(m, true), profile(m, false)
	if len(cols) != w || len(rows) != h {
		t.Fatalf("profile lengths %d, %d; want %d, %d", len(cols), len(rows), w, h)
	}
	for x := 0; x < w; x++ {
		s := 0.0
		for y := 0; y < h; y++ {
			s += float64(m.GrayAt(m.Rect.Min.X+x, m.Rect.Min.Y+y).Y)
		}
		if cols[x] != s {
			t.Fatalf("column %d: %g, want %g", x, cols[x], s)
		}
	}
	for y := 0; y < h; y++ {
		s := 0.0
		for x := 0; x < w; x++ {
			s += float64(m.GrayAt(m.Rect.Min.X+x, m.Rect.Min.Y+y).Y)
		}
		if rows[y] != s {
			t.Fatalf("row %d: %g, want %g", y, rows[y], s)
		}
	}
}
