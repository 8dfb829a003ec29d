package grid

import (
	"testing"

	"tracelift/imageproc"
	"tracelift/internal/cputime"
	"tracelift/internal/testpage"
)

// BenchmarkDetectA4JPEG times Detect alone on a prepared 300-dpi A4 scan
// (corpus page 0 of seed 7, "scan", stored as a quality-90 JPEG as the
// pipeline's end-to-end benchmark stores it); CPU time per call.
func BenchmarkDetectA4JPEG(b *testing.B) {
	img, err := testpage.A4ScanJPEG()
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
