// Package grid finds the millimetre grid of an upright ECG page
// (imageproc.Prepare's output) and calibrates time and voltage from it:
// pixels per millimetre along x and y from the grid's periodicity, gain
// from the 1 mV calibration pulses, paper speed from options or the
// standard 25 mm/s. Every value records its origin (grid, pulse, option,
// metadata, default).
//
// Methods:
//
//   - pitch: the autocorrelation of the detrended column (or row) profile
//     of the grid map gives the line period (standards.md §6.3, Cooley &
//     Tukey 1965 for the FFT alternative); the 5 mm lines make every fifth
//     lag stronger, which tells the 1 mm period from the 5 mm one (5:1
//     ratio, common practice); a resolution prior or the page size
//     settles the remaining ambiguity. Every line's sub-pixel centroid is
//     then fitted against its index by least squares over the whole page
//     (the window grows from the strongest line so indices cannot slip);
//     the slope is the pitch. Grey and 1-bit pages are measured on their
//     darkness with the trace ink masked out, because QRS complexes line
//     up across rows at the heart rate and would mimic a grid.
//   - pulses: pairs of vertical ink strokes of equal extent, 1.5–16 mm
//     apart, joined by a flat top and leaving a baseline; the height in mm
//     is the gain for 1 mV, snapped to 5, 10 or 20 mm/mV within 4 %
//     (standards.md §1.1: 10 mm/mV standard, 5 and 20 alternatives;
//     pulse 1.0 mV ± 5 % per ANSI/AAMI EC11). On a page with a grey or
//     no grid where the ink alone shows no pulse, an edge partly removed
//     with a grid line is completed from the luminance; not on a page of
//     black and white only (imageproc.Page.Bilevel: a fax), whose
//     luminance is as black on a grid line as on a stroke.
//   - fallbacks: without a grid, the user's resolution (--dpi), else the
//     image metadata, else the pulse height assuming 10 mm/mV and square
//     pixels, each with a warning; with none of these Detect returns
//     ErrNoGrid (an ecg.ErrNoECG).
//   - speed: the full-page passes (profiles, the pulse search's vertical
//     runs, the row-end ink counts) read eight pixels as one 64-bit word
//     and add them in 8- or 16-bit lanes, emptied before they overflow;
//     a word with no byte at or above a threshold (≤ 128) is recognised
//     by adding 128 − threshold to its low seven bits (SIMD within a
//     register, common practice). The sums are the exact integers of the
//     pixel-by-pixel loops (colsum_test.go).
//
// Evaluate scores a page against the truth geometry of a rendered page
// (render.Truth's paper-to-image homography): skew left, px/mm error,
// gain, orientation and the distortion left after rectification.
package grid
