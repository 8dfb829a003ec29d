package imageproc

import (
	"image"
	"math"
	"math/rand/v2"
	"testing"
	"tracelift/internal/cputime"
	"tracelift/internal/testpage"
)

// BenchmarkPrepareA4 runs Prepare alone on a 300-dpi A4 page (3508×2480
// px) of the "scan" condition (skewed colour scan). Project budget: about
// 0.2–0.3 s per page on one core (≤ 3 × the decode time).
func BenchmarkPrepareA4(b *testing.B) {
	img, err := testpage.A4Scan()
	if err != nil {
		b.Fatal(err)
	}
	benchPrepare(b, img)
}

// BenchmarkPrepareA4JPEG is BenchmarkPrepareA4 on the same page stored as
// a JPEG (quality 90) and decoded: Prepare reads the decoder's Y′CbCr
// planes (4:2:0).
func BenchmarkPrepareA4JPEG(b *testing.B) { benchPrepare(b, a4ScanJPEG(b)) }

// a4ScanJPEG is BenchmarkPrepareA4's page stored as a JPEG (quality 90)
// and decoded to Y′CbCr (testpage.A4ScanJPEG).
func a4ScanJPEG(b *testing.B) image.Image {
	img, err := testpage.A4ScanJPEG()
	if err != nil {
		b.Fatal(err)
	}
	return img
}

// benchPrepare times Prepare on img, reporting the CPU time per call
// beside the wall time (cputime.Report).
func benchPrepare(b *testing.B, img image.Image) {
	b.ReportAllocs()
	b.ResetTimer()
	cpuDone := cputime.Report(b)
	for b.Loop() {
		if _, err := Prepare(img, nil); err != nil {
			b.Fatal(err)
		}
	}
	cpuDone()
}

// BenchmarkAffineSepRow times the upright pass's inner kernel alone
// (affineSepRow, colour separator): one A4-wide row (3508 px input,
// turned 0.7°) sampled and separated from a random near-white colour
// input. CPU time per row; divide by ≈ 3500 for the cost per pixel.
func BenchmarkAffineSepRow(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 5))
	const sw, sh = 3508, 160
	src := image.NewNRGBA(image.Rect(0, 0, sw, sh))
	for i := range src.Pix {
		src.Pix[i] = uint8(200 + rng.IntN(56))
	}
	hm, w, _ := rotation(0.7*math.Pi/180, sw, sh)
	sep := &separator{colour: true, ka: [3]float64{0.0031, -0.0012, -0.0009}, kb: [3]float64{-0.0004, 0.0017, 0.0021}, inkLo: 45, inkHi: 140}
	f := sep.fixed()
	g := make([]uint32, 3*w)
	for i := range g {
		g[i] = uint32(260 + rng.IntN(40))
	}
	buf := make([]uint8, 4*w)
	gr, ir, dr := make([]uint8, w), make([]uint8, w), make([]uint8, w)
	stepX, stepY := toFix32(hm[0]), toFix32(hm[3])
	sx, sy := rowStart(hm, sh/2)
	cpuDone := cputime.Report(b)
	for b.Loop() {
		f.affineSepRow(buf, g, gr, ir, dr, src.Pix, src.Stride, sw, sh, 0, sx, sy, stepX, stepY)
	}
	cpuDone()
}
