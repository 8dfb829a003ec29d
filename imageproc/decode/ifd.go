package decode

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
)

// TIFF structure (TIFF 6.0, Adobe 1992, section 2): an 8-byte header
// ("II" little-endian or "MM" big-endian, the number 42, the offset of the
// first image file directory), then IFDs of 12-byte entries (tag, type,
// count, value or offset) each followed by the offset of the next IFD.
// Exif metadata (JPEG APP1, PNG eXIf, WebP EXIF) uses the same structure.

// TIFF tags read here (TIFF 6.0 appendix A).
const (
	tagNewSubfileType = 254
	tagImageWidth     = 256
	tagImageLength    = 257
	tagCompression    = 259
	tagOrientation    = 274
	tagXResolution    = 282
	tagYResolution    = 283
	tagResolutionUnit = 296
	tagT4Options      = 292
)

// TIFF field types.
const (
	typeShort    = 3
	typeLong     = 4
	typeRational = 5
)

// maxIFDEntries bounds the entries read from one directory (real files
// have a few dozen).
const maxIFDEntries = 4096

var errBadIFD = errors.New("malformed TIFF directory")

// ifdEntry is one raw 12-byte directory entry.
type ifdEntry struct {
	typ   uint16
	count uint32
	val   [4]byte // value, or offset of the value when larger than 4 bytes
}

// tiffStruct reads TIFF-structured data from r (size bytes).
type tiffStruct struct {
	r    io.ReaderAt
	size int64
	bo   binary.ByteOrder
}

// newTIFFStruct checks the header and returns the reader and the offset of
// the first IFD.
func newTIFFStruct(r io.ReaderAt, size int64) (tiffStruct, int64, error) {
	var h [8]byte
	if size < 8 {
		return tiffStruct{}, 0, io.ErrUnexpectedEOF
	}
	if _, err := r.ReadAt(h[:], 0); err != nil {
		return tiffStruct{}, 0, err
	}
	t := tiffStruct{r: r, size: size}
	switch string(h[:4]) {
	case "II*\x00":
		t.bo = binary.LittleEndian
	case "MM\x00*":
		t.bo = binary.BigEndian
	default:
		return tiffStruct{}, 0, errors.New("bad TIFF header")
	}
	return t, int64(t.bo.Uint32(h[4:8])), nil
}

// readIFD reads the directory at off and returns its entries and the offset
// of the next directory (0 at the end of the chain).
func (t tiffStruct) readIFD(off int64) (map[uint16]ifdEntry, int64, error) {
	if off < 8 || off+2 > t.size {
		return nil, 0, fmt.Errorf("%w: directory offset %d outside the file", errBadIFD, off)
	}
	var nb [2]byte
	if _, err := t.r.ReadAt(nb[:], off); err != nil {
		return nil, 0, err
	}
	n := int64(t.bo.Uint16(nb[:]))
	if n == 0 || n > maxIFDEntries {
		return nil, 0, fmt.Errorf("%w: %d entries", errBadIFD, n)
	}
	if off+2+12*n > t.size {
		return nil, 0, fmt.Errorf("%w: %d entries at offset %d run past the end", errBadIFD, n, off)
	}
	// A next-directory pointer missing at the very end of the file is read
	// as zero (last directory).
	buf := make([]byte, 12*n+4)
	if m, _ := t.r.ReadAt(buf[:min(12*n+4, t.size-off-2)], off+2); int64(m) < 12*n {
		return nil, 0, io.ErrUnexpectedEOF
	}
	es := make(map[uint16]ifdEntry, n)
	for i := int64(0); i < n; i++ {
		p := buf[12*i : 12*i+12]
		var e ifdEntry
		tag := t.bo.Uint16(p[0:2])
		e.typ = t.bo.Uint16(p[2:4])
		e.count = t.bo.Uint32(p[4:8])
		copy(e.val[:], p[8:12])
		if _, dup := es[tag]; !dup {
			es[tag] = e
		}
	}
	next := int64(t.bo.Uint32(buf[12*n:]))
	return es, next, nil
}

// uint returns the first value of a SHORT or LONG entry.
func (t tiffStruct) uint(es map[uint16]ifdEntry, tag uint16) (uint32, bool) {
	e, ok := es[tag]
	if !ok || e.count < 1 {
		return 0, false
	}
	switch e.typ {
	case typeShort:
		return uint32(t.bo.Uint16(e.val[:2])), true
	case typeLong:
		return t.bo.Uint32(e.val[:]), true
	}
	return 0, false
}

// rational returns the first value of a RATIONAL entry; 0 when absent,
// malformed or with a zero denominator.
func (t tiffStruct) rational(es map[uint16]ifdEntry, tag uint16) float64 {
	e, ok := es[tag]
	if !ok || e.count < 1 {
		return 0
	}
	switch e.typ {
	case typeRational:
		off := int64(t.bo.Uint32(e.val[:]))
		if off < 0 || off+8 > t.size {
			return 0
		}
		var b [8]byte
		if _, err := t.r.ReadAt(b[:], off); err != nil {
			return 0
		}
		num, den := t.bo.Uint32(b[:4]), t.bo.Uint32(b[4:])
		if den == 0 {
			return 0
		}
		return float64(num) / float64(den)
	case typeShort, typeLong: // seen in the wild; not per spec
		v, _ := t.uint(es, tag)
		return float64(v)
	}
	return 0
}

// meta is the orientation and resolution found in a TIFF directory.
type meta struct {
	orientation int     // 1–8, or 0 when absent or invalid
	dpiX, dpiY  float64 // 0 when absent
}

// readMeta extracts orientation and resolution from a directory.
// ResolutionUnit 2 (inch) is the default when absent; 3 is centimetre; 1
// ("no absolute unit") gives no dpi (TIFF 6.0 tag 296; Exif 2.3 0x0128).
func (t tiffStruct) readMeta(es map[uint16]ifdEntry) meta {
	var m meta
	if o, ok := t.uint(es, tagOrientation); ok && o >= 1 && o <= 8 {
		m.orientation = int(o)
	}
	unit := uint32(2)
	if u, ok := t.uint(es, tagResolutionUnit); ok {
		unit = u
	}
	var scale float64
	switch unit {
	case 2:
		scale = 1
	case 3:
		scale = 2.54
	}
	m.dpiX = sane(t.rational(es, tagXResolution) * scale)
	m.dpiY = sane(t.rational(es, tagYResolution) * scale)
	return m
}

// sane drops resolutions that cannot be real (negative, NaN, absurd).
func sane(dpi float64) float64 {
	if !(dpi > 0 && dpi < 100000) {
		return 0
	}
	return dpi
}

// exifMeta parses an Exif block (a TIFF structure: the payload after
// "Exif\0\0" in a JPEG APP1 segment, a PNG eXIf chunk or a WebP EXIF chunk)
// and returns the IFD0 orientation and resolution.
func exifMeta(b []byte) meta {
	t, off, err := newTIFFStruct(bytesReaderAt(b), int64(len(b)))
	if err != nil {
		return meta{}
	}
	es, _, err := t.readIFD(off)
	if err != nil {
		return meta{}
	}
	return t.readMeta(es)
}

// bytesReaderAt is an io.ReaderAt over a byte slice.
type bytesReaderAt []byte

func (b bytesReaderAt) ReadAt(p []byte, off int64) (int, error) {
	if off < 0 || off >= int64(len(b)) {
		return 0, io.EOF
	}
	n := copy(p, b[off:])
	if n < len(p) {
		return n, io.EOF
	}
	return n, nil
}
