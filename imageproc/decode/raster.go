package decode

import (
	"bytes"
	"encoding/binary"
	"errors"
	"image"
	"image/gif"
	"image/jpeg"
	"image/png"
	"io"

	"golang.org/x/image/bmp"
	"golang.org/x/image/tiff"
	"golang.org/x/image/webp"
)

// single is a one-page raster file (PNG, JPEG, BMP, GIF, WebP).
type single struct {
	src  source
	name string // format name
	w, h int    // stored size from the header
	m    meta
	dec  func(io.Reader) (image.Image, error)
	// trailer, when set, is the byte string a complete file ends with
	// (PNG IEND chunk, JPEG EOI marker); a decode failure on a file
	// without it is reported as truncation.
	trailer []byte
}

func (s *single) format() string { return s.name }
func (s *single) numPages() int  { return 1 }

func (s *single) pageSize(int) (int, int, error) {
	w, h := orientedSize(s.w, s.h, s.m.orientation)
	return w, h, nil
}

func (s *single) decode(_ int, check func(w, h int) error) (Page, error) {
	if err := check(s.w, s.h); err != nil {
		return Page{}, err
	}
	img, err := s.dec(s.src.reader())
	if err != nil {
		if isUnsupported(err) {
			return Page{}, &Error{Name: s.src.name, Kind: ErrUnsupported, Reason: "unsupported " + s.name + " variant", Err: err}
		}
		if s.trailer != nil && !s.src.endsWith(s.trailer) {
			return Page{}, s.src.fail(0, "truncated "+s.name+" (file ends early)", err)
		}
		return Page{}, s.src.decodeErr(0, s.name, err)
	}
	if b := img.Bounds(); b.Dx() != s.w || b.Dy() != s.h {
		return Page{}, s.src.fail(0, "corrupt "+s.name+": decoded size differs from the header", nil)
	}
	return Page{Image: img, DPIX: s.m.dpiX, DPIY: s.m.dpiY, Orientation: s.m.orientation}, nil
}

// header reads the image size with the format's DecodeConfig, which reads
// only the header.
func (s *single) header(cfg func(io.Reader) (image.Config, error)) error {
	c, err := cfg(s.src.reader())
	if err != nil {
		if isUnsupported(err) {
			return &Error{Name: s.src.name, Kind: ErrUnsupported, Reason: "unsupported " + s.name + " variant", Err: err}
		}
		return s.src.decodeErr(0, s.name, err)
	}
	s.w, s.h = c.Width, c.Height
	return nil
}

// isUnsupported reports the standard decoders' "valid but not supported"
// errors, as opposed to corrupt data.
func isUnsupported(err error) bool {
	var pu png.UnsupportedError
	var ju jpeg.UnsupportedError
	var tu tiff.UnsupportedError
	return errors.As(err, &pu) || errors.As(err, &ju) || errors.As(err, &tu) || errors.Is(err, bmp.ErrUnsupported)
}

// maxMetaChunk bounds the metadata bytes read from one chunk or segment.
const maxMetaChunk = 1 << 20

// openPNG reads the PNG header and the pHYs and eXIf chunks before the
// first IDAT (PNG specification, W3C 2003, 5.3 chunk layout; 11.3.5.3
// pHYs: pixels per unit X and Y as 4-byte integers, unit byte 1 = metre;
// eXIf from the PNG 1.5 extensions, Exif without the "Exif\0\0" prefix).
func openPNG(src source) (container, error) {
	s := &single{src: src, name: "png", dec: png.Decode, trailer: []byte("IEND\xaeB`\x82")}
	if err := s.header(png.DecodeConfig); err != nil {
		return nil, err
	}
	off := int64(8)
	var hdr [8]byte
	for i := 0; i < 10000 && off+8 <= src.size; i++ {
		if src.readAt(hdr[:], off) != nil {
			break
		}
		n := int64(binary.BigEndian.Uint32(hdr[:4]))
		typ := string(hdr[4:8])
		data := off + 8
		if typ == "IDAT" || typ == "IEND" || data+n > src.size {
			break
		}
		switch typ {
		case "pHYs":
			if n == 9 {
				var b [9]byte
				if src.readAt(b[:], data) == nil && b[8] == 1 {
					// 1 inch = 0.0254 m exactly.
					s.m.dpiX = sane(float64(binary.BigEndian.Uint32(b[0:4])) * 0.0254)
					s.m.dpiY = sane(float64(binary.BigEndian.Uint32(b[4:8])) * 0.0254)
				}
			}
		case "eXIf":
			if n <= maxMetaChunk {
				b := make([]byte, n)
				if src.readAt(b, data) == nil {
					em := exifMeta(bytes.TrimPrefix(b, []byte("Exif\x00\x00")))
					s.m.orientation = em.orientation
				}
			}
		}
		off = data + n + 4 // data and CRC
	}
	return s, nil
}

// openJPEG reads the JPEG header segments up to the first scan: APP0 JFIF
// density (JFIF 1.02: units 0 = aspect ratio only, 1 = dots per inch,
// 2 = dots per cm) and APP1 Exif IFD0 (orientation, X/YResolution,
// ResolutionUnit). The JFIF density wins when it states a unit.
func openJPEG(src source) (container, error) {
	s := &single{src: src, name: "jpeg", dec: jpeg.Decode, trailer: []byte{0xFF, 0xD9}}
	if err := s.header(jpeg.DecodeConfig); err != nil {
		return nil, err
	}
	var jfif, exif meta
	off := int64(2)
	var mk [4]byte
	for i := 0; i < 1000 && off+4 <= src.size; i++ {
		if src.readAt(mk[:2], off) != nil || mk[0] != 0xFF {
			break
		}
		marker := mk[1]
		if marker == 0xFF { // fill byte
			off++
			continue
		}
		if marker == 0x01 || (marker >= 0xD0 && marker <= 0xD7) {
			off += 2
			continue
		}
		if marker == 0xDA || marker == 0xD9 { // start of scan, end of image
			break
		}
		if src.readAt(mk[2:4], off+2) != nil {
			break
		}
		n := int64(binary.BigEndian.Uint16(mk[2:4])) // includes the 2 length bytes
		if n < 2 || off+2+n > src.size {
			break
		}
		data, dn := off+4, n-2
		switch {
		case marker == 0xE0 && dn >= 12:
			var b [12]byte
			if src.readAt(b[:], data) == nil && string(b[:5]) == "JFIF\x00" {
				x := float64(binary.BigEndian.Uint16(b[8:10]))
				y := float64(binary.BigEndian.Uint16(b[10:12]))
				switch b[7] {
				case 1:
					jfif.dpiX, jfif.dpiY = sane(x), sane(y)
				case 2:
					jfif.dpiX, jfif.dpiY = sane(x*2.54), sane(y*2.54)
				}
			}
		case marker == 0xE1 && dn > 6:
			b := make([]byte, dn)
			if src.readAt(b, data) == nil && bytes.HasPrefix(b, []byte("Exif\x00\x00")) {
				exif = exifMeta(b[6:])
			}
		}
		off += 2 + n
	}
	s.m = exif
	if jfif.dpiX > 0 && jfif.dpiY > 0 {
		s.m.dpiX, s.m.dpiY = jfif.dpiX, jfif.dpiY
	}
	return s, nil
}

// openBMP reads the BMP header; a BITMAPINFOHEADER or later (size ≥ 40)
// carries biXPelsPerMeter and biYPelsPerMeter at file offsets 38 and 42
// (Microsoft BITMAPINFOHEADER documentation; 0 means unspecified).
func openBMP(src source) (container, error) {
	s := &single{src: src, name: "bmp", dec: bmp.Decode}
	if err := s.header(bmp.DecodeConfig); err != nil {
		return nil, err
	}
	var b [46]byte
	if src.readAt(b[:], 0) == nil && binary.LittleEndian.Uint32(b[14:18]) >= 40 {
		x := int32(binary.LittleEndian.Uint32(b[38:42]))
		y := int32(binary.LittleEndian.Uint32(b[42:46]))
		if x > 0 && y > 0 {
			s.m.dpiX, s.m.dpiY = sane(float64(x)*0.0254), sane(float64(y)*0.0254)
		}
	}
	return s, nil
}

// openGIF reads the GIF logical screen; only the first frame is decoded
// (image/gif Decode). GIF records no resolution.
func openGIF(src source) (container, error) {
	s := &single{src: src, name: "gif", dec: gif.Decode}
	if err := s.header(gif.DecodeConfig); err != nil {
		return nil, err
	}
	// The first frame may be smaller than the logical screen; image/gif
	// returns the frame's own bounds, so compare against those on decode.
	s.dec = func(r io.Reader) (image.Image, error) {
		img, err := gif.Decode(r)
		if err != nil {
			return nil, err
		}
		if b := img.Bounds(); b.Dx() != s.w || b.Dy() != s.h {
			s.w, s.h = b.Dx(), b.Dy()
		}
		return img, nil
	}
	return s, nil
}

// openWebP reads the WebP header and an EXIF chunk if present (RIFF
// container: 4-byte FourCC, 4-byte little-endian size, data padded to an
// even length; WebP container specification, Google).
func openWebP(src source) (container, error) {
	s := &single{src: src, name: "webp", dec: webp.Decode}
	if err := s.header(webp.DecodeConfig); err != nil {
		return nil, err
	}
	off := int64(12)
	var hdr [8]byte
	for i := 0; i < 1000 && off+8 <= src.size; i++ {
		if src.readAt(hdr[:], off) != nil {
			break
		}
		n := int64(binary.LittleEndian.Uint32(hdr[4:8]))
		if off+8+n > src.size {
			break
		}
		if string(hdr[:4]) == "EXIF" && n <= maxMetaChunk {
			b := make([]byte, n)
			if src.readAt(b, off+8) == nil {
				s.m.orientation = exifMeta(bytes.TrimPrefix(b, []byte("Exif\x00\x00"))).orientation
			}
		}
		off += 8 + n + n&1
	}
	return s, nil
}
