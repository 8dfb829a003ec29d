package decode

import (
	"bytes"
	"encoding/binary"
	"errors"
	"image"
	"image/color"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/go-pdf/fpdf"

	"tracelift/ecg"
)

func readerPages(t *testing.T, b []byte, name string, opt *Options) []Page {
	t.Helper()
	pages, err := Reader(bytes.NewReader(b), int64(len(b)), name, opt)
	if err != nil {
		t.Fatalf("Reader(%s): %v", name, err)
	}
	return pages
}

func near(a, b, tol float64) bool { return math.Abs(a-b) <= tol }

// sameGray reports whether img holds exactly the pixels of want.
func sameGray(t *testing.T, img image.Image, want *image.Gray) {
	t.Helper()
	g, ok := img.(*image.Gray)
	if !ok {
		t.Fatalf("got %T, want *image.Gray", img)
	}
	if g.Bounds().Size() != want.Bounds().Size() {
		t.Fatalf("size %v, want %v", g.Bounds().Size(), want.Bounds().Size())
	}
	for y := 0; y < want.Rect.Dy(); y++ {
		for x := 0; x < want.Rect.Dx(); x++ {
			if a, b := g.GrayAt(g.Rect.Min.X+x, g.Rect.Min.Y+y).Y, want.Pix[y*want.Stride+x]; a != b {
				t.Fatalf("pixel (%d,%d) = %d, want %d", x, y, a, b)
			}
		}
	}
}

// TestPNGRoundTrip: pHYs 11811 px/m is 300 dpi (11811 × 0.0254 = 299.99;
// PNG specification, W3C 2003, 11.3.5.3: unit 1 = metre); 3937/7874 px/m
// are 100/200 dpi, showing the axes are kept apart.
func TestPNGRoundTrip(t *testing.T) {
	src := grayPattern(37, 23)
	for _, tc := range []struct {
		name       string
		chunks     [][]byte
		dpiX, dpiY float64
	}{
		{"300dpi", [][]byte{pHYs(11811, 11811)}, 299.9994, 299.9994},
		{"100x200dpi", [][]byte{pHYs(3937, 7874)}, 99.9998, 199.9996},
		{"no pHYs", nil, 0, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			b := pngBytes(t, src, tc.chunks...)
			pages := readerPages(t, b, "scan.png", nil)
			if len(pages) != 1 {
				t.Fatalf("%d pages", len(pages))
			}
			p := pages[0]
			if p.Format != "png" || p.Index != 1 || p.Orientation != 1 {
				t.Errorf("page = %+v", p)
			}
			if !near(p.DPIX, tc.dpiX, 1e-3) || !near(p.DPIY, tc.dpiY, 1e-3) {
				t.Errorf("dpi = %g × %g, want %g × %g", p.DPIX, p.DPIY, tc.dpiX, tc.dpiY)
			}
			sameGray(t, p.Image, src)
		})
	}
}

// TestJPEGDensity: JFIF 1.02 APP0 density units 1 = dots per inch, 2 = dots
// per cm (118 dots/cm = 299.72 dpi), 0 = aspect ratio only (no dpi).
func TestJPEGDensity(t *testing.T) {
	img := blockImage()
	for _, tc := range []struct {
		name       string
		seg        []byte
		dpiX, dpiY float64
	}{
		{"dpi", jfif(1, 300, 300), 300, 300},
		{"dpcm", jfif(2, 118, 118), 299.72, 299.72},
		{"fax-like", jfif(1, 204, 98), 204, 98},
		{"aspect only", jfif(0, 1, 1), 0, 0},
		// Without JFIF density, Exif X/YResolution with ResolutionUnit
		// (2 inch, 3 cm; Exif 2.3 0x0128).
		{"exif inch", exifResSegment(binary.BigEndian, 1, 200, 100, 2), 200, 100},
		{"exif cm", exifResSegment(binary.LittleEndian, 1, 118, 118, 3), 299.72, 299.72},
		// Both: the JFIF density states a unit and wins over Exif's 72.
		{"jfif over exif", append(jfif(1, 300, 300), exifResSegment(binary.BigEndian, 1, 72, 72, 2)...), 300, 300},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := readerPages(t, jpegBytes(t, img, 95, tc.seg), "photo.jpg", nil)[0]
			if !near(p.DPIX, tc.dpiX, 1e-9) || !near(p.DPIY, tc.dpiY, 1e-9) {
				t.Errorf("dpi = %g × %g, want %g × %g", p.DPIX, p.DPIY, tc.dpiX, tc.dpiY)
			}
			if p.Format != "jpeg" {
				t.Errorf("format %q", p.Format)
			}
			if _, ok := p.Image.(*image.YCbCr); !ok {
				t.Errorf("got %T, want *image.YCbCr (decoded as is)", p.Image)
			}
		})
	}
}

// orientationSides is the Exif 2.3 / TIFF 6.0 table for tag 0x0112: the
// visual side on which the stored 0th row and 0th column lie.
var orientationSides = map[int][2]string{
	1: {"top", "left"}, 2: {"top", "right"}, 3: {"bottom", "right"}, 4: {"bottom", "left"},
	5: {"left", "top"}, 6: {"right", "top"}, 7: {"right", "bottom"}, 8: {"left", "bottom"},
}

// displayed maps stored pixel (x, y) of a w × h image to where it is seen
// upright under orientation o, worked out from orientationSides alone.
func displayed(o, x, y, w, h int) (int, int) {
	s := orientationSides[o]
	switch s[0] {
	case "top", "bottom": // rows stay horizontal
		dx, dy := x, y
		if s[1] == "right" {
			dx = w - 1 - x
		}
		if s[0] == "bottom" {
			dy = h - 1 - y
		}
		return dx, dy
	default: // rows become columns
		dx, dy := y, x
		if s[0] == "right" {
			dx = h - 1 - y
		}
		if s[1] == "bottom" {
			dy = w - 1 - x
		}
		return dx, dy
	}
}

// TestJPEGExifOrientation writes each of the 8 orientations into an Exif
// APP1 segment (both byte orders) and checks where each colour block lands.
func TestJPEGExifOrientation(t *testing.T) {
	img := blockImage()
	for o := 1; o <= 8; o++ {
		for _, bo := range []byteOrder{binary.BigEndian, binary.LittleEndian} {
			b := jpegBytes(t, img, 100, jfif(1, 150, 150), exifSegment(bo, o))
			p := readerPages(t, b, "phone.jpg", nil)[0]
			if p.Orientation != o {
				t.Fatalf("o=%d: Orientation %d", o, p.Orientation)
			}
			wantW, wantH := 48, 32
			if o >= 5 {
				wantW, wantH = 32, 48
			}
			if s := p.Image.Bounds().Size(); s.X != wantW || s.Y != wantH {
				t.Fatalf("o=%d: size %v, want %dx%d", o, s, wantW, wantH)
			}
			for by := 0; by < 2; by++ {
				for bx := 0; bx < 3; bx++ {
					want := blockColors[by][bx]
					dx, dy := displayed(o, bx*16+8, by*16+8, 48, 32)
					r, g, b, _ := p.Image.At(p.Image.Bounds().Min.X+dx, p.Image.Bounds().Min.Y+dy).RGBA()
					if !near(float64(r>>8), float64(want.R), 12) || !near(float64(g>>8), float64(want.G), 12) || !near(float64(b>>8), float64(want.B), 12) {
						t.Errorf("o=%d %v: block (%d,%d) at (%d,%d) = %d,%d,%d, want %v", o, bo, bx, by, dx, dy, r>>8, g>>8, b>>8, want)
					}
				}
			}
		}
	}
}

// TestOrientExact checks Orient pixel by pixel on lossless types against
// the side table, and that each type is preserved.
func TestOrientExact(t *testing.T) {
	g := grayPattern(5, 3)
	n := image.NewNRGBA(g.Rect)
	pal := image.NewPaletted(g.Rect, color.Palette{color.Black, color.White})
	for i, v := range g.Pix {
		n.Pix[4*i], n.Pix[4*i+1], n.Pix[4*i+2], n.Pix[4*i+3] = v, 255-v, v/2, 255
		pal.Pix[i] = v & 1
	}
	for o := 1; o <= 8; o++ {
		og := Orient(g, o).(*image.Gray)
		on := Orient(n, o).(*image.NRGBA)
		op := Orient(pal, o).(*image.Paletted)
		for y := 0; y < 3; y++ {
			for x := 0; x < 5; x++ {
				dx, dy := displayed(o, x, y, 5, 3)
				if og.GrayAt(dx, dy) != g.GrayAt(x, y) || on.NRGBAAt(dx, dy) != n.NRGBAAt(x, y) || op.ColorIndexAt(dx, dy) != pal.ColorIndexAt(x, y) {
					t.Fatalf("o=%d: stored (%d,%d) not at (%d,%d)", o, x, y, dx, dy)
				}
			}
		}
	}
	// A sub-image with a non-zero origin.
	sub := grayPattern(9, 7).SubImage(image.Rect(2, 3, 7, 6)).(*image.Gray)
	o6 := Orient(sub, 6).(*image.Gray)
	for y := 0; y < 3; y++ {
		for x := 0; x < 5; x++ {
			dx, dy := displayed(6, x, y, 5, 3)
			if o6.GrayAt(dx, dy) != sub.GrayAt(2+x, 3+y) {
				t.Fatalf("sub-image: stored (%d,%d) not at (%d,%d)", x, y, dx, dy)
			}
		}
	}
}

// TestTIFFMultiPage: three uncompressed 8-bit pages of different sizes and
// resolutions, a reduced-resolution thumbnail directory that must be
// skipped (NewSubfileType bit 0, TIFF 6.0 tag 254), an orientation tag and
// fax resolutions 204 × 98 and 204 × 196 dpi (ITU-T T.4 standard and fine).
func TestTIFFMultiPage(t *testing.T) {
	p1, p2, p3 := grayPattern(40, 30), grayPattern(17, 11), grayPattern(8, 20)
	thumb := grayPattern(4, 3)
	for _, bo := range []byteOrder{binary.LittleEndian, binary.BigEndian} {
		b := tiffBytes(bo, []tiffPageSpec{
			{w: 40, h: 30, compression: 1, photometric: 1, bits: 8, data: p1.Pix, xres: 204, yres: 98, unit: 2},
			{w: 4, h: 3, compression: 1, photometric: 1, bits: 8, data: thumb.Pix, subfile: 1},
			{w: 17, h: 11, compression: 1, photometric: 1, bits: 8, data: p2.Pix, xres: 80, yres: 40, unit: 3},
			{w: 8, h: 20, compression: 1, photometric: 1, bits: 8, data: p3.Pix, xres: 204, yres: 196, orientation: 8},
		})
		path := writeTemp(t, "fax.tif", b)
		n, w, h, format, err := Config(path)
		if err != nil || n != 3 || w != 40 || h != 30 || format != "tiff" {
			t.Fatalf("Config = %d, %d, %d, %q, %v", n, w, h, format, err)
		}
		pages, err := File(path, nil)
		if err != nil {
			t.Fatal(err)
		}
		if len(pages) != 3 {
			t.Fatalf("%d pages, want 3", len(pages))
		}
		sameGray(t, pages[0].Image, p1)
		sameGray(t, pages[1].Image, p2)
		if pages[0].DPIX != 204 || pages[0].DPIY != 98 {
			t.Errorf("page 1 dpi %g × %g, want 204 × 98", pages[0].DPIX, pages[0].DPIY)
		}
		// 80 and 40 dots per cm × 2.54 cm per inch.
		if !near(pages[1].DPIX, 203.2, 1e-9) || !near(pages[1].DPIY, 101.6, 1e-9) {
			t.Errorf("page 2 dpi %g × %g, want 203.2 × 101.6", pages[1].DPIX, pages[1].DPIY)
		}
		// Page 3 is turned (orientation 8): its axes, and so its dpi, swap.
		want3 := Orient(p3, 8).(*image.Gray)
		sameGray(t, pages[2].Image, want3)
		if pages[2].Orientation != 8 || pages[2].DPIX != 196 || pages[2].DPIY != 204 {
			t.Errorf("page 3: orientation %d dpi %g × %g, want 8, 196 × 204", pages[2].Orientation, pages[2].DPIX, pages[2].DPIY)
		}
		for i, p := range pages {
			if p.Index != i+1 || p.Format != "tiff" {
				t.Errorf("page %d: Index %d Format %q", i+1, p.Index, p.Format)
			}
		}
		// Page selection, out of order.
		sel := readerPages(t, b, "fax.tif", &Options{Pages: []int{3, 1}})
		if len(sel) != 2 || sel[0].Index != 3 || sel[1].Index != 1 {
			t.Errorf("selection gave %d pages", len(sel))
		}
		if _, err := Reader(bytes.NewReader(b), int64(len(b)), "fax.tif", &Options{Pages: []int{4}}); !errors.Is(err, ecg.ErrUnreadable) || !strings.Contains(err.Error(), "page 4") {
			t.Errorf("page 4 of 3: %v", err)
		}
	}
}

// TestTIFFCCITT assembles a two-page Group 4 (T.6) and a Group 3 (T.4)
// fax TIFF from the x/image ccitt test streams (153 × 55 px, the expected
// picture is their bw-gopher.png) with fax resolution tags.
func TestTIFFCCITT(t *testing.T) {
	g4 := modCacheFile(t, "ccitt/testdata/bw-gopher.ccitt_group4")
	g3 := modCacheFile(t, "ccitt/testdata/bw-gopher.ccitt_group3")
	wantImg := readerPages(t, modCacheFile(t, "ccitt/testdata/bw-gopher.png"), "bw-gopher.png", nil)
	want := wantImg[0].Image.(*image.Gray)
	for _, tc := range []struct {
		name string
		comp uint32
		data []byte
	}{{"group4", 4, g4}, {"group3", 3, g3}} {
		t.Run(tc.name, func(t *testing.T) {
			// Photometric 0 (WhiteIsZero) is the fax convention (TIFF 6.0
			// section 3; the x/image decoder maps it back to black ink = 0).
			b := tiffBytes(binary.LittleEndian, []tiffPageSpec{
				{w: 153, h: 55, compression: tc.comp, photometric: 0, bits: 1, data: tc.data, xres: 204, yres: 98, unit: 2},
				{w: 153, h: 55, compression: tc.comp, photometric: 0, bits: 1, data: tc.data, xres: 204, yres: 196, unit: 2},
			})
			pages := readerPages(t, b, "fax.tif", nil)
			if len(pages) != 2 {
				t.Fatalf("%d pages", len(pages))
			}
			for _, p := range pages {
				sameGray(t, p.Image, want)
			}
			if pages[0].DPIY != 98 || pages[1].DPIY != 196 || pages[1].DPIX != 204 {
				t.Errorf("dpi %g×%g, %g×%g", pages[0].DPIX, pages[0].DPIY, pages[1].DPIX, pages[1].DPIY)
			}
		})
	}
	// Two-dimensional Group 3 (T4Options bit 0) is refused by name.
	b := tiffBytes(binary.LittleEndian, []tiffPageSpec{{w: 153, h: 55, compression: 3, photometric: 0, bits: 1, data: g3, t4opts: 1}})
	if _, err := Reader(bytes.NewReader(b), int64(len(b)), "mr.tif", nil); !errors.Is(err, ErrUnsupported) || !strings.Contains(err.Error(), "two-dimensional") {
		t.Errorf("2-D Group 3: %v", err)
	}
	// The library's own G4 TIFF file decodes too.
	pages := readerPages(t, modCacheFile(t, "testdata/bw-gopher_ccittGroup4.tiff"), "g4.tiff", nil)
	if len(pages) != 1 || pages[0].Image.Bounds().Dx() != 153 {
		t.Errorf("bw-gopher_ccittGroup4.tiff: %d pages", len(pages))
	}
}

// TestBMPGIFWebP covers the remaining single-image formats. BMP 11811
// px/m = 300 dpi (BITMAPINFOHEADER biXPelsPerMeter); GIF has no
// resolution; the WebP files are x/image's own test data.
func TestBMPGIFWebP(t *testing.T) {
	src := grayPattern(21, 13)
	p := readerPages(t, bmpBytes(t, src, 11811, 5906), "scan.bmp", nil)[0]
	if p.Format != "bmp" || !near(p.DPIX, 299.9994, 1e-3) || !near(p.DPIY, 150.0124, 1e-3) {
		t.Errorf("bmp: %q %g × %g", p.Format, p.DPIX, p.DPIY)
	}
	for y := 0; y < 13; y++ {
		for x := 0; x < 21; x++ {
			r, _, _, _ := p.Image.At(x, y).RGBA()
			if uint8(r>>8) != src.GrayAt(x, y).Y {
				t.Fatalf("bmp pixel (%d,%d)", x, y)
			}
		}
	}

	pal := image.NewPaletted(image.Rect(0, 0, 30, 20), color.Palette{color.White, color.Black, color.RGBA{240, 150, 150, 255}})
	for i := range pal.Pix {
		pal.Pix[i] = uint8(i % 3)
	}
	p = readerPages(t, gifBytes(t, pal), "scan.gif", nil)[0]
	got, ok := p.Image.(*image.Paletted)
	if !ok || p.Format != "gif" || p.DPIX != 0 || !bytes.Equal(got.Pix, pal.Pix) {
		t.Errorf("gif: %T %q %g", p.Image, p.Format, p.DPIX)
	}

	for _, f := range []string{"testdata/blue-purple-pink.lossy.webp", "testdata/gopher-doc.1bpp.lossless.webp"} {
		b := modCacheFile(t, f)
		p := readerPages(t, b, filepath.Base(f), nil)[0]
		if p.Format != "webp" || p.Image.Bounds().Empty() {
			t.Errorf("%s: %q %v", f, p.Format, p.Image.Bounds())
		}
	}
}

// TestPDFJPEGPages writes PDFs with fpdf embedding 1 and 3 JPEGs, each page
// sized so the image fills it at 200 dpi: the effective resolution is image
// pixels over page inches (ISO 32000-1 8.3.2.3: 72 units per inch).
func TestPDFJPEGPages(t *testing.T) {
	var jpegs [][]byte
	sizes := [][2]int{{400, 300}, {320, 480}, {256, 256}}
	for _, s := range sizes {
		m := image.NewRGBA(image.Rect(0, 0, s[0], s[1]))
		for i := range m.Pix {
			m.Pix[i] = 200
		}
		jpegs = append(jpegs, jpegBytes(t, m, 90))
	}
	one := pdfFromJPEGs(t, jpegs[:1], 200)
	pages := readerPages(t, one, "one.pdf", nil)
	if len(pages) != 1 || pages[0].Format != "pdf" || pages[0].Image.Bounds().Dx() != 400 {
		t.Fatalf("one page: %+v", pages)
	}
	three := pdfFromJPEGs(t, jpegs, 200)
	path := writeTemp(t, "three.pdf", three)
	n, w, h, format, err := Config(path)
	if err != nil || n != 3 || w != 400 || h != 300 || format != "pdf" {
		t.Fatalf("Config = %d %d %d %q %v", n, w, h, format, err)
	}
	var got []Page
	err = Pages(path, nil, func(p Page) error { got = append(got, p); return nil })
	if err != nil {
		t.Fatal(err)
	}
	for i, p := range got {
		if p.Index != i+1 || p.Image.Bounds().Dx() != sizes[i][0] || p.Image.Bounds().Dy() != sizes[i][1] {
			t.Errorf("page %d: index %d size %v", i+1, p.Index, p.Image.Bounds())
		}
		if _, ok := p.Image.(*image.YCbCr); !ok {
			t.Errorf("page %d: %T, want *image.YCbCr", i+1, p.Image)
		}
		// fpdf rounds page sizes to 1/100 pt, hence the tolerance.
		if !near(p.DPIX, 200, 0.1) || !near(p.DPIY, 200, 0.1) || p.Orientation != 1 {
			t.Errorf("page %d: dpi %g × %g orientation %d", i+1, p.DPIX, p.DPIY, p.Orientation)
		}
	}
	// The iterator stops at the caller's error and returns it unchanged.
	stop := errors.New("stop")
	calls := 0
	if err := Pages(path, nil, func(Page) error { calls++; return stop }); err != stop || calls != 1 {
		t.Errorf("iterator: %v after %d calls", err, calls)
	}
}

// TestPDFVector: a page drawn only with vector paths has no raster image.
func TestPDFVector(t *testing.T) {
	_, err := Reader(bytes.NewReader(pdfVector(t)), int64(len(pdfVector(t))), "export.pdf", nil)
	if !errors.Is(err, ecg.ErrUnreadable) || !errors.Is(err, ErrNoRaster) {
		t.Fatalf("err = %v", err)
	}
	if !strings.Contains(err.Error(), "PDF page 1 has no raster image (vector PDFs are not supported yet)") {
		t.Errorf("message: %v", err)
	}
}

// TestPDFRawImages builds PDFs by hand with FlateDecode gray, 1-bit,
// Indexed and RGB images, a CCITT Group 4 image, a /Rotate 90 page, an
// image placed with margins, and JBIG2 (unsupported).
func TestPDFRawImages(t *testing.T) {
	g := grayPattern(30, 20)
	// 1-bit: one byte per row of 8 px, alternating columns.
	bits := bytes.Repeat([]byte{0xAA}, 20)
	rgb := make([]byte, 30*20*3)
	for i := range rgb {
		rgb[i] = byte(i * 13)
	}
	idx := make([]byte, 30*20)
	for i := range idx {
		idx[i] = byte(i % 3)
	}
	pages := []rawPDFPage{
		// 30 × 20 px over 72 × 48 pt (1 × 2/3 inch) = 30 dpi each way.
		{mediaW: 72, mediaH: 48, imageDict: "/Width 30 /Height 20 /ColorSpace /DeviceGray /BitsPerComponent 8 /Filter /FlateDecode", stream: zlibBytes(g.Pix)},
		{mediaW: 72, mediaH: 48, rotate: 90, imageDict: "/Width 30 /Height 20 /ColorSpace /DeviceGray /BitsPerComponent 8 /Filter /FlateDecode", stream: zlibBytes(g.Pix)},
		{mediaW: 72, mediaH: 72, imageDict: "/Width 8 /Height 20 /ColorSpace /DeviceGray /BitsPerComponent 1 /Decode [1 0]", stream: bits},
		{mediaW: 72, mediaH: 48, imageDict: "/Width 30 /Height 20 /ColorSpace /DeviceRGB /BitsPerComponent 8 /Filter [/ASCIIHexDecode /FlateDecode]", stream: append([]byte(strings.ToUpper(hexOf(zlibBytes(rgb)))), '>')},
		{mediaW: 72, mediaH: 48, imageDict: "/Width 30 /Height 20 /ColorSpace [/Indexed /DeviceRGB 2 <FF0000 00FF00 0000FF>] /BitsPerComponent 8", stream: idx},
		// Image drawn at 1 × 1 inch inside a letter page with a margin:
		// 30 dpi from the placement, not from the page size.
		{mediaW: 612, mediaH: 792, imageDict: "/Width 30 /Height 20 /ColorSpace /DeviceGray /BitsPerComponent 8", stream: g.Pix, content: "q 1 0 0 1 100 100 cm q 72 0 0 48 0 0 cm /Im0 Do Q Q"},
		{mediaW: 72, mediaH: 72, imageDict: "/Width 30 /Height 20 /ColorSpace /DeviceGray /BitsPerComponent 1 /Filter /JBIG2Decode", stream: []byte{0, 1, 2}},
		// Placed turned: (s, t) → (48t, 72 − 36s). Stored columns run down
		// the page and rows leftwards: row 0 right, column 0 top, i.e.
		// orientation 6; 20 px across 48 pt = 30 dpi horizontally, 30 px
		// down 36 pt = 60 dpi vertically.
		{mediaW: 72, mediaH: 72, imageDict: "/Width 30 /Height 20 /ColorSpace /DeviceGray /BitsPerComponent 8", stream: g.Pix, content: "q 0 -36 48 0 0 72 cm /Im0 Do Q"},
		// Inside a form XObject: page cm scale 2, form /Matrix scale 0.5
		// and a translation, form content 36 × 24 → 36 × 24 pt overall:
		// 30 px / 0.5 in = 60 dpi, 20 px / (1/3 in) = 60 dpi, on a letter
		// page whose MediaBox would have said 3.5 dpi.
		{mediaW: 612, mediaH: 792, imageDict: "/Width 30 /Height 20 /ColorSpace /DeviceGray /BitsPerComponent 8", stream: g.Pix,
			content: "q 2 0 0 2 0 0 cm /Fm0 Do Q", formMatrix: "[0.5 0 0 0.5 10 10]", formContent: "q 36 0 0 24 0 0 cm /Im0 Do Q"},
	}
	b := rawPDF(pages)
	ps, err := Reader(bytes.NewReader(b), int64(len(b)), "mixed.pdf", &Options{Pages: []int{1, 2, 3, 4, 5, 6}})
	if err != nil {
		t.Fatal(err)
	}
	sameGray(t, ps[0].Image, g)
	if !near(ps[0].DPIX, 30, 1e-9) || !near(ps[0].DPIY, 30, 1e-9) {
		t.Errorf("page 1 dpi %g × %g", ps[0].DPIX, ps[0].DPIY)
	}
	// /Rotate 90 turns the page clockwise for viewing: orientation 6.
	if ps[1].Orientation != 6 {
		t.Errorf("page 2 orientation %d, want 6", ps[1].Orientation)
	}
	sameGray(t, ps[1].Image, Orient(g, 6).(*image.Gray))

	bw := ps[2].Image.(*image.Gray)
	// 0xAA = 10101010; Decode [1 0] inverts: sample 1 → black (0).
	if bw.GrayAt(0, 0).Y != 0 || bw.GrayAt(1, 0).Y != 255 || bw.GrayAt(7, 19).Y != 255 {
		t.Errorf("1-bit page: %d %d %d", bw.GrayAt(0, 0).Y, bw.GrayAt(1, 0).Y, bw.GrayAt(7, 19).Y)
	}
	n := ps[3].Image.(*image.NRGBA)
	for i := 0; i < 30*20; i++ {
		if n.Pix[4*i] != rgb[3*i] || n.Pix[4*i+1] != rgb[3*i+1] || n.Pix[4*i+2] != rgb[3*i+2] || n.Pix[4*i+3] != 255 {
			t.Fatalf("rgb pixel %d", i)
		}
	}
	pal := ps[4].Image.(*image.Paletted)
	if !bytes.Equal(pal.Pix, idx) || pal.Palette[1] != (color.RGBA{0, 255, 0, 255}) {
		t.Errorf("indexed page: palette %v", pal.Palette)
	}
	if !near(ps[5].DPIX, 30, 1e-9) || !near(ps[5].DPIY, 30, 1e-9) {
		t.Errorf("placed image dpi %g × %g, want 30 × 30", ps[5].DPIX, ps[5].DPIY)
	}
	turned := readerPages(t, b, "mixed.pdf", &Options{Pages: []int{8}})[0]
	sameGray(t, turned.Image, Orient(g, 6).(*image.Gray))
	if turned.Orientation != 6 || !near(turned.DPIX, 30, 1e-9) || !near(turned.DPIY, 60, 1e-9) {
		t.Errorf("turned placement: orientation %d dpi %g × %g, want 6, 30 × 60", turned.Orientation, turned.DPIX, turned.DPIY)
	}
	inForm := readerPages(t, b, "mixed.pdf", &Options{Pages: []int{9}})[0]
	sameGray(t, inForm.Image, g)
	if inForm.Orientation != 1 || !near(inForm.DPIX, 60, 1e-9) || !near(inForm.DPIY, 60, 1e-9) {
		t.Errorf("image in a form: orientation %d dpi %g × %g, want 1, 60 × 60", inForm.Orientation, inForm.DPIX, inForm.DPIY)
	}
	_, err = Reader(bytes.NewReader(b), int64(len(b)), "mixed.pdf", &Options{Pages: []int{7}})
	if !errors.Is(err, ErrUnsupported) || !errors.Is(err, ecg.ErrUnreadable) || !strings.Contains(err.Error(), "JBIG2") {
		t.Errorf("JBIG2 page: %v", err)
	}
}

// TestPDFCCITT embeds the x/image Group 4 test stream as a CCITTFaxDecode
// image (ISO 32000-1 7.4.6: K −1 = Group 4, Columns 153) at 204 × 98 dpi.
func TestPDFCCITT(t *testing.T) {
	want := readerPages(t, modCacheFile(t, "ccitt/testdata/bw-gopher.png"), "bw-gopher.png", nil)[0].Image.(*image.Gray)
	for _, tc := range []struct{ file, parms string }{
		{"bw-gopher.ccitt_group4", "/K -1 /Columns 153 /Rows 55"},
		// Coded with black and white swapped: BlackIs1 true makes the coded
		// black pixels read 1 = white through DeviceGray (7.4.6 table 11).
		{"bw-gopher-inverted.ccitt_group4", "/K -1 /Columns 153 /Rows 55 /BlackIs1 true"},
		{"bw-gopher-aligned.ccitt_group4", "/K -1 /Columns 153 /EncodedByteAlign true"},
		{"bw-gopher.ccitt_group3", "/K 0 /Columns 153 /Rows 55"},
	} {
		t.Run(tc.file, func(t *testing.T) {
			b := rawPDF([]rawPDFPage{{
				mediaW: 153.0 / 204 * 72, mediaH: 55.0 / 98 * 72,
				imageDict: "/Width 153 /Height 55 /ColorSpace /DeviceGray /BitsPerComponent 1 /Filter /CCITTFaxDecode /DecodeParms << " + tc.parms + " >>",
				stream:    modCacheFile(t, "ccitt/testdata/"+tc.file),
			}})
			p := readerPages(t, b, "fax.pdf", nil)[0]
			sameGray(t, p.Image, want)
			if !near(p.DPIX, 204, 1e-6) || !near(p.DPIY, 98, 1e-6) {
				t.Errorf("dpi %g × %g, want 204 × 98", p.DPIX, p.DPIY)
			}
		})
	}
	// Two-dimensional Group 3 (K > 0) is refused clearly.
	b := rawPDF([]rawPDFPage{{mediaW: 72, mediaH: 72,
		imageDict: "/Width 153 /Height 55 /ImageMask true /Filter /CCITTFaxDecode /DecodeParms << /K 4 /Columns 153 >>",
		stream:    []byte{0, 0}}})
	if _, err := Reader(bytes.NewReader(b), int64(len(b)), "k4.pdf", nil); !errors.Is(err, ErrUnsupported) {
		t.Errorf("K > 0: %v", err)
	}
}

func hexOf(b []byte) string {
	const digits = "0123456789abcdef"
	out := make([]byte, 2*len(b))
	for i, c := range b {
		out[2*i], out[2*i+1] = digits[c>>4], digits[c&15]
	}
	return string(out)
}

// TestBadInput: every failure is one line naming the file, and matches
// ecg.ErrUnreadable.
func TestBadInput(t *testing.T) {
	dir := t.TempDir()
	pngFull := pngBytes(t, grayPattern(64, 64))
	jpgFull := jpegBytes(t, blockImage(), 90)
	write := func(name string, b []byte) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	for _, tc := range []struct {
		name, path, want string
	}{
		{"empty", write("empty.png", nil), "empty file"},
		{"truncated png", write("half.png", pngFull[:len(pngFull)/2]), "truncated png"},
		{"truncated jpeg", write("half.jpg", jpgFull[:len(jpgFull)/2]), "jpeg"},
		{"text named png", write("notes.png", []byte("patient list\nnot an image\n")), "not an image file"},
		{"unknown binary", write("blob.png", []byte{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}), "not a recognised image format"},
		{"heic", write("photo.jpg", append([]byte("\x00\x00\x00\x18ftypheic"), make([]byte, 20)...)), "HEIC"},
		{"missing", filepath.Join(dir, "nope.png"), "no such file"},
		{"directory", dir, "is a directory"},
		{"corrupt pdf", write("bad.pdf", []byte("%PDF-1.4\n1 0 obj garbage\n")), "pdf"},
		{"corrupt tiff", write("bad.tif", []byte("II*\x00\xff\xff\x00\x00")), "tiff"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := File(tc.path, nil)
			if err == nil {
				t.Fatal("no error")
			}
			if !errors.Is(err, ecg.ErrUnreadable) {
				t.Errorf("%v does not wrap ecg.ErrUnreadable", err)
			}
			msg := err.Error()
			if !strings.HasPrefix(msg, tc.path+": ") || strings.Contains(msg, "\n") || !strings.Contains(msg, tc.want) {
				t.Errorf("message %q: want one line starting with the path and containing %q", msg, tc.want)
			}
			if _, _, _, _, err := Config(tc.path); tc.name != "truncated png" && tc.name != "truncated jpeg" && !errors.Is(err, ecg.ErrUnreadable) {
				t.Errorf("Config: %v", err)
			}
		})
	}
}

// hugePNG is a valid PNG signature and IHDR claiming w × h px, then IEND.
func hugePNG(w, h uint32) []byte {
	ihdr := make([]byte, 13)
	binary.BigEndian.PutUint32(ihdr[0:], w)
	binary.BigEndian.PutUint32(ihdr[4:], h)
	ihdr[8], ihdr[9] = 8, 2 // 8-bit truecolour
	b := []byte("\x89PNG\r\n\x1a\n")
	b = append(b, pngChunk("IHDR", ihdr)...)
	b = append(b, pngChunk("IDAT", []byte{0x78, 0x9c})...)
	return append(b, pngChunk("IEND", nil)...)
}

// TestPixelBudget: a header claiming 100 000 × 100 000 px is refused from
// the header alone, allocating almost nothing; Options.MaxPixels applies.
func TestPixelBudget(t *testing.T) {
	b := hugePNG(100000, 100000)
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, err := Reader(bytes.NewReader(b), int64(len(b)), "page.png", nil)
	runtime.ReadMemStats(&after)
	if !errors.Is(err, ErrTooLarge) || !errors.Is(err, ecg.ErrUnreadable) {
		t.Fatalf("err = %v", err)
	}
	want := "page.png: image is 100000 × 100000 px (10000 Mpx), over the 150 Mpx limit; raise it with --max-pixels"
	if err.Error() != want {
		t.Errorf("message\n got %q\nwant %q", err.Error(), want)
	}
	if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 1<<20 {
		t.Errorf("allocated %d bytes before refusing", alloc)
	}
	// Same through Config-sized budget on a real file and a PDF page.
	small := pngBytes(t, grayPattern(100, 100))
	if _, err := Reader(bytes.NewReader(small), int64(len(small)), "p.png", &Options{MaxPixels: 9999}); !errors.Is(err, ErrTooLarge) {
		t.Errorf("MaxPixels 9999 on 100×100: %v", err)
	}
	if _, err := Reader(bytes.NewReader(small), int64(len(small)), "p.png", &Options{MaxPixels: 10000}); err != nil {
		t.Errorf("MaxPixels 10000 on 100×100: %v", err)
	}
	m := image.NewRGBA(image.Rect(0, 0, 64, 64))
	pdf := pdfFromJPEGs(t, [][]byte{jpegBytes(t, m, 80)}, 100)
	if _, err := Reader(bytes.NewReader(pdf), int64(len(pdf)), "s.pdf", &Options{MaxPixels: 4000}); !errors.Is(err, ErrTooLarge) || !strings.Contains(err.Error(), "page 1") {
		t.Errorf("pdf over budget: %v", err)
	}
}

// TestSniffByContent: a PNG named .jpg is decoded as PNG.
func TestSniffByContent(t *testing.T) {
	b := pngBytes(t, grayPattern(9, 9), pHYs(11811, 11811))
	path := writeTemp(t, "misnamed.jpg", b)
	n, w, h, format, err := Config(path)
	if err != nil || n != 1 || w != 9 || h != 9 || format != "png" {
		t.Fatalf("Config = %d %d %d %q %v", n, w, h, format, err)
	}
	// Config reports the upright size of a turned photo.
	j := jpegBytes(t, blockImage(), 80, exifSegment(binary.BigEndian, 6))
	_, w, h, _, err = ReaderConfig(bytes.NewReader(j), int64(len(j)), "phone.jpg")
	if err != nil || w != 32 || h != 48 {
		t.Errorf("ReaderConfig of orientation 6: %d × %d, %v", w, h, err)
	}
}

// TestContentPlacement checks the content-stream scan on matrices worked
// by hand (ISO 32000-1 8.3.4: cm premultiplies the CTM).
func TestContentPlacement(t *testing.T) {
	for _, tc := range []struct {
		content string
		want    [6]float64
		ok      bool
	}{
		{"q 100 0 0 50 10 20 cm /Im1 Do Q", [6]float64{100, 0, 0, 50, 10, 20}, true},
		// translate then scale: [2 0 0 3 0 0] × [1 0 0 1 5 7] = [2 0 0 3 5 7].
		{"1 0 0 1 5 7 cm 2 0 0 3 0 0 cm /Im1 Do", [6]float64{2, 0, 0, 3, 5, 7}, true},
		// q/Q restores; a string with a fake operator and an inline image are skipped.
		{"q 9 0 0 9 0 0 cm Q (Do cm \\) Q) Tj BI /W 1 /H 1 ID \x00EI\x01 EI q 0 1 -1 0 50 0 cm /Im1 Do", [6]float64{0, 1, -1, 0, 50, 0}, true},
		{"q 1 0 0 1 0 0 cm /Other Do Q", [6]float64{1, 0, 0, 1, 0, 0}, false},
	} {
		got, ok := drawnXObjects([]byte(tc.content))["Im1"]
		if ok != tc.ok || (ok && got != tc.want) {
			t.Errorf("%q: %v %v, want %v %v", tc.content, got, ok, tc.want, tc.ok)
		}
	}
	// A 90° placement [0 H -W 0 W 0] (image columns run up the page):
	// stored column 0 at the bottom, row 0 at the left → orientation 8.
	if pl := placement([6]float64{0, 200, -100, 0, 100, 0}, 0, 20, 10); pl.orientation != 8 || !near(pl.dpiX, 20/(200.0/72), 1e-9) {
		t.Errorf("rotated placement: %+v", pl)
	}
}

// TestUnsupportedVariants: an encrypted PDF and a JPEG-in-TIFF page
// (TIFF Compression 7, which golang.org/x/image/tiff does not decode)
// are refused as unsupported, naming the file.
func TestUnsupportedVariants(t *testing.T) {
	pdf := fpdf.New("P", "mm", "A4", "")
	pdf.SetProtection(0, "user-secret", "owner-secret")
	pdf.AddPage()
	pdf.Line(10, 10, 100, 100)
	var buf bytes.Buffer
	if err := pdf.Output(&buf); err != nil {
		t.Fatal(err)
	}
	_, err := Reader(bytes.NewReader(buf.Bytes()), int64(buf.Len()), "locked.pdf", nil)
	if !errors.Is(err, ErrUnsupported) || !errors.Is(err, ecg.ErrUnreadable) || !strings.Contains(err.Error(), "encrypted") {
		t.Errorf("encrypted pdf: %v", err)
	}

	j := jpegBytes(t, grayPattern(16, 16), 90)
	tif := tiffBytes(binary.LittleEndian, []tiffPageSpec{{w: 16, h: 16, compression: 6, photometric: 1, bits: 8, data: j}})
	_, err = Reader(bytes.NewReader(tif), int64(len(tif)), "ojpeg.tif", nil)
	if !errors.Is(err, ErrUnsupported) || !strings.HasPrefix(err.Error(), "ojpeg.tif: page 1: ") {
		t.Errorf("old-style JPEG-in-TIFF: %v", err)
	}
}

// TestTIFFJPEG: Compression 7 pages (TIFF Technical Note 2) decode here
// since x/image/tiff does not: a one-strip grey page and a colour page
// whose strip is an abbreviated JPEG stream with its tables in JPEGTables.
func TestTIFFJPEG(t *testing.T) {
	g := grayPattern(32, 24)
	gj := jpegBytes(t, g, 100)
	col := blockImage()
	cj := jpegBytes(t, col, 100)
	// Split the colour stream: tables (SOI, DQT, DHT… up to SOF) and an
	// abbreviated image stream (SOI, SOF, SOS…), as TIFF writers store it.
	sof := bytes.Index(cj, []byte{0xFF, 0xC0})
	tables := append(append([]byte{}, cj[:sof]...), 0xFF, 0xD9)
	abbreviated := append([]byte{0xFF, 0xD8}, cj[sof:]...)
	b := tiffBytes(binary.LittleEndian, []tiffPageSpec{
		{w: 32, h: 24, compression: 7, photometric: 1, bits: 8, data: gj, xres: 300, yres: 300, unit: 2},
	})
	p := readerPages(t, b, "grey-jpeg.tif", nil)[0]
	gray, ok := p.Image.(*image.Gray)
	if !ok || p.DPIX != 300 {
		t.Fatalf("got %T dpi %g", p.Image, p.DPIX)
	}
	for i, v := range g.Pix {
		if !near(float64(gray.Pix[i]), float64(v), 24) { // quality-100 JPEG, fine texture
			t.Fatalf("grey pixel %d = %d, want ≈ %d", i, gray.Pix[i], v)
		}
	}

	c := tiffBytesExtra(binary.LittleEndian, tiffPageSpec{w: 48, h: 32, compression: 7, photometric: 6, bits: 8, data: abbreviated}, 3, tables)
	p = readerPages(t, c, "colour-jpeg.tif", nil)[0]
	for by := 0; by < 2; by++ {
		for bx := 0; bx < 3; bx++ {
			want := blockColors[by][bx]
			r, g, bl, _ := p.Image.At(bx*16+8, by*16+8).RGBA()
			if !near(float64(r>>8), float64(want.R), 12) || !near(float64(g>>8), float64(want.G), 12) || !near(float64(bl>>8), float64(want.B), 12) {
				t.Errorf("block (%d,%d) = %d,%d,%d, want %v", bx, by, r>>8, g>>8, bl>>8, want)
			}
		}
	}
}

// TestPartialFiles: a bad page does not hide the good ones, and a
// multi-page TIFF cut short returns its complete pages plus an error
// saying later pages are missing.
func TestPartialFiles(t *testing.T) {
	g := grayPattern(10, 10)
	spec := []tiffPageSpec{
		{w: 10, h: 10, compression: 1, photometric: 1, bits: 8, data: g.Pix},
		{w: 10, h: 10, compression: 1, photometric: 1, bits: 8, data: g.Pix[:30]}, // strip too short
		{w: 10, h: 10, compression: 1, photometric: 1, bits: 8, data: g.Pix},
	}
	b := tiffBytes(binary.LittleEndian, spec)
	pages, err := Reader(bytes.NewReader(b), int64(len(b)), "three.tif", nil)
	if len(pages) != 2 || pages[0].Index != 1 || pages[1].Index != 3 {
		t.Fatalf("got %d pages", len(pages))
	}
	if !errors.Is(err, ecg.ErrUnreadable) || !strings.HasPrefix(err.Error(), "three.tif: page 2: ") {
		t.Errorf("err = %v", err)
	}

	spec[1].data = g.Pix
	full := tiffBytes(binary.LittleEndian, spec)
	// The last IFD starts after the third page's strip; cut inside it.
	cut := full[:len(full)-40]
	pages, err = Reader(bytes.NewReader(cut), int64(len(cut)), "cut.tif", nil)
	if len(pages) != 2 || !errors.Is(err, ecg.ErrUnreadable) || !strings.Contains(err.Error(), "directory chain broken after page 2") {
		t.Errorf("cut file: %d pages, %v", len(pages), err)
	}
	// Several failures are listed on one line.
	m := pageErrors{&Error{Name: "a.pdf", Page: 2, Reason: "x"}, &Error{Name: "a.pdf", Page: 5, Reason: "y"}}
	if m.Error() != "a.pdf: page 2: x; page 5: y" || !errors.Is(m, ecg.ErrUnreadable) {
		t.Errorf("joined: %q", m.Error())
	}
}

// TestWebPExif wraps x/image's lossless test WebP in the extended format
// (a VP8X header with the Exif flag, then the VP8L chunk, then an EXIF
// chunk holding orientation 6; WebP container specification, Google) and
// checks the orientation is applied.
func TestWebPExif(t *testing.T) {
	simple := modCacheFile(t, "testdata/gopher-doc.8bpp.lossless.webp")
	plain := readerPages(t, simple, "plain.webp", nil)[0]
	w, h := plain.Image.Bounds().Dx(), plain.Image.Bounds().Dy()
	chunk := func(fcc string, data []byte) []byte {
		out := append([]byte(fcc), 0, 0, 0, 0)
		binary.LittleEndian.PutUint32(out[4:], uint32(len(data)))
		out = append(out, data...)
		if len(data)%2 == 1 {
			out = append(out, 0)
		}
		return out
	}
	vp8x := []byte{0x08, 0, 0, 0, byte(w - 1), byte((w - 1) >> 8), byte((w - 1) >> 16), byte(h - 1), byte((h - 1) >> 8), byte((h - 1) >> 16)}
	body := append([]byte("WEBP"), chunk("VP8X", vp8x)...)
	body = append(body, simple[12:]...) // the VP8L chunk as stored
	body = append(body, chunk("EXIF", exifBlock(binary.LittleEndian, 6))...)
	file := append([]byte("RIFF\x00\x00\x00\x00"), body...)
	binary.LittleEndian.PutUint32(file[4:], uint32(len(body)))

	p := readerPages(t, file, "turned.webp", nil)[0]
	if p.Orientation != 6 || p.Image.Bounds().Dx() != h || p.Image.Bounds().Dy() != w {
		t.Fatalf("orientation %d size %v", p.Orientation, p.Image.Bounds())
	}
	want := Orient(plain.Image, 6)
	for y := 0; y < w; y += 3 {
		for x := 0; x < h; x += 3 {
			if color.NRGBAModel.Convert(p.Image.At(x, y)) != color.NRGBAModel.Convert(want.At(x, y)) {
				t.Fatalf("pixel (%d,%d)", x, y)
			}
		}
	}
}

// TestPNGExif: an eXIf chunk (PNG Extensions 1.5.0 / PNG 3rd edition;
// Exif without the "Exif\0\0" prefix) with orientation 3 turns the page
// 180°, and pHYs still gives 300 dpi.
func TestPNGExif(t *testing.T) {
	g := grayPattern(13, 7)
	b := pngBytes(t, g, pHYs(11811, 11811), pngChunk("eXIf", exifBlock(binary.BigEndian, 3)))
	p := readerPages(t, b, "turned.png", nil)[0]
	if p.Orientation != 3 || !near(p.DPIX, 300, 0.01) {
		t.Fatalf("orientation %d dpi %g", p.Orientation, p.DPIX)
	}
	sameGray(t, p.Image, Orient(g, 3).(*image.Gray))
	if v := p.Image.(*image.Gray).GrayAt(12, 6).Y; v != g.GrayAt(0, 0).Y {
		t.Errorf("bottom-right %d, want the stored top-left %d", v, g.GrayAt(0, 0).Y)
	}
}

// TestOrientYCbCr checks the fused YCbCr path against the standard
// library's own YCbCr.At for every chroma subsampling and orientation,
// including a sub-image with an odd origin.
func TestOrientYCbCr(t *testing.T) {
	ratios := []image.YCbCrSubsampleRatio{
		image.YCbCrSubsampleRatio444, image.YCbCrSubsampleRatio422, image.YCbCrSubsampleRatio420,
		image.YCbCrSubsampleRatio440, image.YCbCrSubsampleRatio411, image.YCbCrSubsampleRatio410,
	}
	for _, r := range ratios {
		full := image.NewYCbCr(image.Rect(0, 0, 23, 17), r)
		for i := range full.Y {
			full.Y[i] = uint8(i*37 + 11)
		}
		for i := range full.Cb {
			full.Cb[i], full.Cr[i] = uint8(i*53+7), uint8(i*29+101)
		}
		for _, src := range []*image.YCbCr{full, full.SubImage(image.Rect(3, 5, 20, 14)).(*image.YCbCr)} {
			b := src.Bounds()
			for o := 2; o <= 8; o++ {
				d := Orient(src, o).(*image.NRGBA)
				for y := 0; y < b.Dy(); y++ {
					for x := 0; x < b.Dx(); x++ {
						dx, dy := displayed(o, x, y, b.Dx(), b.Dy())
						want := color.NRGBAModel.Convert(src.At(b.Min.X+x, b.Min.Y+y))
						if got := d.NRGBAAt(dx, dy); got != want {
							t.Fatalf("%v %v o=%d: (%d,%d) → %v, want %v", r, b, o, x, y, got, want)
						}
					}
				}
			}
		}
	}
}
