package cli

import (
	"bytes"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/ecg"
	"tracelift/export"
	"tracelift/export/edf"
	"tracelift/render"
	"tracelift/synth"
)

// TestRenderFlags checks how the command line fills renderOptions.
func TestRenderFlags(t *testing.T) {
	testFlags(t, newRenderCmd, []flagCase[renderOptions]{
		{"defaults", []string{"--synthetic", "-o", "p.png"}, func(t *testing.T, o *renderOptions) {
			assert.True(t, o.Synthetic)
			assert.Equal(t, "p.png", o.Out)
			assert.Equal(t, "3x4+1", o.Layout)
			assert.Equal(t, 25.0, o.Speed)
			assert.Equal(t, 10.0, o.Gain)
			assert.Equal(t, 300.0, o.DPI)
		}, false},
		{"all", []string{"--synthetic", "--hr", "95", "--axis", "-30", "--qt", "380", "--seed", "7", "--noise", "0.02",
			"--layout", "6x2", "--paper", "Letter", "--speed", "50", "--gain", "5", "--dpi", "200", "--grid", "dots",
			"--grid-color", "green", "--condition", "fax", "--pdf", "p.pdf", "--truth", "p.json"}, func(t *testing.T, o *renderOptions) {
			assert.Equal(t, 95.0, o.HR)
			assert.Equal(t, -30.0, o.Axis)
			assert.Equal(t, 380.0, o.QT)
			assert.Equal(t, uint64(7), o.Seed)
			assert.Equal(t, "6x2", o.Layout)
			assert.Equal(t, "fax", o.Condition)
			g, err := o.grid()
			require.NoError(t, err)
			assert.Equal(t, render.Grid{Kind: "dots", Color: "green"}, g)
		}, false},
		{"overlap raises the gain", []string{"--synthetic", "-o", "p.png", "--condition", "overlap"}, func(t *testing.T, o *renderOptions) {
			assert.Equal(t, 20.0, o.Gain)
		}, false},
		{"colour grid", []string{"--synthetic", "-o", "p.png", "--grid", "blue"}, func(t *testing.T, o *renderOptions) {
			g, err := o.grid()
			require.NoError(t, err)
			assert.Equal(t, render.Grid{Kind: "lines", Color: "blue"}, g)
		}, false},
		{"bad layout", []string{"--synthetic", "-o", "p.png", "--layout", "4x3"}, nil, true},
		{"bad grid", []string{"--synthetic", "-o", "p.png", "--grid", "plaid"}, nil, true},
		{"bad condition", []string{"--synthetic", "-o", "p.png", "--condition", "mud"}, nil, true},
		{"no output", []string{"--synthetic"}, nil, true},
		{"no input", []string{"-o", "p.png"}, nil, true},
		{"both inputs", []string{"x.hea", "--synthetic", "-o", "p.png"}, nil, true},
		{"bad speed", []string{"--synthetic", "-o", "p.png", "--speed", "0"}, nil, true},
		{"PNG bytes under a JPEG name", []string{"--synthetic", "-o", "p.jpg"}, nil, true},
		{"upper-case extension", []string{"--synthetic", "-o", "P.PNG"}, func(t *testing.T, o *renderOptions) {
			assert.Equal(t, "P.PNG", o.Out)
		}, false},
	})
}

// TestRenderRun renders a small synthetic page end to end through Main.
func TestRenderRun(t *testing.T) {
	dir := t.TempDir()
	png1 := filepath.Join(dir, "page.png")
	pdf := filepath.Join(dir, "page.pdf")
	js := filepath.Join(dir, "page.json")
	var out, errOut bytes.Buffer
	code := Main([]string{"render", "--synthetic", "--seed", "3", "--dpi", "100", "--layout", "cabrera-3x4",
		"-o", png1, "--pdf", pdf, "--truth", js}, nil, &out, &errOut)
	require.Equal(t, ExitOK, code, "stderr: %s", errOut.String())
	f, err := os.Open(png1)
	require.NoError(t, err)
	defer f.Close()
	cfg, err := png.DecodeConfig(f)
	require.NoError(t, err)
	assert.Equal(t, 1169, cfg.Width) // 297 mm at 100 dpi
	tr := readTruthFile(t, js)
	assert.Equal(t, "cabrera-3x4", tr.Layout)
	assert.Equal(t, cfg.Width, tr.WidthPx)
	b, err := os.ReadFile(pdf)
	require.NoError(t, err)
	assert.True(t, bytes.HasPrefix(b, []byte("%PDF-")))
	assert.Contains(t, out.String(), "wrote "+png1)
	// No temporary files left behind.
	ents, err := os.ReadDir(dir)
	require.NoError(t, err)
	assert.Len(t, ents, 3)

	// Bad layout: usage error, exit 2, nothing written.
	errOut.Reset()
	code = Main([]string{"render", "--synthetic", "--layout", "2x2", "-o", filepath.Join(dir, "x.png")}, nil, &out, &errOut)
	assert.Equal(t, ExitUsage, code)
	assert.Contains(t, errOut.String(), "unknown --layout")
	assert.NoFileExists(t, filepath.Join(dir, "x.png"))

	// Missing record file: exit 3 naming the file.
	errOut.Reset()
	code = Main([]string{"render", filepath.Join(dir, "nope.hea"), "-o", filepath.Join(dir, "y.png")}, nil, &out, &errOut)
	assert.Equal(t, ExitUnreadable, code)
	assert.Contains(t, errOut.String(), "nope.hea")
	assert.Equal(t, 1, strings.Count(strings.TrimSpace(errOut.String()), "\n")+1, "one-line error")

	// A fax of a 100 dpi page has the fax's resolution along the scan line:
	// 1728 pels over 215 mm ≈ 204 dpi (ITU-T T.4; standards.md §6.1),
	// whatever the render dpi.
	fax := filepath.Join(dir, "fax.json")
	code = Main([]string{"render", "--synthetic", "--dpi", "100", "--condition", "fax", "--truth", fax, "-q"}, nil, &out, &errOut)
	require.Equal(t, ExitOK, code, "stderr: %s", errOut.String())
	ft := readTruthFile(t, fax)
	assert.InDelta(t, 204/25.4, ft.PxPerMMX, 0.01)
	assert.Equal(t, "fax", ft.Condition)

	// Unwritable output folder: exit 6.
	code = Main([]string{"render", "--synthetic", "--dpi", "60", "-o", filepath.Join(dir, "missing", "z.png")}, nil, &out, &errOut)
	assert.Equal(t, ExitOutput, code)
}

// TestRenderFiles prints EDF+ and CSV files written by the export
// package and checks that the truth carries the file's leads.
func TestRenderFiles(t *testing.T) {
	dir := t.TempDir()
	rec, err := synth.Generate(synth.Default(), 5)
	require.NoError(t, err)
	edfPath := filepath.Join(dir, "rec.edf")
	require.NoError(t, edf.WriteFile(edfPath, rec, nil))
	csvPath := filepath.Join(dir, "rec.csv")
	require.NoError(t, export.WriteCSVFile(csvPath, rec))
	for _, in := range []string{edfPath, csvPath} {
		js := in + ".json"
		var out, errOut bytes.Buffer
		code := Main([]string{"render", in, "--dpi", "60", "--layout", "12x1", "--truth", js}, nil, &out, &errOut)
		require.Equal(t, ExitOK, code, "stderr: %s", errOut.String())
		tr := readTruthFile(t, js)
		assert.Len(t, tr.Panels, 12, in)
		back := tr.Record()
		ii := back.Signal(ecg.LeadII)
		require.NotNil(t, ii, in)
		// EDF stores 16-bit samples: within a few µV of the synthetic record.
		assert.InDelta(t, rec.Signal(ecg.LeadII).Samples[250], ii.Samples[250], 0.005, in)
	}
}

// readTruthFile reads the truth sidecar at path.
func readTruthFile(t *testing.T, path string) render.Truth {
	t.Helper()
	f, err := os.Open(path)
	require.NoError(t, err)
	defer f.Close()
	tr, err := render.ReadTruth(f)
	require.NoError(t, err)
	return tr
}
