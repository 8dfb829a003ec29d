package cli

import (
	"bytes"
	"image"
	"image/draw"
	"image/png"
	"path/filepath"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/render"
	"tracelift/synth"
)

// TestDigitizePartial erases the ink of one lead panel (V1, row 1, column
// 3 of a 3 × 4 + 1 page): the other leads are still written, the page is
// reported as partial (exit 5).
func TestDigitizePartial(t *testing.T) {
	rec, err := synth.Generate(synth.Default(), 43)
	require.NoError(t, err)
	p, err := render.Render(rec, &render.Options{Layout: render.Layout3x4R1, DPI: 200, Condition: "clean"})
	require.NoError(t, err)
	img := image.NewNRGBA(p.Image.Bounds())
	draw.Draw(img, img.Bounds(), p.Image, image.Point{}, draw.Src)
	for _, pan := range p.Truth.Panels {
		if pan.Lead != "V1" {
			continue
		}
		x0, y0 := p.Truth.PaperToPx(pan.X0MM+0.5, pan.BaselineYMM-14)
		x1, y1 := p.Truth.PaperToPx(pan.X1MM-0.5, pan.BaselineYMM+14)
		// Paint paper colour over the trace only (keep it blank white).
		draw.Draw(img, image.Rect(int(x0), int(y0), int(x1), int(y1)), image.White, image.Point{}, draw.Src)
	}
	var buf bytes.Buffer
	require.NoError(t, png.Encode(&buf, img))
	in, out := t.TempDir(), t.TempDir()
	f := writeFile(t, in, "torn.png", buf.Bytes())
	code, stdout, stderr := run("digitize", f, "-o", out)
	t.Logf("stdout:\n%s\nstderr:\n%s", stdout, stderr)
	assert.Equal(t, ExitPartial, code)
	assert.FileExists(t, filepath.Join(out, "torn.csv"))
	assert.FileExists(t, filepath.Join(out, "torn.json"))
	assert.Contains(t, stdout, "V1")
}
