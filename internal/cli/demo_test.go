package cli

import (
	"path/filepath"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/export"
)

func TestDemo(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises a full page")
	}
	out := filepath.Join(t.TempDir(), "demo")
	code, stdout, stderr := run("demo", "-o", out)
	require.Equal(t, ExitOK, code, stderr)
	for _, f := range []string{"scanned-page.png", "scanned-page.truth.json", demoStem + ".csv", demoStem + ".json",
		demoStem + ".edf", export.WFDBName(demoStem) + ".hea", demoStem + ".xml", demoStem + ".pdf",
		demoStem + "-overlay.svg", demoStem + "-overlay.png"} {
		assert.FileExists(t, filepath.Join(out, f))
	}
	assert.Contains(t, stdout, demoClinic)
	assert.Contains(t, stdout, "Accuracy against the truth")
	assert.Contains(t, stdout, "12 of 12 printed leads read")
	assert.Contains(t, stdout, "Caution")

	code, _, _ = run("demo", "extra")
	assert.Equal(t, ExitUsage, code)
}
