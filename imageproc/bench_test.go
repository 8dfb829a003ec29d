package imageproc

import (
	"bytes"
	"image"
	"image/jpeg"
	"os"
	"strconv"
	"strings"
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
// beside the wall time (see cpuSeconds).
func benchPrepare(b *testing.B, img image.Image) {
	b.ReportAllocs()
	b.ResetTimer()
	c0, cpuOK := cpuSeconds()
	for b.Loop() {
		if _, err := Prepare(img, nil); err != nil {
			b.Fatal(err)
		}
	}
	if c1, ok := cpuSeconds(); ok && cpuOK {
		b.ReportMetric((c1-c0)/float64(b.N)*1e9, "cpu-ns/op")
	}
}

// cpuSeconds returns the CPU time (user + system, all threads, the
// collector's included) the process has used so far, from
// /proc/self/stat in clock ticks of 1/100 s (Linux's USER_HZ); ok is
// false where that file is missing. On a machine shared with other
// work the wall time of a benchmark grows with the load, its CPU time
// much less: with -cpu 1 the CPU time per op is what one core spends.
func cpuSeconds() (sec float64, ok bool) {
	data, err := os.ReadFile("/proc/self/stat")
	if err != nil {
		return 0, false
	}
	// Fields after the command name (which may hold spaces): state is
	// field 3, utime 14 and stime 15.
	i := bytes.LastIndexByte(data, ')')
	if i < 0 {
		return 0, false
	}
	f := strings.Fields(string(data[i+1:]))
	if len(f) < 13 {
		return 0, false
	}
	ut, err1 := strconv.ParseFloat(f[11], 64)
	st, err2 := strconv.ParseFloat(f[12], 64)
	if err1 != nil || err2 != nil {
		return 0, false
	}
	return (ut + st) / 100, true
}
