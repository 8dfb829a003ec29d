// Package scansim degrades a rendered ECG page the way scanners, fax
// machines and phone cameras do, and reports the global geometry it applied
// as a homography so tests can map printed positions to the degraded image.
//
// Stages, in order: pen strokes drawn on the page, paper tint, geometric
// warp (scale, rotation, perspective tilt, then an optional radial lens
// warp) with bilinear resampling, uneven illumination, Gaussian blur
// (separable, truncated at 3σ), sensor noise, JPEG round trip and
// binarisation; a grey result is converted to grey before the blur.
//
// Methods (common practice unless cited): inverse mapping through a 3×3
// homography, the projective model of a plane seen by a pinhole camera
// (Hartley and Zisserman, Multiple View Geometry, 2nd ed. 2004, ch. 2,
// from memory); the one-parameter radial distortion model
// r' = r(1 + k1·r²) (Brown, Photogramm. Eng. 32:444–462, 1966, from
// memory); Rec. 601 luma weights 0.299, 0.587, 0.114 for grey conversion
// (ITU-R BT.601); fax resolutions 204 × 98 and 204 × 196 dpi (ITU-T T.4,
// standards.md §6.1).
package scansim
