package grid

import (
	"testing"

	"tracelift/imageproc"
	"tracelift/render"
)

// BenchmarkFrontEndA4 runs Prepare and Detect on a 300-dpi A4 page
// (3508×2480 px) of the "scan" condition (skewed colour scan). Target
// (project budget): ≤ 0.4 s per page on one core.
func BenchmarkFrontEndA4(b *testing.B) { benchFrontEnd(b, "scan") }

// BenchmarkFrontEndPhoto runs Prepare and Detect on a phone photo of an A4
// page (the "photo" condition: about 4000×3200 px with perspective, lens
// warp and desk), the lattice registration included. Target (issue 3):
// a photo may cost a few times a scan page, not more.
func BenchmarkFrontEndPhoto(b *testing.B) { benchFrontEnd(b, "photo") }

// benchFrontEnd times Prepare and Detect on corpus page 0 (seed 7) of a
// condition.
func benchFrontEnd(b *testing.B, condition string) {
	pg, err := render.CorpusPage(7, condition, 0)
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
