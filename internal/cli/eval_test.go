package cli

import (
	"context"
	"encoding/json"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/internal/atomicfile"
	"tracelift/render"
	"tracelift/synth"
)

func TestEvalFlags(t *testing.T) {
	testFlags(t, newEvalCmd, []flagCase[evalOptions]{
		{"defaults", nil, func(t *testing.T, o *evalOptions) {
			assert.Equal(t, render.ConditionNames(), o.Conditions)
			assert.Equal(t, render.LayoutNames(), o.Layouts)
			assert.Equal(t, 3, o.N)
			assert.Equal(t, uint64(1), o.Seed)
		}, false},
		{"subset", []string{"--conditions", "clean, fax", "--layouts", "3x4+1,6x2", "-n", "20", "--seed", "7", "-j", "2"}, func(t *testing.T, o *evalOptions) {
			assert.Equal(t, []string{"clean", "fax"}, o.Conditions)
			assert.Equal(t, []string{"3x4+1", "6x2"}, o.Layouts)
			assert.Equal(t, 20, o.N)
			assert.Equal(t, uint64(7), o.Seed)
			assert.Equal(t, 2, o.Workers)
		}, false},
		{"any layout", []string{"--layouts", "any"}, func(t *testing.T, o *evalOptions) {
			assert.Nil(t, o.Layouts)
		}, false},
		{"unknown condition", []string{"--conditions", "coffee-stain"}, nil, true},
		{"unknown layout", []string{"--layouts", "5x5"}, nil, true},
		{"zero n", []string{"-n", "0"}, nil, true},
		{"stray argument", []string{"extra"}, nil, true},
	})
}

func TestEvalRunsAndWritesJSON(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises a page")
	}
	dir := t.TempDir()
	ios, stdout, _ := testIOS()
	js := filepath.Join(dir, "eval.json")
	opts := &evalOptions{Conditions: []string{"clean"}, Layouts: []string{"3x4+1"}, N: 1, Seed: 3, Workers: 1, JSONPath: js, RateHz: 500, Quiet: true}
	require.NoError(t, runEval(context.Background(), ios, opts, "tracelift eval test"))
	assert.Contains(t, stdout.String(), "By condition:")
	assert.Contains(t, stdout.String(), "clean")

	b, err := os.ReadFile(js)
	require.NoError(t, err)
	var rep evalReport
	require.NoError(t, json.Unmarshal(b, &rep))
	require.Len(t, rep.Pages, 1)
	p := rep.Pages[0]
	assert.Equal(t, "clean_3x4+1_0003", p.Name)
	assert.Equal(t, 12, p.LeadsPrinted)
	assert.Equal(t, 12, p.LeadsFound)
	// Render truth: 300 dpi = 11.811 px/mm; the grid must be within 1 %.
	assert.Less(t, abs(float64(p.PxPerMMXErrPct)), 1.0)
	assert.True(t, p.GainCorrect)
	require.Len(t, rep.ByCond, 1)
	assert.Equal(t, 1, rep.ByCond[0].Pages)
	assert.Equal(t, "tracelift eval test", rep.Command)
}

func TestEvalDir(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises a page")
	}
	dir := t.TempDir()
	rec, err := synth.Generate(synth.Default(), 9)
	require.NoError(t, err)
	page, err := render.Render(rec, &render.Options{Layout: render.Layout6x2, DPI: 150, Condition: "clean"})
	require.NoError(t, err)
	require.NoError(t, atomicfile.WriteFile(filepath.Join(dir, "p1.png"), func(f io.Writer) error { return page.WritePNG(f) }))
	require.NoError(t, atomicfile.WriteFile(filepath.Join(dir, "p1.truth.json"), func(f io.Writer) error { return page.WriteTruth(f) }))
	require.NoError(t, os.WriteFile(filepath.Join(dir, "lonely.png"), []byte("no truth"), 0o644))
	ios, stdout, _ := testIOS()
	require.NoError(t, runEval(context.Background(), ios, &evalOptions{Dir: dir, Workers: 1, RateHz: 500, Quiet: true, Markdown: true}, "x"))
	assert.Contains(t, stdout.String(), "| clean | 1 | 0 |", "the image without truth is left out")

	ios, _, _ = testIOS()
	err = runEval(context.Background(), ios, &evalOptions{Dir: t.TempDir(), Workers: 1, Quiet: true}, "x")
	assert.Equal(t, ExitUnreadable, ExitCode(err))
	assert.False(t, strings.Contains(err.Error(), "\n"))
}

func abs(x float64) float64 {
	if x < 0 {
		return -x
	}
	return x
}
