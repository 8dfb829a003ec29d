package decode

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"image"
	"io"
	"os"
	"slices"
	"strings"

	"tracelift/ecg"
)

// DefaultMaxPixels is the default pixel budget per page: 150 megapixels.
// A 600-dpi scan of an A3 sheet (297 × 420 mm) is 7016 × 9921 ≈ 70 Mpx and a
// 600-dpi 11 × 17 inch sheet ≈ 67 Mpx, so the default leaves twice that
// headroom while capping one decoded RGBA page at about 600 MB.
const DefaultMaxPixels = 150_000_000

// Page is one decoded raster page.
type Page struct {
	Image       image.Image // as decoded, orientation already applied (types: see package doc)
	Index       int         // 1-based page number within the file
	DPIX, DPIY  float64     // resolution metadata in dots per inch; 0 when absent (never invented)
	Format      string      // "png", "jpeg", "tiff", "bmp", "gif", "webp", "pdf"
	Orientation int         // the Exif/TIFF orientation tag that was applied (1 = none)
}

// Options tune decoding. A nil *Options means defaults.
type Options struct {
	// MaxPixels is the pixel budget per page (width × height after
	// decoding); 0 means DefaultMaxPixels. Pages over it are refused from
	// their header, before pixel memory is allocated.
	MaxPixels int64
	// Pages optionally selects 1-based pages, in the order given; nil or
	// empty means all pages. A page outside the file is an error.
	Pages []int
}

func (o *Options) maxPixels() int64 {
	if o == nil || o.MaxPixels <= 0 {
		return DefaultMaxPixels
	}
	return o.MaxPixels
}

// Sentinel kinds carried by *Error besides ecg.ErrUnreadable, for callers
// that branch on the reason (a batch may skip unsupported files).
var (
	// ErrUnsupported: the file is of a format or variant this package does
	// not decode (HEIC, JPEG 2000, BigTIFF, JBIG2 in PDF, …).
	ErrUnsupported = errors.New("unsupported format")
	// ErrTooLarge: a page is over the pixel budget (Options.MaxPixels).
	ErrTooLarge = errors.New("over the pixel budget")
	// ErrNoRaster: a PDF page holds no raster image (vector drawing only).
	ErrNoRaster = errors.New("no raster image")
)

// Error reports why a file, or one page of it, could not be decoded.
// errors.Is(err, ecg.ErrUnreadable) holds for every *Error, and so does
// errors.Is with Kind when Kind is set.
type Error struct {
	Name   string // file name as given by the caller
	Page   int    // 1-based page, 0 when the problem concerns the whole file
	Reason string // one-line human-readable reason
	Kind   error  // ErrUnsupported, ErrTooLarge, ErrNoRaster or nil
	Err    error  // underlying decoder error, or nil
}

func (e *Error) Error() string {
	var b bytes.Buffer
	b.WriteString(e.Name)
	b.WriteString(": ")
	if e.Page > 0 {
		fmt.Fprintf(&b, "page %d: ", e.Page)
	}
	b.WriteString(e.Reason)
	if e.Err != nil {
		b.WriteString(": ")
		b.WriteString(e.Err.Error())
	}
	return b.String()
}

// Unwrap returns ecg.ErrUnreadable, the Kind and the cause.
func (e *Error) Unwrap() []error {
	errs := []error{ecg.ErrUnreadable}
	if e.Kind != nil {
		errs = append(errs, e.Kind)
	}
	if e.Err != nil {
		errs = append(errs, e.Err)
	}
	return errs
}

// File opens path, sniffs its format from the content and decodes all
// selected pages. When some pages fail, the others are still returned
// together with the error. For long documents prefer Pages, which holds
// one decoded page at a time.
func File(path string, opt *Options) ([]Page, error) {
	var out []Page
	err := Pages(path, opt, func(p Page) error {
		out = append(out, p)
		return nil
	})
	return out, err
}

// Reader decodes all selected pages of the size bytes readable from r;
// name is used in error messages only. Like File, it returns the pages
// that decoded along with any error.
func Reader(r io.ReaderAt, size int64, name string, opt *Options) ([]Page, error) {
	var out []Page
	err := ReaderPages(r, size, name, opt, func(p Page) error {
		out = append(out, p)
		return nil
	})
	return out, err
}

// Pages decodes the selected pages of the file at path one at a time and
// calls fn with each, in page order (or in the order of Options.Pages), so
// only one decoded page need be held at a time. A page that cannot be
// decoded is skipped and reported in the returned error once the other
// pages are done (several failures are listed on one line; errors.Is
// matches ecg.ErrUnreadable and each Kind). A file that cannot be opened
// at all fails before fn is called. An error returned by fn stops the
// iteration and is passed back unchanged. fn may keep the Page.
func Pages(path string, opt *Options, fn func(Page) error) error {
	f, size, err := open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	return ReaderPages(f, size, path, opt, fn)
}

// ReaderPages is Pages for an io.ReaderAt of size bytes.
func ReaderPages(r io.ReaderAt, size int64, name string, opt *Options, fn func(Page) error) error {
	c, err := openContainer(r, size, name)
	if err != nil {
		return err
	}
	n := c.numPages()
	sel := []int(nil)
	if opt != nil && len(opt.Pages) > 0 {
		sel = slices.Clone(opt.Pages)
		for _, p := range sel {
			if p < 1 || p > n {
				return &Error{Name: name, Reason: fmt.Sprintf("page %d requested, the file has %d page(s)", p, n)}
			}
		}
	} else {
		sel = make([]int, n)
		for i := range sel {
			sel[i] = i + 1
		}
	}
	budget := opt.maxPixels()
	var errs pageErrors
	for _, idx := range sel {
		p, err := decodePage(c, name, idx, budget)
		if err != nil {
			errs = append(errs, err) // one bad page does not hide the others
			continue
		}
		if err := fn(p); err != nil {
			return err
		}
	}
	if b, ok := c.(interface{ broken() error }); ok && (opt == nil || len(opt.Pages) == 0) {
		if err := b.broken(); err != nil {
			errs = append(errs, err)
		}
	}
	switch len(errs) {
	case 0:
		return nil
	case 1:
		return errs[0]
	}
	return errs
}

// pageErrors collects the failures of several pages of one file. It
// matches ecg.ErrUnreadable (and any Kind) through its members.
type pageErrors []error

// maxListed bounds the page failures spelled out in the message.
const maxListed = 3

func (e pageErrors) Error() string {
	var b bytes.Buffer
	for i, err := range e {
		if i == maxListed {
			fmt.Fprintf(&b, "; and %d more failed pages", len(e)-maxListed)
			break
		}
		msg := err.Error()
		var de *Error
		if i > 0 {
			b.WriteString("; ")
			if errors.As(err, &de) {
				msg = strings.TrimPrefix(msg, de.Name+": ")
			}
		}
		b.WriteString(msg)
	}
	return b.String()
}

func (e pageErrors) Unwrap() []error { return e }

// Config reports the number of pages of the file at path and the width and
// height in pixels of its first page as it will be returned (orientation
// applied), and the format name, without decoding pixels. For PDF it
// reports the first page's largest raster image.
func Config(path string) (n int, w, h int, format string, err error) {
	f, size, err := open(path)
	if err != nil {
		return 0, 0, 0, "", err
	}
	defer f.Close()
	return ReaderConfig(f, size, path)
}

// ReaderConfig is Config for an io.ReaderAt of size bytes.
func ReaderConfig(r io.ReaderAt, size int64, name string) (n int, w, h int, format string, err error) {
	c, err := openContainer(r, size, name)
	if err != nil {
		return 0, 0, 0, "", err
	}
	n = c.numPages()
	err = guard(name, 1, func() error {
		var err error
		w, h, err = c.pageSize(1)
		return err
	})
	if err != nil {
		return 0, 0, 0, "", err
	}
	return n, w, h, c.format(), nil
}

// container is one opened file of a known format.
type container interface {
	format() string
	numPages() int
	// pageSize reports the page's final width and height (orientation
	// applied) from headers only.
	pageSize(i int) (w, h int, err error)
	// decode decodes page i (1-based); it must call check before
	// allocating pixels.
	decode(i int, check func(w, h int) error) (Page, error)
}

func open(path string) (*os.File, int64, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, 0, &Error{Name: path, Reason: "cannot open", Err: unwrapPathError(err)}
	}
	if st.IsDir() {
		return nil, 0, &Error{Name: path, Reason: "is a directory, not an image file"}
	}
	if !st.Mode().IsRegular() {
		return nil, 0, &Error{Name: path, Reason: "is not a regular file"}
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, 0, &Error{Name: path, Reason: "cannot open", Err: unwrapPathError(err)}
	}
	return f, st.Size(), nil
}

// unwrapPathError drops the *fs.PathError wrapper, whose text repeats the
// path already named by *Error.
func unwrapPathError(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// sniffLen is how many leading bytes are inspected to recognise a format.
const sniffLen = 1024

func openContainer(r io.ReaderAt, size int64, name string) (container, error) {
	if size <= 0 {
		return nil, &Error{Name: name, Reason: "empty file"}
	}
	head := make([]byte, min(size, sniffLen))
	if n, err := r.ReadAt(head, 0); n < len(head) {
		return nil, &Error{Name: name, Reason: "cannot read", Err: err}
	}
	kind, reason := sniff(head)
	if kind == "" {
		return nil, &Error{Name: name, Reason: reason, Kind: ErrUnsupported}
	}
	var c container
	err := guard(name, 0, func() error {
		var err error
		src := source{r: r, size: size, name: name}
		switch kind {
		case "png":
			c, err = openPNG(src)
		case "jpeg":
			c, err = openJPEG(src)
		case "tiff":
			c, err = openTIFF(src)
		case "bmp":
			c, err = openBMP(src)
		case "gif":
			c, err = openGIF(src)
		case "webp":
			c, err = openWebP(src)
		case "pdf":
			c, err = openPDF(src)
		}
		return err
	})
	if err != nil {
		return nil, err
	}
	return c, nil
}

// decodePage decodes page idx of c under the pixel budget and applies its
// orientation.
func decodePage(c container, name string, idx int, budget int64) (Page, error) {
	check := func(w, h int) error {
		if w <= 0 || h <= 0 {
			return &Error{Name: name, Page: pageNo(c, idx), Reason: fmt.Sprintf("invalid image size %d × %d px", w, h)}
		}
		if px := int64(w) * int64(h); px > budget {
			return &Error{Name: name, Page: pageNo(c, idx), Kind: ErrTooLarge, Reason: fmt.Sprintf(
				"image is %d × %d px (%s Mpx), over the %s Mpx limit; raise it with --max-pixels",
				w, h, mpx(px), mpx(budget))}
		}
		return nil
	}
	var p Page
	err := guard(name, pageNo(c, idx), func() error {
		var err error
		p, err = c.decode(idx, check)
		if err != nil {
			return err
		}
		if p.Orientation == 0 {
			p.Orientation = 1
		}
		if p.Orientation != 1 {
			p.Image = Orient(p.Image, p.Orientation)
			if p.Orientation >= 5 {
				p.DPIX, p.DPIY = p.DPIY, p.DPIX
			}
		}
		return nil
	})
	if err != nil {
		return Page{}, err
	}
	p.Index = idx
	p.Format = c.format()
	return p, nil
}

// pageNo is the page number to name in errors: none for single-image files.
func pageNo(c container, idx int) int {
	if c.numPages() <= 1 && c.format() != "pdf" && c.format() != "tiff" {
		return 0
	}
	return idx
}

func mpx(px int64) string {
	v := float64(px) / 1e6
	if v >= 10 || v == float64(int64(v)) {
		return fmt.Sprintf("%.0f", v)
	}
	return fmt.Sprintf("%.1f", v)
}

// guard runs f, turning a panic inside a decoder into an *Error and making
// sure any other error is an *Error naming the file.
func guard(name string, page int, f func() error) (err error) {
	defer func() {
		if v := recover(); v != nil {
			err = &Error{Name: name, Page: page, Reason: "corrupt file (decoder failure)", Err: fmt.Errorf("%v", v)}
		}
	}()
	err = f()
	if err == nil {
		return nil
	}
	var de *Error
	if errors.As(err, &de) {
		return err
	}
	return &Error{Name: name, Page: page, Reason: "cannot decode", Err: err}
}

// source is the byte range of one file.
type source struct {
	r    io.ReaderAt
	size int64
	name string
}

// reader returns a buffered sequential reader over the whole file.
func (s source) reader() io.Reader {
	return bufio.NewReaderSize(io.NewSectionReader(s.r, 0, s.size), 64<<10)
}

// readAt reads exactly len(p) bytes at off, or reports truncation.
func (s source) readAt(p []byte, off int64) error {
	if off < 0 || off+int64(len(p)) > s.size {
		return io.ErrUnexpectedEOF
	}
	n, err := s.r.ReadAt(p, off)
	if n == len(p) {
		return nil
	}
	if err == nil || err == io.EOF {
		err = io.ErrUnexpectedEOF
	}
	return err
}

// endsWith reports whether the file ends with t, ignoring trailing NUL,
// CR and LF padding some writers add.
func (s source) endsWith(t []byte) bool {
	n := int64(len(t)) + 64
	if n > s.size {
		n = s.size
	}
	b := make([]byte, n)
	if s.readAt(b, s.size-n) != nil {
		return false
	}
	return bytes.HasSuffix(bytes.TrimRight(b, "\x00\r\n"), t)
}

// fail builds an *Error for the file of s.
func (s source) fail(page int, reason string, err error) error {
	return &Error{Name: s.name, Page: page, Reason: reason, Err: err}
}

// decodeErr classifies a decoder error: a premature end is "truncated",
// anything else "corrupt".
func (s source) decodeErr(page int, format string, err error) error {
	if errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF) {
		return s.fail(page, "truncated "+format, err)
	}
	return s.fail(page, "corrupt "+format, err)
}

// sniff recognises a format from the first bytes of a file. It returns the
// format name, or "" and the reason.
func sniff(h []byte) (string, string) {
	switch {
	case bytes.HasPrefix(h, []byte("\x89PNG\r\n\x1a\n")):
		return "png", ""
	case bytes.HasPrefix(h, []byte{0xFF, 0xD8, 0xFF}):
		return "jpeg", ""
	case bytes.HasPrefix(h, []byte("II*\x00")), bytes.HasPrefix(h, []byte("MM\x00*")):
		return "tiff", ""
	case bytes.HasPrefix(h, []byte("II+\x00")), bytes.HasPrefix(h, []byte("MM\x00+")):
		return "", "BigTIFF files are not supported"
	case bytes.HasPrefix(h, []byte("GIF87a")), bytes.HasPrefix(h, []byte("GIF89a")):
		return "gif", ""
	case len(h) >= 12 && string(h[0:4]) == "RIFF" && string(h[8:12]) == "WEBP":
		return "webp", ""
	case bytes.HasPrefix(h, []byte("BM")) && len(h) >= 18 && validDIBHeader(h[14:18]):
		return "bmp", ""
	case bytes.Contains(h, []byte("%PDF-")):
		// ISO 32000-1 7.5.2 puts the header first; readers commonly accept
		// leading bytes before it (common practice).
		return "pdf", ""
	case len(h) >= 12 && string(h[4:8]) == "ftyp" && (bytes.HasPrefix(h[8:], []byte("hei")) || bytes.HasPrefix(h[8:], []byte("mif1")) || bytes.HasPrefix(h[8:], []byte("hev")) || bytes.HasPrefix(h[8:], []byte("avif"))):
		return "", "HEIC/HEIF/AVIF images are not supported (export the photo as JPEG or PNG)"
	case bytes.HasPrefix(h, []byte("\x00\x00\x00\x0cjP  \r\n\x87\n")), bytes.HasPrefix(h, []byte{0xFF, 0x4F, 0xFF, 0x51}):
		return "", "JPEG 2000 images are not supported"
	case bytes.HasPrefix(h, []byte("\x97JB2\r\n\x1a\n")):
		return "", "JBIG2 files are not supported"
	case bytes.HasPrefix(h, []byte("DICM")) || (len(h) >= 132 && string(h[128:132]) == "DICM"):
		return "", "DICOM files are not supported by the image decoder"
	}
	if isText(h) {
		return "", "not an image file (looks like text)"
	}
	return "", "not a recognised image format (expected PNG, JPEG, TIFF, BMP, GIF, WebP or PDF)"
}

// validDIBHeader reports whether the 4 bytes after a BMP file header hold
// a known DIB header size (BITMAPCOREHEADER 12, BITMAPINFOHEADER 40, its
// extensions 52 and 56, OS/2 64, BITMAPV4HEADER 108, BITMAPV5HEADER 124).
func validDIBHeader(b []byte) bool {
	switch uint32(b[0]) | uint32(b[1])<<8 | uint32(b[2])<<16 | uint32(b[3])<<24 {
	case 12, 40, 52, 56, 64, 108, 124:
		return true
	}
	return false
}

// isText reports whether h looks like plain text (UTF-8 without control
// bytes other than white space).
func isText(h []byte) bool {
	for _, c := range h {
		if c < 0x20 && c != '\n' && c != '\r' && c != '\t' && c != '\f' {
			return false
		}
	}
	return true
}

// orientedSize swaps w and h for the orientations that transpose.
func orientedSize(w, h, orientation int) (int, int) {
	if orientation >= 5 && orientation <= 8 {
		return h, w
	}
	return w, h
}
