// Package testpage holds the rendered pages that the front end's, the
// grid stage's and the pipeline's benchmarks share, made once per test
// binary: corpus page 0 of seed 7 under the "scan" condition, a skewed
// 300-dpi A4 colour scan of an invented record (render.CorpusPage), as
// the renderer returns it and stored as a quality-90 JPEG and decoded.
// Only tests import this package.
package testpage

import (
	"bytes"
	"fmt"
	"image"
	"image/jpeg"
	"sync"

	"tracelift/render"
)

// A4Scan returns the page as the renderer returns it (NRGBA, as a PNG
// decodes).
var A4Scan = sync.OnceValues(func() (image.Image, error) {
	pg, err := render.CorpusPage(7, "scan", 0)
	if err != nil {
		return nil, err
	}
	return pg.Image, nil
})

// A4ScanJPEG returns the page stored as a quality-90 JPEG and decoded
// (4:2:0 Y′CbCr, as image/jpeg writes colour).
var A4ScanJPEG = sync.OnceValues(func() (*image.YCbCr, error) {
	img, err := A4Scan()
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if err := jpeg.Encode(&buf, img, &jpeg.Options{Quality: 90}); err != nil {
		return nil, err
	}
	d, err := jpeg.Decode(&buf)
	if err != nil {
		return nil, err
	}
	ycc, ok := d.(*image.YCbCr)
	if !ok {
		return nil, fmt.Errorf("testpage: JPEG decoded to %T", d)
	}
	return ycc, nil
})
