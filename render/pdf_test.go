package render

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"strings"
	"testing"

	"github.com/pdfcpu/pdfcpu/pkg/api"
)

// TestWritePDF writes a PDF page and reads it back with an independent
// reader (pdfcpu): one page of A4 landscape (297 × 210 mm = 841.89 ×
// 595.28 pt, ISO 216), drawn with vector paths (no raster image), and
// the first calibration pulse's top corner where the truth puts it,
// gain × 1 mV above the baseline.
func TestWritePDF(t *testing.T) {
	rec := testRecord(500, 10)
	for _, gain := range []float64{10, 20} {
		var buf bytes.Buffer
		opt := &Options{Layout: Layout3x4R1, GainMMPerMV: gain}
		if err := WritePDF(&buf, rec, opt); err != nil {
			t.Fatal(err)
		}
		dims, err := api.PageDims(bytes.NewReader(buf.Bytes()), nil)
		if err != nil {
			t.Fatal(err)
		}
		if len(dims) != 1 || math.Abs(dims[0].Width-841.89) > 0.05 || math.Abs(dims[0].Height-595.28) > 0.05 {
			t.Fatalf("page dims %v, want one 841.89 × 595.28 pt page", dims)
		}
		var content strings.Builder
		err = api.ExtractContent(bytes.NewReader(buf.Bytes()), nil, func(r io.Reader, _ int) error {
			_, err := io.Copy(&content, r)
			return err
		}, nil)
		if err != nil {
			t.Fatal(err)
		}
		c := content.String()
		if strings.Contains(c, " Do") {
			t.Error("PDF page paints an image; want vector paths only")
		}
		if n := strings.Count(c, " l\n"); n < 5000 {
			t.Errorf("%d line segments in the page, want the traces as paths", n)
		}
		// Truth geometry from the raster renderer (same plan).
		p, err := Render(rec, &Options{Layout: Layout3x4R1, GainMMPerMV: gain, DPI: 50})
		if err != nil {
			t.Fatal(err)
		}
		pu := p.Truth.Pulses[0]
		k := 72 / 25.4
		top := fmt.Sprintf("%.2f %.2f l", pu.X0MM*k, (210-(pu.BaselineYMM-gain))*k)
		foot := fmt.Sprintf("%.2f %.2f l", pu.X0MM*k, (210-pu.BaselineYMM)*k)
		if !strings.Contains(c, top) || !strings.Contains(c, foot) {
			t.Errorf("gain %g: pulse corners %q / %q not in the page content", gain, foot, top)
		}
	}
}
