package decode

import (
	"errors"
	"fmt"
	"io"

	"golang.org/x/image/tiff"
)

// maxTIFFPages bounds the directory chain walked in one file.
const maxTIFFPages = 100000

// tiffPage is one page directory of a TIFF file.
type tiffPage struct {
	off    int64 // offset of the IFD
	w, h   int   // stored size
	m      meta
	comp   uint32 // Compression (259)
	t4opts uint32 // T4Options (292)
}

// tiffFile is a possibly multi-page TIFF. golang.org/x/image/tiff decodes
// only the directory the header points at, so page k is decoded from a view
// of the file whose header offset is patched to point at IFD k.
type tiffFile struct {
	src   source
	t     tiffStruct
	first int64 // first-IFD offset as stored in the header
	pages []tiffPage
	chain error // set when the IFD chain breaks after some good pages
}

// broken reports a directory chain that broke after some pages: the file
// was probably cut short, and later pages are missing.
func (f *tiffFile) broken() error { return f.chain }

// openTIFF walks the IFD chain (TIFF 6.0 section 2), keeping every
// directory that is not a reduced-resolution copy (NewSubfileType bit 0,
// tag 254: thumbnails and previews), and reads each page's size,
// orientation and resolution (tags 256, 257, 274, 282, 283, 296).
func openTIFF(src source) (container, error) {
	t, off, err := newTIFFStruct(src.r, src.size)
	if err != nil {
		return nil, src.decodeErr(0, "tiff", err)
	}
	f := &tiffFile{src: src, t: t, first: off}
	var reduced []tiffPage
	seen := map[int64]bool{}
	for off != 0 {
		if seen[off] {
			break // a loop in the chain: keep what was read
		}
		if len(seen) >= maxTIFFPages {
			return nil, src.fail(0, fmt.Sprintf("corrupt tiff: more than %d directories", maxTIFFPages), nil)
		}
		seen[off] = true
		es, next, err := t.readIFD(off)
		if err != nil {
			if len(f.pages)+len(reduced) > 0 {
				// A broken link after good pages: keep them, report the rest.
				f.chain = &Error{Name: src.name, Reason: fmt.Sprintf(
					"directory chain broken after page %d (file cut short?); later pages are missing", len(f.pages)), Err: err}
				break
			}
			return nil, src.decodeErr(0, "tiff", err)
		}
		w, okW := t.uint(es, tagImageWidth)
		h, okH := t.uint(es, tagImageLength)
		if !okW || !okH {
			if len(f.pages)+len(reduced) > 0 {
				break
			}
			return nil, src.fail(0, "corrupt tiff: first directory has no image size", nil)
		}
		p := tiffPage{off: off, w: int(min(w, 1<<30)), h: int(min(h, 1<<30)), m: t.readMeta(es)}
		p.comp, _ = t.uint(es, tagCompression)
		p.t4opts, _ = t.uint(es, tagT4Options)
		// The size that counts against the budget is the one the decoder
		// will allocate: ask it (it parses the directory only). Malformed
		// directories can read differently to this walk and to it.
		if c, err := tiff.DecodeConfig(&patchedTIFF{src: src, t: t, ifd: uint32(off)}); err == nil {
			p.w, p.h = c.Width, c.Height
		}
		if sub, ok := t.uint(es, tagNewSubfileType); ok && sub&1 != 0 {
			reduced = append(reduced, p)
		} else {
			f.pages = append(f.pages, p)
		}
		off = next
	}
	if len(f.pages) == 0 {
		f.pages = reduced
	}
	if len(f.pages) == 0 {
		return nil, src.fail(0, "corrupt tiff: no image directory", nil)
	}
	return f, nil
}

func (f *tiffFile) format() string { return "tiff" }
func (f *tiffFile) numPages() int  { return len(f.pages) }

func (f *tiffFile) pageSize(i int) (int, int, error) {
	p := f.pages[i-1]
	w, h := orientedSize(p.w, p.h, p.m.orientation)
	return w, h, nil
}

func (f *tiffFile) decode(i int, check func(w, h int) error) (Page, error) {
	p := f.pages[i-1]
	if err := check(p.w, p.h); err != nil {
		return Page{}, err
	}
	if p.comp == 3 && p.t4opts&1 != 0 {
		// T4Options bit 0: two-dimensional (MR) coding (TIFF 6.0 section
		// 11). golang.org/x/image/ccitt decodes one-dimensional Group 3
		// and Group 4 only.
		return Page{}, &Error{Name: f.src.name, Page: i, Kind: ErrUnsupported,
			Reason: "two-dimensional Group 3 fax coding (TIFF T4Options 2-D) is not supported; Group 4 and one-dimensional Group 3 are"}
	}
	switch p.comp {
	case 6:
		return Page{}, &Error{Name: f.src.name, Page: i, Kind: ErrUnsupported,
			Reason: "old-style JPEG compression in TIFF (Compression 6) is not supported"}
	case 7:
		img, err := f.decodeJPEGTIFF(i, p)
		if err != nil {
			return Page{}, err
		}
		return Page{Image: img, DPIX: p.m.dpiX, DPIY: p.m.dpiY, Orientation: p.m.orientation}, nil
	}
	v := &patchedTIFF{src: f.src, t: f.t, ifd: uint32(p.off)}
	img, err := tiff.Decode(v)
	if err != nil {
		var ue tiff.UnsupportedError
		if errors.As(err, &ue) {
			return Page{}, &Error{Name: f.src.name, Page: i, Reason: "unsupported TIFF variant", Kind: ErrUnsupported, Err: err}
		}
		return Page{}, f.src.decodeErr(i, "tiff", err)
	}
	if b := img.Bounds(); b.Dx() != p.w || b.Dy() != p.h {
		return Page{}, f.src.fail(i, "corrupt tiff: decoded size differs from the directory", nil)
	}
	return Page{Image: img, DPIX: p.m.dpiX, DPIY: p.m.dpiY, Orientation: p.m.orientation}, nil
}

// patchedTIFF is a view of a TIFF file whose header's first-IFD offset
// (bytes 4–7) reads as ifd. It is an io.ReaderAt, which x/image/tiff uses
// directly instead of buffering the whole file.
type patchedTIFF struct {
	src source
	t   tiffStruct
	ifd uint32
	pos int64 // for Read
}

func (v *patchedTIFF) ReadAt(p []byte, off int64) (int, error) {
	n, err := v.src.r.ReadAt(p, off)
	if off < 8 && off+int64(n) > 4 {
		var h [4]byte
		v.t.bo.PutUint32(h[:], v.ifd)
		for k := max(off, 4); k < min(off+int64(n), 8); k++ {
			p[k-off] = h[k-4]
		}
	}
	return n, err
}

// Read reads sequentially through ReadAt (x/image/tiff only needs ReadAt;
// Read is here to satisfy io.Reader).
func (v *patchedTIFF) Read(p []byte) (int, error) {
	if v.pos >= v.src.size {
		return 0, io.EOF
	}
	n, err := v.ReadAt(p[:min(int64(len(p)), v.src.size-v.pos)], v.pos)
	v.pos += int64(n)
	if err == io.EOF && n > 0 {
		err = nil
	}
	return n, err
}
