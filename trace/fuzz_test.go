package trace

import (
	"errors"
	"image"
	"math/rand/v2"
	"testing"

	"tracelift/ecg"
)

// FuzzExtract feeds small random masks (and random calibrations) to
// Extract: it must never panic, and failures must wrap the error classes.
func FuzzExtract(f *testing.F) {
	rng := rand.New(rand.NewPCG(1, 1))
	for i := 0; i < 4; i++ {
		b := make([]byte, 64*48)
		for k := range b {
			if rng.IntN(9) == 0 {
				b[k] = 255
			}
		}
		f.Add(b, uint8(64), uint8(10), uint8(0))
	}
	// A mask with a flat trace and a pulse.
	m := image.NewGray(image.Rect(0, 0, 120, 60))
	stroke(m, []Point{{2, 40}, {6, 40}, {6, 20}, {12, 20}, {12, 40}, {119, 40}}, 1)
	f.Add(m.Pix, uint8(120), uint8(2), uint8(1))
	f.Fuzz(func(t *testing.T, pix []byte, w, pxmm, layout uint8) {
		W := int(w)%200 + 1
		H := len(pix) / W
		if H == 0 || H > 400 {
			return
		}
		g := &image.Gray{Pix: pix[:W*H], Stride: W, Rect: image.Rect(0, 0, W, H)}
		cal := testCal(float64(pxmm%40) / 4)
		var opt *Options
		names := []string{"", "3x4+1", "6x2", "12x1", "rhythm", "sec=1;cells=I,II/III~"}
		if n := names[int(layout)%len(names)]; n != "" {
			l, err := ParseLayout(n)
			if err != nil {
				t.Fatal(err)
			}
			opt = &Options{Layout: l}
		}
		res, err := Extract(g, cal, nil, opt)
		if err != nil && !errors.Is(err, ecg.ErrNoECG) && !errors.Is(err, ecg.ErrPartial) && !errors.Is(err, ecg.ErrUnreadable) {
			t.Fatalf("error of no class: %v", err)
		}
		if err == nil && res == nil {
			t.Fatal("nil result without error")
		}
	})
}

// BenchmarkExtractA4 digitises one 300-dpi A4 3 × 4 + 1 page (ink map and
// calibration prepared outside the timed loop).
func BenchmarkExtractA4(b *testing.B) {
	rec := synthRecord(b, 1)
	pg := renderPage(b, rec, renderOptions("3x4+1"))
	ink := naiveInk(pg.img)
	cal, pulses := truthCal(pg.truth), truthPulses(pg.truth)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := Extract(ink, cal, pulses, nil); err != nil {
			b.Fatal(err)
		}
	}
}
