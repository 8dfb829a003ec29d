package trace

import (
	"image"
	"math/bits"
	"math/rand/v2"
	"reflect"
	"testing"
)

// naiveRuns collects the ink runs of ink inside r column by column, top
// to bottom, flagging the ends the rectangle cuts: the reference for
// columnRuns.scan's word-at-a-time skipping.
func naiveRuns(ink *image.Gray, r image.Rectangle) [][]run {
	r = r.Intersect(ink.Rect)
	out := make([][]run, r.Dx())
	for x := r.Min.X; x < r.Max.X; x++ {
		open := false
		var cur run
		for y := r.Min.Y; y < r.Max.Y; y++ {
			v := ink.GrayAt(x, y).Y
			if v >= inkThreshold {
				if !open {
					open, cur = true, run{top: int32(y)}
					if y == r.Min.Y {
						cur.cut = cutTop
					}
				}
				cur.bot = int32(y)
				cur.w += float32(v)
				cur.wy += float32(v) * float32(y)
			} else if open {
				open = false
				out[x-r.Min.X] = append(out[x-r.Min.X], cur)
			}
		}
		if open {
			cur.cut |= cutBot
			out[x-r.Min.X] = append(out[x-r.Min.X], cur)
		}
	}
	return out
}

// TestScanSkipsEmptyWordsExactly: scan finds the runs of the column-by-
// column reference on random sparse maps (strokes, specks, values just
// below and at the threshold, rectangles not aligned to eight columns),
// reusing its buffers from one rectangle to the next.
func TestScanSkipsEmptyWordsExactly(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	var cr columnRuns
	for k := 0; k < 40; k++ {
		w, h := 20+rng.IntN(90), 10+rng.IntN(60)
		ink := image.NewGray(image.Rect(0, 0, w, h))
		for n := rng.IntN(30); n > 0; n-- {
			x, y := rng.IntN(w), rng.IntN(h)
			for l := rng.IntN(12); l >= 0 && y < h; l, y = l-1, y+1 {
				ink.Pix[y*ink.Stride+x] = []uint8{inkThreshold - 1, inkThreshold, 200, 255, 40}[rng.IntN(5)]
			}
		}
		r := image.Rect(rng.IntN(7), rng.IntN(5), w-rng.IntN(7), h-rng.IntN(5))
		cr.scan(ink, r)
		want := naiveRuns(ink, r)
		if cr.width() != len(want) {
			t.Fatalf("case %d: %d columns, want %d", k, cr.width(), len(want))
		}
		for c := range want {
			got := cr.runs[cr.off[c]:cr.off[c+1]]
			if len(got) == 0 && len(want[c]) == 0 {
				continue
			}
			if !reflect.DeepEqual(got, want[c]) {
				t.Fatalf("case %d column %d: runs %v, want %v", k, c, got, want[c])
			}
		}
	}
}

// TestInkWord: the word test and the count of its bits agree with
// testing the eight bytes one by one, for every byte value in every
// position among paper and ink neighbours (255s included).
func TestInkWord(t *testing.T) {
	for pos := 0; pos < 8; pos++ {
		for _, fill := range []uint8{0, inkThreshold - 1, 255} {
			for v := 0; v < 256; v++ {
				b := make([]uint8, 8)
				for i := range b {
					b[i] = fill
				}
				b[pos] = uint8(v)
				want := false
				for _, c := range b {
					want = want || c >= inkThreshold
				}
				if got := inkWord(b); got != want {
					t.Fatalf("bytes %v: inkWord %v, want %v", b, got, want)
				}
				n := 0
				for _, c := range b {
					if c >= inkThreshold {
						n++
					}
				}
				if got := bits.OnesCount64(inkBits(b)); got != n {
					t.Fatalf("bytes %v: %d ink bytes counted, want %d", b, got, n)
				}
			}
		}
	}
}
