package decode

import (
	"bytes"
	"encoding/binary"
	"image"
	"image/jpeg"
	"image/png"
	"math/rand/v2"
	"testing"
)

// A4 landscape at 300 dpi is 3508 × 2480 px (297 × 210 mm / 25.4 × 300).
const benchW, benchH = 3508, 2480

func benchDecode(b *testing.B, data []byte, name string) {
	b.Helper()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		pages, err := Reader(bytes.NewReader(data), int64(len(data)), name, nil)
		if err != nil || len(pages) != 1 {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(benchW*benchH)/1e6, "Mpx/page")
}

// BenchmarkDecodePNG decodes a 3508 × 2480 colour PNG of a synthetic ECG
// page (pink grid, dark traces) with a pHYs chunk.
func BenchmarkDecodePNG(b *testing.B) {
	var buf bytes.Buffer
	enc := png.Encoder{CompressionLevel: png.DefaultCompression}
	if err := enc.Encode(&buf, ecgPage(benchW, benchH, 300/25.4)); err != nil {
		b.Fatal(err)
	}
	data := append(buf.Bytes()[:33:33], append(pHYs(11811, 11811), buf.Bytes()[33:]...)...)
	benchDecode(b, data, "page.png")
}

// BenchmarkDecodePNGNoisy adds seeded ±4-level noise to every pixel, as a
// scanner sensor does, which makes the PNG far less compressible (closer
// to a real scan's file size).
func BenchmarkDecodePNGNoisy(b *testing.B) {
	page := ecgPage(benchW, benchH, 300/25.4)
	rng := rand.New(rand.NewPCG(1, 1))
	for i := 0; i < len(page.Pix); i += 4 {
		for c := 0; c < 3; c++ {
			v := int(page.Pix[i+c]) + rng.IntN(9) - 4
			page.Pix[i+c] = uint8(min(max(v, 0), 255))
		}
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, page); err != nil {
		b.Fatal(err)
	}
	benchDecode(b, buf.Bytes(), "noisy.png")
}

// BenchmarkDecodeJPEG decodes the same page as a quality-90 JPEG with a
// JFIF density segment.
func BenchmarkDecodeJPEG(b *testing.B) {
	data := jpegBytes(b, ecgPage(benchW, benchH, 300/25.4), 90, jfif(1, 300, 300))
	benchDecode(b, data, "page.jpg")
}

// BenchmarkDecodeJPEGRotated adds an Exif orientation 6 (a phone photo
// held upright), which costs a YCbCr → NRGBA remap.
func BenchmarkDecodeJPEGRotated(b *testing.B) {
	data := jpegBytes(b, ecgPage(benchW, benchH, 300/25.4), 90, exifSegment(binary.BigEndian, 6))
	benchDecode(b, data, "photo.jpg")
}

// BenchmarkDecodePDF decodes a one-page PDF holding the JPEG page.
func BenchmarkDecodePDF(b *testing.B) {
	j := jpegBytes(b, ecgPage(benchW, benchH, 300/25.4), 90)
	benchDecode(b, pdfFromJPEGs(b, [][]byte{j}, 300), "scan.pdf")
}

// BenchmarkOrient turns a decoded 3508 × 2480 page by 90° (orientation 6).
func BenchmarkOrient(b *testing.B) {
	var buf bytes.Buffer
	if err := jpeg.Encode(&buf, ecgPage(benchW, benchH, 300/25.4), &jpeg.Options{Quality: 90}); err != nil {
		b.Fatal(err)
	}
	ycc, err := jpeg.Decode(&buf)
	if err != nil {
		b.Fatal(err)
	}
	gray := image.NewGray(image.Rect(0, 0, benchW, benchH))
	for _, tc := range []struct {
		name string
		img  image.Image
	}{{"YCbCr", ycc}, {"Gray", gray}} {
		b.Run(tc.name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				Orient(tc.img, 6)
			}
		})
	}
}
