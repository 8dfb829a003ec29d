package cli

import (
	"path/filepath"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestDemo(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises a full page")
	}
	out := filepath.Join(t.TempDir(), "demo")
	code, stdout, stderr := run("demo", "-o", out)
	require.Equal(t, ExitOK, code, stderr)
	for _, f := range []string{"scanned-page.png", "scanned-page.truth.json", demoStem + ".csv", demoStem + ".json",
		demoStem + ".edf", wfdbName(demoStem) + ".hea", demoStem + ".xml", demoStem + ".pdf"} {
		assert.FileExists(t, filepath.Join(out, f))
	}
	assert.Contains(t, stdout, demoClinic)
	assert.Contains(t, stdout, "Accuracy against the truth")
	assert.Contains(t, stdout, "12 of 12 printed leads read")
	assert.Contains(t, stdout, "Caution")

	// A second run overwrites cleanly.
	code, _, stderr = run("demo", "-o", out)
	assert.Equal(t, ExitOK, code, stderr)

	code, _, _ = run("demo", "extra")
	assert.Equal(t, ExitUsage, code)
}
