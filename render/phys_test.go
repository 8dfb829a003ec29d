package render

import (
	"bytes"
	"testing"

	"tracelift/imageproc/decode"
	"tracelift/synth"
)

// The page's resolution travels in the PNG's pHYs chunk (PNG
// specification, W3C 2003, §11.3.5.3), separately for x and y as a fax
// program records it, and is read back by the project's decoder.
func TestWritePNGRecordsResolution(t *testing.T) {
	rec, err := synth.Generate(synth.Default(), 1)
	if err != nil {
		t.Fatal(err)
	}
	for _, cond := range []string{"clean", "fax", "photo"} {
		opt, err := ConditionOptions(cond, 3)
		if err != nil {
			t.Fatal(err)
		}
		opt.DPI = 100
		if opt.Scan != nil {
			sc, err := ConditionScan(cond, opt.DPI, 3)
			if err != nil {
				t.Fatal(err)
			}
			opt.Scan = sc
		}
		page, err := Render(rec, opt)
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := page.WritePNG(&buf); err != nil {
			t.Fatal(err)
		}
		pages, err := decode.Reader(bytes.NewReader(buf.Bytes()), int64(buf.Len()), cond+".png", nil)
		if err != nil {
			t.Fatal(err)
		}
		got := pages[0]
		if cond == "photo" {
			if got.DPIX != 0 || got.DPIY != 0 {
				t.Errorf("photo: resolution %g × %g dpi recorded, want none", got.DPIX, got.DPIY)
			}
			continue
		}
		// pHYs stores whole pixels per metre: 0.5 px/m is 0.0127 dpi.
		wantX, wantY := page.Truth.PxPerMMX*25.4, page.Truth.PxPerMMY*25.4
		if d := got.DPIX - wantX; d > 0.02 || d < -0.02 {
			t.Errorf("%s: x resolution %.3f dpi, want %.3f", cond, got.DPIX, wantX)
		}
		if d := got.DPIY - wantY; d > 0.02 || d < -0.02 {
			t.Errorf("%s: y resolution %.3f dpi, want %.3f", cond, got.DPIY, wantY)
		}
		t.Logf("%s: %.2f × %.2f dpi", cond, got.DPIX, got.DPIY)
	}
}
