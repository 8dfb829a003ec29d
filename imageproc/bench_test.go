package imageproc

import (
	"bytes"
	"image"
	"image/jpeg"
	"testing"
	"tracelift/internal/cputime"

	"tracelift/render"
)

// BenchmarkPrepareA4 runs Prepare alone on a 300-dpi A4 page (3508×2480
// px) of the "scan" condition (skewed colour scan). Project budget: about
// 0.2–0.3 s per page on one core (≤ 3 × the decode time).
func BenchmarkPrepareA4(b *testing.B) {
	pg, err := render.CorpusPage(7, "scan", 0)
	if err != nil {
		b.Fatal(err)
	}
	benchPrepare(b, pg.Image)
}

// BenchmarkPrepareA4JPEG is BenchmarkPrepareA4 on the same page stored as
// a JPEG (quality 90) and decoded: Prepare reads the decoder's Y′CbCr
// planes (4:2:0).
func BenchmarkPrepareA4JPEG(b *testing.B) {
	pg, err := render.CorpusPage(7, "scan", 0)
	if err != nil {
		b.Fatal(err)
	}
	var buf bytes.Buffer
	if err := jpeg.Encode(&buf, pg.Image, &jpeg.Options{Quality: 90}); err != nil {
		b.Fatal(err)
	}
	img, err := jpeg.Decode(&buf)
	if err != nil {
		b.Fatal(err)
	}
	if _, ok := img.(*image.YCbCr); !ok {
		b.Fatalf("decoded %T", img)
	}
	benchPrepare(b, img)
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
