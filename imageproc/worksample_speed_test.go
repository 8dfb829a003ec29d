package imageproc

import (
	"bytes"
	"image"
	"image/color"
	"math/rand/v2"
	"testing"

	"tracelift/internal/cputime"
	"tracelift/internal/testpage"
	"tracelift/render"
)

// a4JPEG is testpage.A4ScanJPEG: the A4 scan stored as a quality-90 JPEG
// and decoded.
var a4JPEG = testpage.A4ScanJPEG

// benchWorkCopy times the work copy of src at the factor Prepare uses
// (estimateWork), CPU time per call beside the wall time.
func benchWorkCopy(b *testing.B, src *source) {
	f := (max(src.w, src.h) + workSide - 1) / workSide
	b.ReportAllocs()
	b.ResetTimer()
	cpuDone := cputime.Report(b)
	for b.Loop() {
		downscaleSource(src, f)
	}
	cpuDone()
}

// BenchmarkWorkCopyA4JPEG times the work copy (downscaleSource at the
// factor Prepare uses, 4) of a decoded 300-dpi A4 JPEG; CPU time per call
// beside the wall time.
func BenchmarkWorkCopyA4JPEG(b *testing.B) {
	m, err := a4JPEG()
	if err != nil {
		b.Fatal(err)
	}
	src := newSource(m)
	benchWorkCopy(b, src)
}

// TestWorkCopyA4PageExact: on a real page (a 300-dpi A4 scan stored as
// JPEG, where a pink grid on near-white paper makes the red channel clip
// at random) the table-driven work copy has the bytes of the box means of
// the page converted pixel by pixel by image/color (the JFIF equations,
// ITU-T T.871 §7). TestDownscaleYCbCrExact covers odd sizes, partial
// blocks and random pixels.
func TestWorkCopyA4PageExact(t *testing.T) {
	if testing.Short() {
		t.Skip("renders an A4 page")
	}
	m, err := a4JPEG()
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []int{2, 4, 7} {
		got, want := downscaleSource(newSource(m), f), downscale(toNRGBA(m), f)
		if !bytes.Equal(got.Pix, want.Pix) {
			t.Errorf("f=%d: work copy differs from the box means of the converted page", f)
		}
	}
}

// TestYCCTables: every (chroma, luma) pair's red and blue table entries
// and the green rule (Y′ + q + carry, clamped) equal image/color's
// conversion.
func TestYCCTables(t *testing.T) {
	tb := newYCCTables()
	for cb := 0; cb < 256; cb++ {
		for cr := 0; cr < 256; cr++ {
			_, kg, _ := chromaTerms(uint8(cb), uint8(cr))
			q := kg>>16 + greenOff
			thr := (65536 - kg&0xffff + 256) / 257
			for y := 0; y < 256; y++ {
				r, g, b := color.YCbCrToRGB(uint8(y), uint8(cb), uint8(cr))
				v := int32(y)
				gg := tb.clampG[(v+q+1+(v-thr)>>31)&1023]
				if tb.red[cr<<8|y] != r || gg != g || tb.blue[cb<<8|y] != b {
					t.Fatalf("Y′CbCr (%d,%d,%d): tables give (%d,%d,%d), image/color (%d,%d,%d)",
						y, cb, cr, tb.red[cr<<8|y], gg, tb.blue[cb<<8|y], r, g, b)
				}
			}
		}
	}
}

// BenchmarkWorkCopyA4JPEGOdd is BenchmarkWorkCopyA4JPEG with the block
// width 7 that a 600-dpi A4 page gets (blocks on odd columns: the
// column-by-column path).
func BenchmarkWorkCopyA4JPEGOdd(b *testing.B) {
	m, err := a4JPEG()
	if err != nil {
		b.Fatal(err)
	}
	src := newSource(m)
	b.ReportAllocs()
	b.ResetTimer()
	cpuDone := cputime.Report(b)
	for b.Loop() {
		downscaleSource(src, 7)
	}
	cpuDone()
}

// TestWorkCopyGreyExact: the work copy of a grey input has the bytes of
// the box means of the input converted to NRGBA (odd sizes, partial
// blocks, random pixels, block widths 1 to 7).
func TestWorkCopyGreyExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(23, 23))
	for _, sz := range [][2]int{{37, 23}, {64, 40}, {101, 9}, {5, 3}} {
		g := image.NewGray(image.Rect(0, 0, sz[0], sz[1]))
		for i := range g.Pix {
			g.Pix[i] = uint8(rng.IntN(256))
		}
		for f := 1; f <= 7; f++ {
			got, want := downscaleSource(newSource(g), f), downscale(toNRGBA(g), f)
			if !bytes.Equal(got.Pix, want.Pix) || got.Rect != want.Rect {
				t.Errorf("%d×%d f=%d: grey work copy differs from the box means of the converted input", sz[0], sz[1], f)
			}
		}
	}
}

// BenchmarkWorkCopyA4Grey times the work copy of a grey 300-dpi A4 page
// (corpus page 0 of seed 7, "gray" condition; CPU time per call).
func BenchmarkWorkCopyA4Grey(b *testing.B) {
	pg, err := render.CorpusPage(7, "gray", 0)
	if err != nil {
		b.Fatal(err)
	}
	src := newSource(pg.Image)
	if src.gray == nil {
		b.Fatalf("corpus grey page is %T", pg.Image)
	}
	benchWorkCopy(b, src)
}

// TestAccumulateRowExact: the word-at-a-time block sums of an NRGBA row
// equal adding its bytes one by one (odd widths, partial blocks, block
// widths up to above the lane limit, all-255 rows that fill the lanes).
func TestAccumulateRowExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(29, 29))
	for _, sw := range []int{1, 7, 64, 101, 1200} {
		row := make([]uint8, 4*sw)
		for trial := 0; trial < 2; trial++ {
			for i := range row {
				row[i] = 255
				if trial == 1 {
					row[i] = uint8(rng.IntN(256))
				}
			}
			for _, f := range []int{1, 2, 3, 4, 7, 512, 513, 1100} {
				w := (sw + f - 1) / f
				acc, cnt := make([]uint32, 4*w), make([]uint32, w)
				accumulateRow(acc, cnt, row, f, w, sw)
				for ox := 0; ox < w; ox++ {
					var want [3]uint32
					for x := ox * f; x < min(sw, ox*f+f); x++ {
						for c := range 3 {
							want[c] += uint32(row[4*x+c])
						}
					}
					if got := [3]uint32(acc[4*ox : 4*ox+3]); got != want || cnt[ox] != uint32(min(sw, ox*f+f)-ox*f) {
						t.Fatalf("sw=%d f=%d block %d: sums %v count %d, want %v", sw, f, ox, got, cnt[ox], want)
					}
				}
			}
		}
	}
}

// BenchmarkWorkCopyA4NRGBA times the work copy of the A4 scan as the
// renderer returns it (NRGBA, as a PNG decodes; CPU time per call).
func BenchmarkWorkCopyA4NRGBA(b *testing.B) {
	img, err := testpage.A4Scan()
	if err != nil {
		b.Fatal(err)
	}
	src := newSource(img)
	benchWorkCopy(b, src)
}
