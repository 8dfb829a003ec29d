package imageproc

import (
	"bytes"
	"image"
	"math/rand/v2"
	"testing"

	"tracelift/internal/cputime"
)

// refNormalise is normalise as it was written first: a row of gains
// (gainRowCols), then each channel multiplied and clamped with branches.
func refNormalise(m *image.NRGBA, bg *background) *image.NRGBA {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	dst := image.NewNRGBA(m.Rect)
	g := make([]float32, 3*w)
	gc := bg.columns(w)
	clamp := func(v float32) uint8 {
		if v >= 255 {
			return 255
		}
		if v <= 0 {
			return 0
		}
		return uint8(v + 0.5)
	}
	for y := 0; y < h; y++ {
		bg.gainRowCols(g, y, gc)
		s := m.Pix[y*m.Stride : y*m.Stride+4*w]
		d := dst.Pix[y*dst.Stride : y*dst.Stride+4*w]
		for x := 0; x < w; x++ {
			for c := 0; c < 3; c++ {
				d[4*x+c] = clamp(float32(s[4*x+c]) * g[3*x+c])
			}
			d[4*x+3] = 255
		}
	}
	return dst
}

// TestNormaliseSame: the fused, branch-free normalise gives the bytes of
// refNormalise, on the work copy of a JPEG A4 scan and on random pages
// (random pixels and a random background, so that every channel clamps
// at both ends somewhere).
func TestNormaliseSame(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	for _, sz := range [][2]int{{37, 23}, {300, 211}, {8, 9}} {
		m := image.NewNRGBA(image.Rect(0, 0, sz[0], sz[1]))
		for i := range m.Pix {
			m.Pix[i] = uint8(rng.IntN(256))
		}
		bg := estimateBackground(m, blockSize(m), 1)
		for c := range bg.v {
			for i := range bg.v[c] {
				bg.v[c][i] = 24 + 231*rng.Float64()
			}
		}
		if !bytes.Equal(normalise(m, bg).Pix, refNormalise(m, bg).Pix) {
			t.Errorf("%d×%d random page: normalise differs from the reference", sz[0], sz[1])
		}
	}
	if testing.Short() {
		return
	}
	img, err := a4JPEG()
	if err != nil {
		t.Fatal(err)
	}
	work := downscaleSource(newSource(img), 4)
	bg := estimateBackground(work, blockSize(work), 1)
	if !bytes.Equal(normalise(work, bg).Pix, refNormalise(work, bg).Pix) {
		t.Error("A4 work copy: normalise differs from the reference")
	}
}

// BenchmarkNormaliseA4JPEG times normalise on the work copy of a decoded
// 300-dpi A4 JPEG scan (CPU time per call); BenchmarkNormaliseRef the
// reference it replaced.
func BenchmarkNormaliseA4JPEG(b *testing.B) { benchNormalise(b, normalise) }
func BenchmarkNormaliseRef(b *testing.B)    { benchNormalise(b, refNormalise) }

func benchNormalise(b *testing.B, fn func(*image.NRGBA, *background) *image.NRGBA) {
	img, err := a4JPEG()
	if err != nil {
		b.Fatal(err)
	}
	work := downscaleSource(newSource(img), 4)
	bg := estimateBackground(work, blockSize(work), 1)
	b.ReportAllocs()
	b.ResetTimer()
	cpuDone := cputime.Report(b)
	for b.Loop() {
		fn(work, bg)
	}
	cpuDone()
}
