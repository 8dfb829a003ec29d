// Package atomicfile writes output files so that a reader never sees a
// half-written file: each file is written to a temporary name in the same
// folder and renamed into place only when every part succeeded (POSIX
// rename within one folder is atomic; common practice).
package atomicfile

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"tracelift/ecg"
)

// Part is one file of a multi-file output.
type Part struct {
	Path  string
	Write func(w io.Writer) error
}

// WriteFile writes one file atomically.
func WriteFile(path string, write func(w io.Writer) error) error {
	return WriteAll(Part{Path: path, Write: write})
}

// WriteAll writes every part to a temporary file beside its final path,
// then renames them in order. If any write fails, no temporary file is
// left and no final file is touched. Errors wrap ecg.ErrOutput unless the
// writer's error already carries an ecg error class.
func WriteAll(parts ...Part) error {
	tmps := make([]string, 0, len(parts))
	cleanup := func() {
		for _, t := range tmps {
			os.Remove(t)
		}
	}
	for _, p := range parts {
		dir, base := filepath.Split(p.Path)
		if dir == "" {
			dir = "."
		}
		f, err := os.CreateTemp(dir, "."+base+".tmp*")
		if err != nil {
			cleanup()
			return fmt.Errorf("%s: %w: %w", p.Path, ecg.ErrOutput, err)
		}
		tmps = append(tmps, f.Name())
		bw := bufio.NewWriterSize(f, 1<<16)
		err = p.Write(bw)
		if err == nil {
			err = bw.Flush()
		}
		if err == nil {
			// On disk before the rename, so that a crash right after
			// it cannot leave an empty or partial file under the
			// final name (batch runs rely on this).
			err = f.Sync()
		}
		if cerr := f.Close(); err == nil {
			err = cerr
		}
		if err != nil {
			cleanup()
			if isClassified(err) {
				return fmt.Errorf("%s: %w", p.Path, err)
			}
			return fmt.Errorf("%s: %w: %w", p.Path, ecg.ErrOutput, err)
		}
		if err := os.Chmod(f.Name(), 0o644); err != nil {
			cleanup()
			return fmt.Errorf("%s: %w: %w", p.Path, ecg.ErrOutput, err)
		}
	}
	for i, p := range parts {
		if err := os.Rename(tmps[i], p.Path); err != nil {
			cleanup()
			return fmt.Errorf("%s: %w: %w", p.Path, ecg.ErrOutput, err)
		}
	}
	return nil
}

func isClassified(err error) bool {
	for _, c := range []error{ecg.ErrOutput, ecg.ErrUnreadable, ecg.ErrNoECG, ecg.ErrPartial} {
		if errors.Is(err, c) {
			return true
		}
	}
	return false
}
