package decode

import (
	"bytes"
	"encoding/binary"
	"errors"
	"image"
	"image/color"
	"os"
	"path/filepath"
	"runtime/debug"
	"testing"
	"time"

	"tracelift/ecg"
)

// fuzzSeeds are small generated files of every supported format.
func fuzzSeeds(t testing.TB) [][]byte {
	g := grayPattern(12, 9)
	pal := image.NewPaletted(image.Rect(0, 0, 8, 8), color.Palette{color.White, color.Black})
	for i := range pal.Pix {
		pal.Pix[i] = uint8(i % 2)
	}
	small := image.NewRGBA(image.Rect(0, 0, 16, 16))
	for i := range small.Pix {
		small.Pix[i] = uint8(i * 7)
	}
	jp := jpegBytes(t, small, 80, jfif(1, 300, 300), exifSegment(binary.LittleEndian, 6))
	return [][]byte{
		pngBytes(t, g, pHYs(11811, 11811)),
		jp,
		tiffBytes(binary.LittleEndian, []tiffPageSpec{
			{w: 12, h: 9, compression: 1, photometric: 1, bits: 8, data: g.Pix, xres: 204, yres: 98, unit: 2},
			{w: 12, h: 9, compression: 1, photometric: 1, bits: 8, data: g.Pix, orientation: 3},
		}),
		tiffBytes(binary.BigEndian, []tiffPageSpec{{w: 8, h: 8, compression: 1, photometric: 0, bits: 1, data: bytes.Repeat([]byte{0x5A}, 8)}}),
		tiffBytesExtra(binary.LittleEndian, tiffPageSpec{w: 16, h: 16, compression: 7, photometric: 6, bits: 8, data: jpegBytes(t, small, 70)}, 3, nil),
		gifBytes(t, pal),
		bmpBytes(t, g, 3937, 3937),
		pdfFromJPEGs(t, [][]byte{jpegBytes(t, small, 60)}, 150),
		rawPDF([]rawPDFPage{{mediaW: 72, mediaH: 54, rotate: 270, imageDict: "/Width 12 /Height 9 /ColorSpace /DeviceGray /BitsPerComponent 8 /Filter /FlateDecode", stream: zlibBytes(g.Pix)}}),
		hugePNG(100000, 100000),
	}
}

// webpSeeds adds small WebP files from x/image's test data when the
// module cache has them (x/image has no WebP encoder to generate one).
func webpSeeds(f *testing.F) {
	dir := modCacheDir()
	if dir == "" {
		return
	}
	for _, name := range []string{"gopher-doc.1bpp.lossless.webp", "blue-purple-pink.lossy.webp"} {
		if b, err := os.ReadFile(filepath.Join(dir, "golang.org/x/image@v0.48.0/testdata", name)); err == nil {
			f.Add(b)
		}
	}
}

// FuzzReader checks that no input panics, every error is an
// ecg.ErrUnreadable *Error, and every page returned is a sound image.
func FuzzReader(f *testing.F) {
	for _, s := range fuzzSeeds(f) {
		f.Add(s)
	}
	webpSeeds(f)
	f.Fuzz(func(t *testing.T, b []byte) {
		opt := &Options{MaxPixels: 1 << 22} // keep hostile sizes cheap
		debug.SetTraceback("all")
		tm := time.AfterFunc(20*time.Second, func() { panic("decode: one fuzz input took over 20 s") })
		defer tm.Stop()
		pages, err := Reader(bytes.NewReader(b), int64(len(b)), "fuzz.bin", opt)
		if err != nil {
			var de *Error
			if !errors.Is(err, ecg.ErrUnreadable) || !errors.As(err, &de) {
				t.Fatalf("error %v (%T) is not an unreadable *Error", err, err)
			}
			return
		}
		for _, p := range pages {
			if p.Image == nil || p.Image.Bounds().Empty() || p.Orientation < 1 || p.Orientation > 8 {
				t.Fatalf("bad page %+v", p)
			}
			if px := int64(p.Image.Bounds().Dx()) * int64(p.Image.Bounds().Dy()); px > opt.MaxPixels {
				t.Fatalf("page of %d px over the budget", px)
			}
		}
		// Config must agree on the page count and first-page size.
		n, w, h, _, err := ReaderConfig(bytes.NewReader(b), int64(len(b)), "fuzz.bin")
		if err == nil && len(pages) > 0 {
			s := pages[0].Image.Bounds().Size()
			if n != len(pages) || (pages[0].Format != "gif" && (w != s.X || h != s.Y)) {
				t.Fatalf("Config %d pages %d×%d, decoded %d pages %v", n, w, h, len(pages), s)
			}
		}
	})
}

// FuzzOrient checks Orient against the side table on random gray images.
func FuzzOrient(f *testing.F) {
	f.Add(uint8(3), uint8(5), uint8(6), []byte{1, 2, 3})
	f.Fuzz(func(t *testing.T, w, h, o uint8, seed []byte) {
		W, H := int(w%40)+1, int(h%40)+1
		m := image.NewGray(image.Rect(0, 0, W, H))
		for i := range m.Pix {
			if len(seed) > 0 {
				m.Pix[i] = seed[i%len(seed)] + uint8(i)
			}
		}
		ori := int(o%8) + 1
		d := Orient(m, ori).(*image.Gray)
		for y := 0; y < H; y++ {
			for x := 0; x < W; x++ {
				dx, dy := displayed(ori, x, y, W, H)
				if d.GrayAt(dx, dy) != m.GrayAt(x, y) {
					t.Fatalf("o=%d %dx%d: (%d,%d)", ori, W, H, x, y)
				}
			}
		}
	})
}
