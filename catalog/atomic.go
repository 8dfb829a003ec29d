package catalog

import (
	"fmt"
	"os"
	"path/filepath"

	"tracelift/ecg"
)

// WriteFileAtomic writes the output file path by calling write on a
// temporary file in the same folder, syncing it and renaming it over path,
// so that readers (and a killed process) never see a half-written file.
// On any error the temporary file is removed and the error wraps
// ecg.ErrOutput.
func WriteFileAtomic(path string, write func(f *os.File) error) error {
	dir := filepath.Dir(path)
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return fmt.Errorf("%s: %w: %v", path, ecg.ErrOutput, err)
	}
	name := tmp.Name()
	fail := func(err error) error {
		tmp.Close()
		os.Remove(name)
		return fmt.Errorf("%s: %w: %v", path, ecg.ErrOutput, err)
	}
	if err := write(tmp); err != nil {
		return fail(err)
	}
	if err := tmp.Chmod(0o644); err != nil {
		return fail(err)
	}
	if err := tmp.Sync(); err != nil {
		return fail(err)
	}
	if err := tmp.Close(); err != nil {
		os.Remove(name)
		return fmt.Errorf("%s: %w: %v", path, ecg.ErrOutput, err)
	}
	if err := os.Rename(name, path); err != nil {
		os.Remove(name)
		return fmt.Errorf("%s: %w: %v", path, ecg.ErrOutput, err)
	}
	return nil
}
