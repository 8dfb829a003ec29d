package ecg

import "errors"

// Error classes shared by every stage. Library packages wrap these (with
// fmt.Errorf("…: %w", ErrX) or errors.Join) so that the command line can map
// any failure to its documented exit code with errors.Is, without knowing
// which stage failed.
var (
	// ErrUnreadable: the input could not be opened or decoded (missing,
	// empty, truncated, corrupt, unsupported or over-budget file).
	ErrUnreadable = errors.New("unreadable input")
	// ErrNoECG: the input was read but holds no ECG that could be found
	// (blank page, no grid and no calibration pulse, a photo of something
	// else, no traces).
	ErrNoECG = errors.New("no ECG found")
	// ErrPartial: a result was produced but some of it is missing (some
	// leads unreadable). Returned alongside the partial result.
	ErrPartial = errors.New("partial result")
	// ErrOutput: an output file or folder could not be written.
	ErrOutput = errors.New("cannot write output")
)
