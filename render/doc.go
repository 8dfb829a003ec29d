// Package render prints an ecg.Record onto a picture of ECG paper and
// writes a truth sidecar that says exactly where everything was printed.
//
// It serves two purposes: it is the ground truth for every test of the
// image pipeline (render a known record, digitise the picture, compare),
// and it is a user feature (re-plot a digital record as a paper-style page,
// as a PNG raster or a PDF with vector traces).
//
// # Paper, grid and layouts
//
// Pages are A4 (297 × 210 mm) or Letter (279.4 × 215.9 mm) landscape, or a
// long single-lead strip whose width follows the record's duration. The
// grid has 1 mm minor and 5 mm major divisions (common practice; see
// standards.md §1.1); at the standard 25 mm/s and 10 mm/mV one minor square
// is 40 ms × 0.1 mV. The printable trace width is 250 mm on A4 and Letter:
// 10 s at 25 mm/s, 5 s at 50 mm/s. Layouts (common practice, standards.md
// §1.2):
//
//	"3x4"          rows I/aVR/V1/V4, II/aVL/V2/V5, III/aVF/V3/V6; column c
//	               shows the c-th consecutive quarter of the page time
//	               (0–2.5, 2.5–5, 5–7.5, 7.5–10 s at 25 mm/s)
//	"3x4+1"        3x4 plus a full-width lead II rhythm strip
//	"3x4+3"        3x4 plus full-width II, V1 and V5 rhythm strips
//	"6x2"          limb leads in the left column, V1–V6 in the right; the
//	               left column shows the first half of the page time
//	               (0–5 s) and the right column the second half (5–10 s),
//	               consecutive like the 3x4 columns
//	"12x1"         every lead over the whole page time
//	"cabrera-3x4"  3x4 with the limb leads in Cabrera order aVL, I, −aVR
//	               (column 1) and II, aVF, III (column 2); −aVR is printed
//	               inverted and labelled "-aVR"
//	"rhythm"       one lead (Options.RhythmLead, default II) printed as
//	               consecutive rows of continuous rhythm, as many rows as
//	               the page holds
//
// Each row starts with a rectangular 1 mV calibration pulse (gain × 1 mV
// tall, 0.2 s wide; standards.md §1.1, common practice). Column boundaries
// carry a short vertical tick on the baseline. Traces are clipped at the
// page edge only, never at row boundaries, so tall complexes overlap the
// neighbouring rows as they do on real printouts.
//
// # Coordinates
//
// Paper coordinates are millimetres, x to the right, y downwards, origin
// at the top-left corner of the paper. Image coordinates are pixels with
// pixel (i, j) centred on (i, j) — so the paper's top-left corner is at
// (−0.5, −0.5) px — and Truth.PaperToImage maps the first to the second.
// A point at time t of a panel with window [T0, T1] printed from X0MM is at
// x = X0MM + (t − T0)·speed, y = BaselineYMM − v·gain for v millivolts
// (−v for the inverted "-aVR" panel).
//
// # Truth sidecar
//
// Truth (JSON) records the page geometry (size, dpi, px per mm, the
// paper-to-image homography including any scan simulation, and a photo's
// lens warp), speed and
// gain, the grid (kind, colour, origin), every printed panel (lead, row,
// column, time window, x extent, baseline), every calibration pulse, the
// printed signals themselves (NaN written as null) and the record's beat
// fiducials. See the Truth type for the field list.
//
// # Drawing
//
// Traces are stroked polylines with round caps and joins: the set of
// points within half the trace width of the polyline. Each pixel's ink
// coverage is estimated from the distance d of its centre to the nearest
// segment as clamp(w/2 + 0.5 − d, 0, 1) — exact box-filter coverage for an
// axis-aligned edge and close to it for others; the usual distance-based
// anti-aliasing (common practice in font and vector rendering) — and is a
// true union over segments, so
// dense samples on steep QRS slopes do not print bolder than the stroke
// (summing per-segment polygon coverage, as a scan-line rasteriser does
// with overlapping sub-paths, would).
//
// Grid lines are axis-aligned and drawn with analytic box-filter coverage.
// Text uses the Go fonts (golang.org/x/image/font/gofont) through
// opentype and font.Drawer. PDF output (WritePDF) draws the same plan
// with vector paths using github.com/go-pdf/fpdf.
package render
