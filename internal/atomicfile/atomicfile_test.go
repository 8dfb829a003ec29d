package atomicfile

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"testing"

	"tracelift/ecg"
)

func TestWriteAllSuccessAndFailure(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a.dat"), filepath.Join(dir, "a.hea")
	ok := func(s string) func(io.Writer) error {
		return func(w io.Writer) error { _, err := io.WriteString(w, s); return err }
	}
	if err := WriteAll(Part{a, ok("data")}, Part{b, ok("header")}); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(b); string(got) != "header" {
		t.Errorf("a.hea = %q", got)
	}
	// The second part fails: neither file changes and no temporary is left.
	err := WriteAll(Part{a, ok("new data")}, Part{b, func(io.Writer) error { return fmt.Errorf("boom") }})
	if !errors.Is(err, ecg.ErrOutput) {
		t.Errorf("err = %v, want ErrOutput", err)
	}
	if got, _ := os.ReadFile(a); string(got) != "data" {
		t.Errorf("a.dat changed to %q", got)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 2 {
		t.Errorf("folder holds %d entries, want 2", len(ents))
	}
	// A classified error keeps its class.
	err = WriteFile(a, func(io.Writer) error { return fmt.Errorf("x: %w", ecg.ErrNoECG) })
	if !errors.Is(err, ecg.ErrNoECG) || errors.Is(err, ecg.ErrOutput) {
		t.Errorf("err = %v", err)
	}
	if err := WriteFile(filepath.Join(dir, "missing", "x"), ok("")); !errors.Is(err, ecg.ErrOutput) {
		t.Errorf("missing folder: %v", err)
	}
}
