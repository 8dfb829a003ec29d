// Package imageproc turns a decoded ECG page into an upright, rectified
// page with the trace ink separated from the printed grid.
//
// Prepare runs, in order:
//
//   - background normalisation: each colour channel is divided by a smooth
//     upper envelope of the page (a high percentile per block on a
//     downscaled copy, bilinearly interpolated), which removes paper tint
//     and uneven lighting (common practice);
//   - photos: blocks whose paper level is far below the brightest blocks'
//     (the table around the sheet) are masked out;
//   - grid colour detection: a hue histogram of the chromatic pixels picks
//     the grid's colour family; each pixel's absorption (255 − channel) is
//     then split by least squares into a grid-colour component and a
//     neutral (dark ink) component. Grey and 1-bit pages are separated by
//     structure instead: grid lines are thin, long, axis-aligned runs found
//     from row and column darkness profiles per strip (common practice);
//   - orientation (quarter turns) from the ink of the deskewed page: empty
//     rows between rows of leads (traces run along x), and the upward skew
//     of the traces around their baselines (calibration pulses, most QRS
//     complexes, P and T waves point up; common practice);
//   - skew from the sharpness (sum of squares) of projection profiles over
//     candidate angles, coarse to fine on downscaled copies (Postl 1986,
//     ICPR; projection profiles after Radon 1917);
//   - phone-photo rectification: the two line families' local directions
//     in tiles give their vanishing points; the line at infinity they span
//     gives the projective part and an affine map aligns the families with
//     the axes (Hartley & Zisserman, Multiple View Geometry, 2nd ed. 2004,
//     §2.7, from memory). EstimateHomography provides the normalised direct
//     linear transform (Hartley, IEEE TPAMI 1997;19:580–93) for point
//     correspondences;
//   - phone photos, grid registration (rectify.go, photo.go, mesh.go):
//     the homography leaves the lens warp and paper curl, so the coarse
//     page is registered to the printed lattice. The major (5 mm) period
//     per axis comes from the summed power spectra of tile profiles, the
//     fundamental chosen by a harmonic sum (common practice in pitch
//     detection); in overlapping tiles the local phase of that period (one
//     Fourier coefficient of the Hann-windowed profile; common practice in
//     fringe and lattice analysis) places a major line near the tile
//     centre; line indices are unwrapped from the most reliable tile
//     outwards (quality-guided phase unwrapping: Ghiglia & Pritt,
//     Two-Dimensional Phase Unwrapping, Wiley 1998, ch. 4, from memory);
//     the tie points are fitted by a homography (normalised DLT) plus a
//     cubic polynomial residual field by least squares with iterated
//     rejection beyond 3.5 robust standard deviations (1.4826 × median
//     absolute residual; Rousseeuw & Leroy, Robust Regression and Outlier
//     Detection, Wiley 1987, from memory). The fit is then refined on
//     the 1 mm lines: at every major-line crossing the phase of the minor
//     period, measured in a window seen through the fit's local affine
//     map, gives the node's offset modulo 1 mm; the offsets are unwrapped
//     from node to node (the same quality-guided scheme; two-frequency
//     phase reading is common practice in fringe analysis), which mends
//     regions the first fit numbered a period off, and the map is
//     refitted to the nodes with a bicubic B-spline residual field (de
//     Boor, A Practical Guide to Splines, 1978, from memory; knots every
//     20 mm, second differences penalised). A fit whose rms exceeds a
//     twelfth of a period is refused and the coarse page kept. The page
//     is cropped to the grid seen, on the sheet (paper mask). The page
//     is resampled once through a Mesh (nodes every 16 px, bilinear
//     between them), kept in Page.Mesh; Page.SourcePoint maps upright px
//     to input px through it;
//   - one bilinear resampling of the full-resolution page through the
//     composed homography (upright px → input px), kept in Page.ToSource.
//     A deskewed colour page is separated first, row by row in the
//     input's frame, into the linear parts of its ink and grid maps
//     (JPEG rows straight from the Y′CbCr planes), which are resampled
//     in two one-dimensional passes (each input row along x onto the
//     upright columns, then each upright column between the two rows
//     around its point: the two-pass separable warp of E. Catmull and A. R.
//     Smith, "3-D transformations of images in scanline order",
//     SIGGRAPH 1980, from memory; linear interpolation in each pass,
//     eight pixels at a time in SSE2 on amd64) and clipped in the upright
//     frame;
//     grey pages and photos are
//     resampled first and separated in the same loop, keeping the
//     luminance their structural split and lattice read. The upright
//     colour page itself is not kept (only pictures for people read it):
//     Page.Upright resamples it on demand, with the same bytes.
//
// Estimation runs on downscaled copies (at most about 1024 px on the long
// side); only the work copy's block means and the final resampling and
// separation touch every pixel.
package imageproc
