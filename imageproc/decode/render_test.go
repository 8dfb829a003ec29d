package decode

import (
	"bytes"
	"errors"
	"image/color"
	"strings"
	"testing"

	"tracelift/render"
)

// TestRenderedPages decodes pages printed by the project's own renderer:
// its PNG must come back pixel for pixel, and its vector PDF must be
// refused with the "no raster image" message (the digitiser works from
// raster scans only).
func TestRenderedPages(t *testing.T) {
	rec, err := render.CorpusRecord(7, false)
	if err != nil {
		t.Fatal(err)
	}
	opt := &render.Options{DPI: 100}
	page, err := render.Render(rec, opt)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := page.WritePNG(&buf); err != nil {
		t.Fatal(err)
	}
	p := readerPages(t, buf.Bytes(), "rendered.png", nil)[0]
	want := page.Image
	if p.Image.Bounds().Size() != want.Bounds().Size() {
		t.Fatalf("size %v, want %v", p.Image.Bounds().Size(), want.Bounds().Size())
	}
	b, wb := p.Image.Bounds(), want.Bounds()
	for y := 0; y < b.Dy(); y += 7 {
		for x := 0; x < b.Dx(); x += 5 {
			g := color.NRGBAModel.Convert(p.Image.At(b.Min.X+x, b.Min.Y+y))
			w := color.NRGBAModel.Convert(want.At(wb.Min.X+x, wb.Min.Y+y))
			if g != w {
				t.Fatalf("pixel (%d,%d) = %v, want %v", x, y, g, w)
			}
		}
	}

	buf.Reset()
	if err := render.WritePDF(&buf, rec, opt); err != nil {
		t.Fatal(err)
	}
	_, err = Reader(bytes.NewReader(buf.Bytes()), int64(buf.Len()), "printed.pdf", nil)
	if !errors.Is(err, ErrNoRaster) || !strings.Contains(err.Error(), "vector PDFs are not supported yet") {
		t.Errorf("vector PDF from render: %v", err)
	}
}
