// Package pipeline wires tracelift's stages into one call: a decoded page
// goes through the front end (imageproc.Prepare: background, ink/grid
// separation, orientation, deskew, rectification), calibration
// (grid.Detect: px/mm from the grid, gain from the calibration pulses,
// paper speed), trace extraction (trace.Extract: layout, lead names,
// Viterbi trace following, calibrated signals) and measurement
// (measure.Measure: beats, intervals, axes, amplitudes, flags).
//
// Run keeps every intermediate in its Result — the prepared page, the grid
// result, the trace result, the measurement report and each stage's time —
// so that commands can write overlays and reviewers can see exactly what
// was read. The methods of each stage are cited in that stage's package
// documentation.
package pipeline
