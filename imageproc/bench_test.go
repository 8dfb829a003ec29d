package imageproc

import (
	"testing"

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
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := Prepare(pg.Image, nil); err != nil {
			b.Fatal(err)
		}
	}
}
