package grid

import (
	"bytes"
	"image/jpeg"
	"testing"

	"tracelift/imageproc"
	"tracelift/internal/cputime"
	"tracelift/render"
)

// BenchmarkDetectA4JPEG times Detect alone on a prepared 300-dpi A4 scan
// (corpus page 0 of seed 7, "scan", stored as a quality-90 JPEG as the
// pipeline's end-to-end benchmark stores it); CPU time per call.
func BenchmarkDetectA4JPEG(b *testing.B) {
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
	p, err := imageproc.Prepare(img, nil)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	cpuDone := cputime.Report(b)
	for b.Loop() {
		if _, err := Detect(p, nil); err != nil {
			b.Fatal(err)
		}
	}
	cpuDone()
}
