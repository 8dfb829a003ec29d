// Package pipeline wires tracelift's stages into one call: a decoded page
// goes through the front end (imageproc.Prepare: background, ink/grid
// separation, orientation, deskew, rectification), calibration
// (grid.Detect: px/mm from the grid, gain from the calibration pulses,
// paper speed), trace extraction (trace.Extract: layout, lead names,
// Viterbi trace following, calibrated signals) and measurement
// (measure.Measure: beats, intervals, axes, amplitudes, flags).
//
// Between the stages Run applies two rules of its own: a calibration
// coarser than MinPxPerMM (2 px/mm; fax standard mode, the coarsest common
// source, has 3.85 lines/mm, ITU-T T.4) means no ECG was found, and a
// named standard layout given by the caller, defined at 25 mm/s, is fitted
// to the page's paper speed (250 mm hold 10 s at 25 mm/s, 5 s at 50 mm/s;
// common practice). A panic inside a stage is returned as an internal
// error of that page.
//
// Run keeps every intermediate in its Result — the prepared page, the grid
// result, the trace result, the measurement report and each stage's time —
// so that commands can write overlays and reviewers can see exactly what
// was read. The methods of each stage are cited in that stage's package
// documentation.
package pipeline
