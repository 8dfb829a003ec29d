// Package overlay draws digitised traces over the source image so a
// person can check at a glance that each digitised lead sits on the paper
// trace: a PNG (raster composite) and an SVG (the source image embedded as
// base64 PNG or JPEG, the traces as vector paths).
//
// Each lead segment is drawn as a thin saturated line (cyan by default;
// magenta for segments below the quality threshold) over a slightly wider
// dark outline, both semi-transparent so the paper trace stays visible
// underneath, and labelled with its lead name (and quality when known).
// Cyan and magenta were chosen because they stand apart from the usual
// red, pink, orange or green grid colours and from black or blue ink
// (common practice in image annotation: pick hues absent from the
// background). Strokes are rasterised with golang.org/x/image/vector
// (each line piece a quadrilateral plus a polygonal round join, all wound
// the same way so overlaps do not cancel); labels use the Go Bold font
// (golang.org/x/image/font/gofont).
package overlay
