package grid

import (
	"testing"

	"tracelift/imageproc"
	"tracelift/render"
)

// BenchmarkFrontEndA4 runs Prepare and Detect on a 300-dpi A4 page
// (3508×2480 px) of the "scan" condition (skewed colour scan). Target
// (project budget): ≤ 0.4 s per page on one core.
func BenchmarkFrontEndA4(b *testing.B) {
	pg, err := render.CorpusPage(7, "scan", 0)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		p, err := imageproc.Prepare(pg.Image, nil)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := Detect(p, nil); err != nil {
			b.Fatal(err)
		}
	}
}
