package grid

import (
	"image"
	"math/rand/v2"
	"reflect"
	"testing"
)

// randomMap returns a w×h grey map (stride w+3, so rows do not touch)
// whose pixels are 0 with probability 1−p and otherwise uniform in lo..255:
// sparse ink or dense grid, and all-255 runs long enough to fill a lane.
func randomMap(rng *rand.Rand, w, h int, p float64, lo int) *image.Gray {
	g := &image.Gray{Pix: make([]uint8, (w+3)*h), Stride: w + 3, Rect: image.Rect(0, 0, w, h)}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			if rng.Float64() < p {
				g.Pix[y*g.Stride+x] = uint8(lo + rng.IntN(256-lo))
			}
		}
	}
	return g
}

// The word-at-a-time helpers against pixel-by-pixel loops (the code they
// replaced): odd widths, maps taller than a lane holds (600 rows of 255),
// thresholds on both sides of 128.
func TestWordSumsExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	for _, tc := range []struct {
		w, h int
		p    float64
		lo   int
	}{
		{1, 5, 0.5, 0}, {7, 9, 0.9, 0}, {8, 600, 1, 255}, {13, 300, 1, 250},
		{67, 520, 0.05, 100}, {200, 40, 0.5, 0}, {1031, 33, 0.02, 0},
	} {
		g := randomMap(rng, tc.w, tc.h, tc.p, tc.lo)
		want := make([]uint64, tc.w)
		for y := 0; y < tc.h; y++ {
			s := 0
			for x := 0; x < tc.w; x++ {
				v := g.Pix[y*g.Stride+x]
				want[x] += uint64(v)
				s += int(v)
			}
			if got := rowSum(g.Pix[y*g.Stride : y*g.Stride+tc.w]); got != s {
				t.Fatalf("%d×%d row %d: rowSum %d, want %d", tc.w, tc.h, y, got, s)
			}
		}
		got := make([]uint64, tc.w)
		columnSums(got, g)
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%d×%d: columnSums differ from the pixel-by-pixel sums", tc.w, tc.h)
		}
		cols := make([]int, tc.w)
		for y := 0; y < tc.h; y += 2 {
			for x := 0; x < tc.w; x++ {
				if g.Pix[y*g.Stride+x] >= 128 {
					cols[x]++
				}
			}
		}
		if gc := inkColumns(g); !reflect.DeepEqual(gc, cols) {
			t.Errorf("%d×%d: inkColumns differ from the pixel-by-pixel counts", tc.w, tc.h)
		}
		for _, on := range []uint8{1, 60, 110, 128, 129, 200, 255} {
			if got, want := verticalRuns(g, on, 2, 50), refVerticalRuns(g, on, 2, 50); !reflect.DeepEqual(got, want) {
				t.Errorf("%d×%d on=%d: verticalRuns differ from the pixel-by-pixel runs", tc.w, tc.h, on)
			}
		}
	}
}

func TestAnyAtLeast(t *testing.T) {
	for on := 1; on <= 128; on++ {
		for b := 0; b < 256; b++ {
			for _, pos := range []uint{0, 3, 7} {
				v := uint64(b) << (8 * pos)
				if got, want := anyAtLeast(v, atLeastAddend(uint8(on))), b >= on; got != want {
					t.Fatalf("byte %d at %d, on %d: %v, want %v", b, pos, on, got, want)
				}
			}
		}
	}
}

// refVerticalRuns is verticalRuns pixel by pixel.
func refVerticalRuns(ink *image.Gray, on uint8, minRun, maxRun int) [][][2]int {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	runs := make([][][2]int, w)
	start := make([]int32, w)
	for x := range start {
		start[x] = -1
	}
	end := func(x, y int) {
		if l := y - int(start[x]); l >= minRun && l <= maxRun {
			runs[x] = append(runs[x], [2]int{int(start[x]), y - 1})
		}
		start[x] = -1
	}
	for y := 0; y < h; y++ {
		for x, v := range ink.Pix[y*ink.Stride : y*ink.Stride+w] {
			switch {
			case v >= on && start[x] < 0:
				start[x] = int32(y)
			case v < on && start[x] >= 0:
				end(x, y)
			}
		}
	}
	for x := range start {
		if start[x] >= 0 {
			end(x, h)
		}
	}
	return runs
}
