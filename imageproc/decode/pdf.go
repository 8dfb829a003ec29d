package decode

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/jpeg"
	"io"
	"math"
	"sort"

	"github.com/pdfcpu/pdfcpu/pkg/api"
	"github.com/pdfcpu/pdfcpu/pkg/filter"
	"github.com/pdfcpu/pdfcpu/pkg/pdfcpu"
	"github.com/pdfcpu/pdfcpu/pkg/pdfcpu/model"
	"github.com/pdfcpu/pdfcpu/pkg/pdfcpu/types"
	"golang.org/x/image/ccitt"
)

// pdfFile is an opened PDF. Pages are scanned for raster image XObjects
// (ISO 32000-1:2008, 8.9.5 image dictionaries; 8.10 form XObjects).
type pdfFile struct {
	src source
	ctx *model.Context
	n   int
}

// pdfConfig is pdfcpu's relaxed reading configuration built here, so that
// pdfcpu does not look for or create a configuration directory.
func pdfConfig() *model.Configuration {
	return &model.Configuration{
		Version:                   model.VersionStr,
		Reader15:                  true,
		ValidationMode:            model.ValidationRelaxed,
		UnsupportedResourcePolicy: model.UnsupportedResourceSkip,
		Eol:                       types.EolLF,
		Offline:                   true,
		Limits:                    model.DefaultResourceLimits(),
	}
}

func openPDF(src source) (container, error) {
	ctx, err := api.ReadContext(io.NewSectionReader(src.r, 0, src.size), pdfConfig())
	if err != nil {
		if errors.Is(err, pdfcpu.ErrWrongPassword) {
			return nil, &Error{Name: src.name, Kind: ErrUnsupported, Reason: "encrypted PDF (a password is needed; password-protected files are not supported)"}
		}
		return nil, src.decodeErr(0, "pdf", err)
	}
	if err := ctx.EnsurePageCount(); err != nil {
		return nil, src.fail(0, "corrupt pdf: no page tree", err)
	}
	if ctx.PageCount < 1 {
		return nil, src.fail(0, "pdf has no pages", nil)
	}
	return &pdfFile{src: src, ctx: ctx, n: ctx.PageCount}, nil
}

func (f *pdfFile) format() string { return "pdf" }
func (f *pdfFile) numPages() int  { return f.n }

// pdfImage is a raster image XObject found on a page.
type pdfImage struct {
	name string // resource name, as used by the Do operator
	sd   *types.StreamDict
	w, h int
	// forms lists the form XObjects (outermost first) through which the
	// image is painted; empty when it is in the page's own resources.
	forms []pdfForm
}

// pdfForm is one form XObject on the way to an image.
type pdfForm struct {
	name string
	sd   *types.StreamDict
}

// pdfPlacement is where the chosen image lies on the page.
type pdfPlacement struct {
	orientation int     // Exif-style orientation to view the page upright
	dpiX, dpiY  float64 // along the stored image's columns and rows
}

func (f *pdfFile) pageSize(i int) (int, int, error) {
	im, pl, err := f.find(i)
	if err != nil {
		return 0, 0, err
	}
	w, h := orientedSize(im.w, im.h, pl.orientation)
	return w, h, nil
}

func (f *pdfFile) decode(i int, check func(w, h int) error) (Page, error) {
	im, pl, err := f.find(i)
	if err != nil {
		return Page{}, err
	}
	if err := check(im.w, im.h); err != nil {
		return Page{}, err
	}
	img, err := f.decodeImage(i, im, check)
	if err != nil {
		return Page{}, err
	}
	if b := img.Bounds(); b.Dx() != im.w || b.Dy() != im.h {
		// A DCT stream may differ from its dictionary; the stream wins and
		// the resolution is rescaled accordingly.
		pl.dpiX *= float64(b.Dx()) / float64(im.w)
		pl.dpiY *= float64(b.Dy()) / float64(im.h)
	}
	return Page{Image: img, DPIX: sane(pl.dpiX), DPIY: sane(pl.dpiY), Orientation: pl.orientation}, nil
}

// find picks page i's largest raster image and works out its placement.
func (f *pdfFile) find(i int) (pdfImage, pdfPlacement, error) {
	xr := f.ctx.XRefTable
	d, _, inh, err := xr.PageDict(i, false)
	if err != nil || d == nil || inh == nil {
		return pdfImage{}, pdfPlacement{}, f.src.fail(i, "corrupt pdf: cannot read the page", err)
	}
	// Images painted by the page's content stream; some writers share one
	// resource dictionary among all pages, so listing it is not enough.
	var drawn map[string][6]float64
	if content, err := xr.PageContent(d, i); err == nil {
		drawn = drawnXObjects(content)
	}
	if len(drawn) == 0 {
		drawn = nil // unknown: consider every image in the resources
	}
	var ims []pdfImage
	f.collect(inh.Resources, nil, drawn, &ims)
	if len(ims) == 0 {
		// Page left 0: the reason names the page already.
		return pdfImage{}, pdfPlacement{}, &Error{Name: f.src.name, Kind: ErrNoRaster,
			Reason: fmt.Sprintf("PDF page %d has no raster image (vector PDFs are not supported yet)", i)}
	}
	best := ims[0]
	for _, im := range ims[1:] {
		if int64(im.w)*int64(im.h) > int64(best.w)*int64(best.h) {
			best = im
		}
	}

	// Default placement: the image fills the MediaBox upright (how
	// scanners write pages), turned by the page's /Rotate.
	var pageW, pageH float64 = 612, 792 // US Letter in points when MediaBox is missing (ISO 32000-1 has no default; common practice)
	if mb := inh.MediaBox; mb != nil && mb.Width() > 0 && mb.Height() > 0 {
		pageW, pageH = mb.Width(), mb.Height()
	}
	ctm := [6]float64{pageW, 0, 0, pageH, 0, 0}
	if m, ok := f.imageCTM(best, drawn); ok {
		ctm = m
	}
	pl := placement(ctm, inh.Rotate, best.w, best.h)
	return best, pl, nil
}

// maxFormDepth bounds the nesting of form XObjects searched for images.
const maxFormDepth = 4

// collect appends the image XObjects of a resource dictionary, searching
// form XObjects too. At the top level (depth 0) only the names in drawn
// are taken, unless drawn is nil.
func (f *pdfFile) collect(res types.Dict, forms []pdfForm, drawn map[string][6]float64, out *[]pdfImage) {
	depth := len(forms)
	if res == nil || depth > maxFormDepth {
		return
	}
	xr := f.ctx.XRefTable
	o, ok := res.Find("XObject")
	if !ok {
		return
	}
	xd, err := xr.DereferenceDict(o)
	if err != nil || xd == nil {
		return
	}
	names := make([]string, 0, len(xd))
	for k := range xd {
		names = append(names, k)
	}
	sort.Strings(names)
	for _, name := range names {
		if depth == 0 && drawn != nil {
			if _, ok := drawn[name]; !ok {
				continue
			}
		}
		sd, _, err := xr.DereferenceStreamDict(xd[name])
		if err != nil || sd == nil {
			continue
		}
		switch st := sd.Subtype(); {
		case st != nil && *st == "Image":
			w, h := intEntry(xr, sd.Dict, "Width", "W"), intEntry(xr, sd.Dict, "Height", "H")
			if sd.HasSoleFilterNamed(filter.DCT) {
				// The JPEG stream's own header is what will be decoded.
				if c, err := jpeg.DecodeConfig(bytes.NewReader(sd.Raw)); err == nil {
					w, h = c.Width, c.Height
				}
			}
			if w > 0 && h > 0 {
				*out = append(*out, pdfImage{name: name, sd: sd, w: w, h: h, forms: forms})
			}
		case st != nil && *st == "Form":
			if o, ok := sd.Find("Resources"); ok {
				if rd, err := xr.DereferenceDict(o); err == nil {
					f.collect(rd, append(forms[:depth:depth], pdfForm{name: name, sd: sd}), nil, out)
				}
			}
		}
	}
}

// imageCTM composes the transformation matrix in force where im is
// painted: the page content's matrix at the outermost Do, then for each
// form its /Matrix and the matrix at the next Do inside its own content
// (ISO 32000-1 8.10.1: a form is painted with Matrix × CTM). It reports
// false when any step is unknown.
func (f *pdfFile) imageCTM(im pdfImage, drawn map[string][6]float64) ([6]float64, bool) {
	first := im.name
	if len(im.forms) > 0 {
		first = im.forms[0].name
	}
	ctm, ok := drawn[first]
	if !ok {
		return ctm, false
	}
	xr := f.ctx.XRefTable
	for k, fm := range im.forms {
		matrix := [6]float64{1, 0, 0, 1, 0, 0}
		if o, ok := fm.sd.Find("Matrix"); ok {
			if a, err := xr.DereferenceArray(o); err == nil && len(a) == 6 {
				for j := range matrix {
					if v, err := xr.DereferenceNumber(a[j]); err == nil {
						matrix[j] = v
					}
				}
			}
		}
		ctm = concat(matrix, ctm)
		sd := *fm.sd // decode a copy; the shared object keeps its raw bytes only
		if err := sd.Decode(); err != nil {
			return ctm, false
		}
		next := im.name
		if k+1 < len(im.forms) {
			next = im.forms[k+1].name
		}
		local, ok := drawnXObjects(sd.Content)[next]
		if !ok {
			return ctm, false
		}
		ctm = concat(local, ctm)
	}
	return ctm, true
}

// concat returns m × c for PDF matrices [a b c d e f] (row-vector
// convention, ISO 32000-1 8.3.4).
func concat(m, c [6]float64) [6]float64 {
	return [6]float64{
		m[0]*c[0] + m[1]*c[2],
		m[0]*c[1] + m[1]*c[3],
		m[2]*c[0] + m[3]*c[2],
		m[2]*c[1] + m[3]*c[3],
		m[4]*c[0] + m[5]*c[2] + c[4],
		m[4]*c[1] + m[5]*c[3] + c[5],
	}
}

// intEntry reads an integer entry under its full or abbreviated key.
func intEntry(xr *model.XRefTable, d types.Dict, keys ...string) int {
	for _, k := range keys {
		if o, ok := d.Find(k); ok {
			if v, err := xr.DereferenceNumber(o); err == nil && v > 0 && v < 1<<30 {
				return int(v)
			}
		}
	}
	return 0
}

// placement converts the image's current transformation matrix [a b c d e f]
// (which maps the unit square to the page; image row 0 at the top of the
// square, ISO 32000-1 8.9.4) and the page's /Rotate (degrees clockwise,
// 7.7.3.3) into an orientation and a resolution per stored axis.
func placement(m [6]float64, rotate, w, h int) pdfPlacement {
	a, b, c, d := m[0], m[1], m[2], m[3]
	// Screen directions (y down) of increasing column and row index.
	cx, cy := a, -b
	rx, ry := -c, d
	// Snap to the nearest axes.
	col := snap(cx, cy)
	row := snap(rx, ry)
	if col == row || col == [2]int{-row[0], -row[1]} {
		// Degenerate or sheared placement: assume upright.
		col, row = [2]int{1, 0}, [2]int{0, 1}
	}
	for k := ((rotate%360 + 360) % 360) / 90; k > 0; k-- {
		// One quarter turn clockwise on screen: (x, y) → (−y, x).
		col = [2]int{-col[1], col[0]}
		row = [2]int{-row[1], row[0]}
	}
	pl := pdfPlacement{orientation: 1}
	for o := 1; o <= 8; o++ {
		if oc, or := orientDirs(o); oc == col && or == row {
			pl.orientation = o
		}
	}
	if lw := math.Hypot(a, b); lw > 0 {
		pl.dpiX = float64(w) / (lw / 72)
	}
	if lh := math.Hypot(c, d); lh > 0 {
		pl.dpiY = float64(h) / (lh / 72)
	}
	return pl
}

// snap returns the axis unit vector nearest to (x, y).
func snap(x, y float64) [2]int {
	if math.Abs(x) >= math.Abs(y) {
		if x >= 0 {
			return [2]int{1, 0}
		}
		return [2]int{-1, 0}
	}
	if y >= 0 {
		return [2]int{0, 1}
	}
	return [2]int{0, -1}
}

// orientDirs returns, for orientation o, the screen directions in which
// the stored column index and row index increase when viewed upright.
// Orient's destination→source map has a signed permutation as its linear
// part, so its inverse (source step → screen step) is its transpose: the
// columns (ax, bx) and (ay, by).
func orientDirs(o int) (col, row [2]int) {
	m := orientMap(o, 1, 1) // the linear part does not depend on the size
	return [2]int{m.ax, m.bx}, [2]int{m.ay, m.by}
}

// decodeImage decodes an image XObject stream into a Go image.
func (f *pdfFile) decodeImage(page int, im pdfImage, check func(w, h int) error) (image.Image, error) {
	xr := f.ctx.XRefTable
	sd := im.sd
	fail := func(reason string, err error) error { return f.src.fail(page, reason, err) }
	unsupported := func(what string) error {
		return &Error{Name: f.src.name, Page: page, Kind: ErrUnsupported,
			Reason: fmt.Sprintf("image uses %s, which is not supported", what)}
	}

	pipe := sd.FilterPipeline
	last := ""
	if n := len(pipe); n > 0 {
		switch pipe[n-1].Name {
		case filter.DCT, filter.CCITTFax, filter.JBIG2, filter.JPX:
			last = pipe[n-1].Name
		}
	}
	pre := pipe
	if last != "" {
		pre = pipe[:len(pipe)-1]
	}
	switch last {
	case filter.JBIG2:
		return nil, unsupported("JBIG2 compression (JBIG2Decode)")
	case filter.JPX:
		return nil, unsupported("JPEG 2000 compression (JPXDecode)")
	}

	imageMask := false
	if b := sd.BooleanEntry("ImageMask"); b != nil && *b {
		imageMask = true
	}
	bpc := intEntry(xr, sd.Dict, "BitsPerComponent", "BPC")
	if imageMask || last == filter.CCITTFax {
		bpc = 1
	}
	cs := colorSpace{n: 1}
	if !imageMask && last != filter.DCT && last != filter.CCITTFax {
		var err error
		if cs, err = f.colorSpace(sd.Dict); err != nil {
			return nil, unsupported(err.Error())
		}
	}
	rowBytes := (int64(im.w)*int64(cs.n)*int64(bpc) + 7) / 8
	limit := filter.DefaultMaxDecodeBytes
	if last == "" {
		limit = rowBytes*int64(im.h) + int64(im.h) + 1<<16 // predictor tag bytes and slack
	}

	data := sd.Raw
	for _, p := range pre {
		fl, err := filter.NewFilter(p.Name, filterParms(p.DecodeParms), limit)
		if err != nil {
			if errors.Is(err, filter.ErrUnsupportedFilter) {
				return nil, unsupported(p.Name)
			}
			return nil, fail("corrupt pdf: unknown filter "+p.Name, err)
		}
		r, err := fl.Decode(bytes.NewReader(data))
		if err != nil {
			return nil, fail("corrupt pdf image data ("+p.Name+")", err)
		}
		if data, err = io.ReadAll(r); err != nil {
			return nil, fail("corrupt pdf image data ("+p.Name+")", err)
		}
	}

	invert := decodeInverted(xr, sd.Dict)
	switch last {
	case filter.DCT:
		c, err := jpeg.DecodeConfig(bytes.NewReader(data))
		if err != nil {
			return nil, f.src.decodeErr(page, "JPEG image in pdf", err)
		}
		if err := check(c.Width, c.Height); err != nil {
			return nil, err
		}
		img, err := jpeg.Decode(bytes.NewReader(data))
		if err != nil {
			return nil, f.src.decodeErr(page, "JPEG image in pdf", err)
		}
		return img, nil
	case filter.CCITTFax:
		return f.decodeCCITT(page, im, pipe[len(pipe)-1].DecodeParms, data, invert)
	}

	if bpc != 1 && bpc != 2 && bpc != 4 && bpc != 8 && bpc != 16 {
		return nil, fail(fmt.Sprintf("corrupt pdf: %d bits per component", bpc), nil)
	}
	if int64(len(data)) < rowBytes*int64(im.h) {
		return nil, fail(fmt.Sprintf("truncated pdf image: %d bytes of %d", len(data), rowBytes*int64(im.h)), nil)
	}
	img, err := rawImage(data, im.w, im.h, bpc, cs, invert, int(rowBytes))
	if err != nil {
		return nil, unsupported(err.Error())
	}
	return img, nil
}

// decodeCCITT decodes a CCITTFaxDecode stream with golang.org/x/image/ccitt
// (ISO 32000-1 7.4.6, table 11: K < 0 Group 4, K = 0 Group 3
// one-dimensional, K > 0 Group 3 two-dimensional; Columns default 1728;
// Rows 0 = unknown; BlackIs1; EncodedByteAlign).
func (f *pdfFile) decodeCCITT(page int, im pdfImage, parms types.Dict, data []byte, invert bool) (image.Image, error) {
	p := filterParms(parms)
	k := p["K"]
	cols := 1728
	if v, ok := p["Columns"]; ok && v > 0 {
		cols = v
	}
	rows := im.h
	if v, ok := p["Rows"]; ok && v > 0 {
		rows = v
	}
	sf := ccitt.Group4
	switch {
	case k > 0:
		return nil, &Error{Name: f.src.name, Page: page, Kind: ErrUnsupported,
			Reason: "image uses two-dimensional Group 3 fax coding (K > 0), which is not supported"}
	case k == 0:
		sf = ccitt.Group3
	}
	if cols != im.w || rows != im.h {
		return nil, f.src.fail(page, fmt.Sprintf("corrupt pdf: fax image %d × %d does not match Width/Height %d × %d", cols, rows, im.w, im.h), nil)
	}
	dst := image.NewGray(image.Rect(0, 0, cols, rows))
	// BlackIs1 true means decoded 1 bits are black: those pixels then read
	// as 1 = white through DeviceGray, i.e. the picture is inverted.
	opts := &ccitt.Options{Align: p["EncodedByteAlign"] != 0, Invert: p["BlackIs1"] != 0}
	if err := ccitt.DecodeIntoGray(dst, bytes.NewReader(data), ccitt.MSB, sf, opts); err != nil {
		return nil, f.src.decodeErr(page, "fax image in pdf", err)
	}
	if invert {
		for i, v := range dst.Pix {
			dst.Pix[i] = 0xFF - v
		}
	}
	return dst, nil
}

// filterParms flattens a DecodeParms dictionary to integers (booleans as
// 0/1), the form pdfcpu's filters take.
func filterParms(d types.Dict) map[string]int {
	m := map[string]int{}
	for k, v := range d {
		switch v := v.(type) {
		case types.Integer:
			m[k] = v.Value()
		case types.Boolean:
			if v.Value() {
				m[k] = 1
			} else {
				m[k] = 0
			}
		}
	}
	return m
}

// decodeInverted reports a /Decode [1 0] array on a one-component image
// (ISO 32000-1 8.9.5.2), which inverts the samples.
func decodeInverted(xr *model.XRefTable, d types.Dict) bool {
	o, ok := d.Find("Decode")
	if !ok {
		return false
	}
	a, err := xr.DereferenceArray(o)
	if err != nil || len(a) != 2 {
		return false
	}
	lo, err1 := xr.DereferenceNumber(a[0])
	hi, err2 := xr.DereferenceNumber(a[1])
	return err1 == nil && err2 == nil && lo == 1 && hi == 0
}

// colorSpace is the part of a PDF colour space needed to build an image.
type colorSpace struct {
	n       int           // components per sample in the stream
	cmyk    bool          // DeviceCMYK (n = 4)
	palette color.Palette // Indexed
}

// colorSpace resolves the image's /ColorSpace (ISO 32000-1 8.6).
func (f *pdfFile) colorSpace(d types.Dict) (colorSpace, error) {
	xr := f.ctx.XRefTable
	o, ok := d.Find("ColorSpace")
	if !ok {
		o, ok = d.Find("CS")
	}
	if !ok {
		return colorSpace{}, errors.New("an image without a colour space")
	}
	return f.resolveCS(xr, o, 0)
}

func (f *pdfFile) resolveCS(xr *model.XRefTable, o types.Object, depth int) (colorSpace, error) {
	if depth > 3 {
		return colorSpace{}, errors.New("a nested colour space")
	}
	o, err := xr.Dereference(o)
	if err != nil {
		return colorSpace{}, errors.New("a broken colour space")
	}
	switch v := o.(type) {
	case types.Name:
		switch v.Value() {
		case "DeviceGray", "CalGray", "G":
			return colorSpace{n: 1}, nil
		case "DeviceRGB", "CalRGB", "RGB":
			return colorSpace{n: 3}, nil
		case "DeviceCMYK", "CMYK":
			return colorSpace{n: 4, cmyk: true}, nil
		}
		return colorSpace{}, fmt.Errorf("the colour space %s", v.Value())
	case types.Array:
		if len(v) == 0 {
			return colorSpace{}, errors.New("an empty colour space")
		}
		name, _ := v[0].(types.Name)
		switch name.Value() {
		case "CalGray", "CalRGB", "Lab":
			if name.Value() == "Lab" {
				return colorSpace{}, errors.New("the Lab colour space")
			}
			return f.resolveCS(xr, name, depth+1)
		case "ICCBased":
			if len(v) < 2 {
				break
			}
			sd, _, err := xr.DereferenceStreamDict(v[1])
			if err != nil || sd == nil {
				break
			}
			switch n := intEntry(xr, sd.Dict, "N"); n {
			case 1, 3:
				return colorSpace{n: n}, nil
			case 4:
				return colorSpace{n: 4, cmyk: true}, nil
			}
		case "Indexed", "I":
			if len(v) < 4 {
				break
			}
			base, err := f.resolveCS(xr, v[1], depth+1)
			if err != nil || base.palette != nil {
				break
			}
			hival := intEntry(xr, types.Dict{"h": v[2]}, "h")
			if hival < 0 || hival > 255 {
				break
			}
			lookup, err := f.lookupBytes(v[3])
			if err != nil || len(lookup) < (hival+1)*base.n {
				break
			}
			pal := make(color.Palette, hival+1)
			for i := range pal {
				e := lookup[i*base.n : (i+1)*base.n]
				switch {
				case base.n == 1:
					pal[i] = color.Gray{Y: e[0]}
				case base.cmyk:
					pal[i] = color.CMYK{C: e[0], M: e[1], Y: e[2], K: e[3]}
				default:
					pal[i] = color.RGBA{R: e[0], G: e[1], B: e[2], A: 0xFF}
				}
			}
			return colorSpace{n: 1, palette: pal}, nil
		}
		return colorSpace{}, fmt.Errorf("the colour space %s", name.Value())
	}
	return colorSpace{}, errors.New("a malformed colour space")
}

// lookupBytes reads an Indexed colour table given as a string, a hex
// string or a stream.
func (f *pdfFile) lookupBytes(o types.Object) ([]byte, error) {
	xr := f.ctx.XRefTable
	o, err := xr.Dereference(o)
	if err != nil {
		return nil, err
	}
	switch v := o.(type) {
	case types.StringLiteral:
		return types.Unescape(v.Value())
	case types.HexLiteral:
		return v.Bytes()
	case types.StreamDict:
		if err := v.Decode(); err != nil {
			return nil, err
		}
		return v.Content, nil
	}
	return nil, errors.New("bad lookup table")
}

// rawImage builds an image from uncompressed PDF samples (rows padded to a
// byte, components interleaved, most significant bits first; ISO 32000-1
// 8.9.3).
func rawImage(data []byte, w, h, bpc int, cs colorSpace, invert bool, rowBytes int) (image.Image, error) {
	r := image.Rect(0, 0, w, h)
	switch {
	case cs.palette != nil && bpc <= 8:
		m := image.NewPaletted(r, cs.palette)
		maxIdx := uint8(len(cs.palette) - 1)
		for y := 0; y < h; y++ {
			src := data[y*rowBytes : (y+1)*rowBytes]
			dst := m.Pix[y*m.Stride : y*m.Stride+w]
			unpack(dst, src, bpc, false)
			for x, v := range dst {
				if v > maxIdx {
					dst[x] = maxIdx
				}
			}
		}
		return m, nil
	case cs.n == 1 && bpc == 16:
		m := image.NewGray16(r)
		for y := 0; y < h; y++ {
			copy(m.Pix[y*m.Stride:y*m.Stride+2*w], data[y*rowBytes:])
		}
		if invert {
			for i, v := range m.Pix {
				m.Pix[i] = 0xFF - v
			}
		}
		return m, nil
	case cs.n == 1:
		m := image.NewGray(r)
		for y := 0; y < h; y++ {
			unpack(m.Pix[y*m.Stride:y*m.Stride+w], data[y*rowBytes:(y+1)*rowBytes], bpc, true)
		}
		if invert {
			for i, v := range m.Pix {
				m.Pix[i] = 0xFF - v
			}
		}
		return m, nil
	case cs.cmyk && bpc == 8:
		m := image.NewCMYK(r)
		for y := 0; y < h; y++ {
			copy(m.Pix[y*m.Stride:y*m.Stride+4*w], data[y*rowBytes:])
		}
		return m, nil
	case cs.n == 3 && bpc == 8:
		m := image.NewNRGBA(r)
		for y := 0; y < h; y++ {
			src := data[y*rowBytes : y*rowBytes+3*w]
			dst := m.Pix[y*m.Stride : y*m.Stride+4*w]
			for x, s := 0, 0; x < len(dst); x, s = x+4, s+3 {
				dst[x], dst[x+1], dst[x+2], dst[x+3] = src[s], src[s+1], src[s+2], 0xFF
			}
		}
		return m, nil
	case cs.n == 3 && bpc == 16:
		m := image.NewNRGBA64(r)
		for y := 0; y < h; y++ {
			src := data[y*rowBytes : y*rowBytes+6*w]
			dst := m.Pix[y*m.Stride : y*m.Stride+8*w]
			for x, s := 0, 0; x < len(dst); x, s = x+8, s+6 {
				copy(dst[x:x+6], src[s:s+6])
				dst[x+6], dst[x+7] = 0xFF, 0xFF
			}
		}
		return m, nil
	}
	return nil, fmt.Errorf("%d components at %d bits per component are not supported", cs.n, bpc)
}

// unpack expands bpc-bit samples (1, 2, 4 or 8) of src into one byte each
// in dst; with scale, values are stretched to 0–255.
func unpack(dst, src []byte, bpc int, scale bool) {
	if bpc == 8 {
		copy(dst, src)
		return
	}
	per := 8 / bpc
	mask := byte(1<<bpc - 1)
	mul := byte(1)
	if scale {
		mul = 255 / mask
	}
	for x := range dst {
		b := src[x/per]
		shift := uint(8 - bpc*(x%per+1))
		dst[x] = (b >> shift & mask) * mul
	}
}
