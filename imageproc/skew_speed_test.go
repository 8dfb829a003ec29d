package imageproc

import (
	"image"
	"math"
	"testing"

	"tracelift/internal/cputime"
)

// workLineMap returns what Prepare's skew search reads for img: the
// line-strength map of its work copy (grid strength on a colour page,
// inverted luminance on a grey one), photos' table masked out.
func workLineMap(img image.Image) *image.Gray { return estimateWork(newSource(img)).lineMap }

// BenchmarkSkewA4JPEG times the skew search (estimateSkew, ±12°) on the
// work copy of a decoded 300-dpi A4 JPEG scan; CPU time per call.
func BenchmarkSkewA4JPEG(b *testing.B) {
	m, err := a4JPEG()
	if err != nil {
		b.Fatal(err)
	}
	lm := workLineMap(m)
	b.ReportAllocs()
	b.ResetTimer()
	cpuDone := cputime.Report(b)
	for b.Loop() {
		estimateSkew(lm, 12*math.Pi/180, both)
	}
	cpuDone()
}
