package grid

import (
	"image"
	"math/rand/v2"
	"reflect"
	"testing"
)

// TestVerticalRunsMatchColumnScan: the row-by-row run finder returns, for
// every column, the runs a plain scan down that column finds (runs
// touching the top and bottom edges, lengths at both bounds).
func TestVerticalRunsMatchColumnScan(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	const w, h, on = 57, 83, 110
	ink := image.NewGray(image.Rect(0, 0, w, h))
	for x := 0; x < w; x++ {
		// Runs of random lengths (1–30 px) alternating with gaps.
		y, in := 0, rng.IntN(2) == 0
		for y < h {
			n := 1 + rng.IntN(30)
			for k := 0; k < n && y < h; k, y = k+1, y+1 {
				v := uint8(rng.IntN(on))
				if in {
					v = uint8(on + rng.IntN(256-on))
				}
				ink.Pix[y*ink.Stride+x] = v
			}
			in = !in
		}
	}
	for _, b := range [][2]int{{1, h}, {6, 20}, {10, 10}} {
		got := verticalRuns(ink, on, b[0], b[1])
		for x := 0; x < w; x++ {
			var want [][2]int
			for y := 0; y < h; {
				if ink.Pix[y*ink.Stride+x] < on {
					y++
					continue
				}
				y0 := y
				for y < h && ink.Pix[y*ink.Stride+x] >= on {
					y++
				}
				if l := y - y0; l >= b[0] && l <= b[1] {
					want = append(want, [2]int{y0, y - 1})
				}
			}
			if !reflect.DeepEqual(got[x], want) {
				t.Fatalf("runs %v, column %d: %v, want %v", b, x, got[x], want)
			}
		}
	}
}
