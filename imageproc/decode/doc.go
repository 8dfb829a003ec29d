// Package decode reads scanned or photographed ECG pages from image files:
// PNG, JPEG, TIFF (multi-page; uncompressed, PackBits, LZW, Deflate and
// CCITT Group 4 and one-dimensional Group 3 fax through
// golang.org/x/image/tiff, and JPEG compression 7 per TIFF Technical Note 2
// decoded here), BMP, GIF (first frame), WebP and the raster images
// embedded in PDF files.
//
// The format is sniffed from the file's content, never from its name. Every
// page is checked against a pixel budget (Options.MaxPixels, default
// DefaultMaxPixels) using the size the underlying decoder will allocate,
// read from the header before any pixel memory is allocated, so hostile or
// absurd headers are refused cheaply. All failures are *Error values (or,
// for several failed pages, a one-line list of them) that match
// ecg.ErrUnreadable with errors.Is, plus ErrUnsupported, ErrTooLarge or
// ErrNoRaster where that applies; panics inside third-party decoders are
// recovered and reported the same way. A page that fails does not stop the
// other pages of the file: they are delivered and the failures reported
// at the end, so a caller that has produced some output can report the
// file as partial.
//
// Use Pages (or ReaderPages) for long documents: it hands over one decoded
// page at a time. File and Reader collect all pages; Config and
// ReaderConfig read headers only.
//
// Orientation. Photos and some scans record how the stored raster must be
// turned to be viewed upright: the Orientation tag 274 (0x0112) of TIFF 6.0
// (Adobe 1992, section 8, "Orientation") and of Exif (JEITA CP-3451, the
// APP1 "Exif" segment of a JPEG; the PNG eXIf chunk of the PNG 1.5
// extensions; the WebP "EXIF" chunk). Values 1–8 name which visual side the
// stored 0th row and 0th column lie on; 2, 4, 5 and 7 are mirrored. The
// decoder applies the tag and reports it in Page.Orientation. A PDF page's
// /Rotate entry (ISO 32000-1:2008, 7.7.3.3) is applied the same way and
// reported as the equivalent tag (90 → 6, 180 → 3, 270 → 8).
//
// Resolution. Page.DPIX and DPIY are what the file records, never guessed:
// PNG pHYs (PNG specification, W3C 2003, 11.3.5.3; unit metre),
// JPEG JFIF APP0 density (JFIF 1.02: units 1 = dots per inch, 2 = dots per
// cm) or else Exif XResolution/YResolution with ResolutionUnit, TIFF tags
// 282/283/296 (2 = inch, the default; 3 = centimetre) kept separate per axis
// because fax files are 204 × 98 or 204 × 196 dpi (ITU-T T.4), BMP
// biXPelsPerMeter/biYPelsPerMeter, and for PDF the image's pixel size over
// the size it is drawn at, in inches (1/72 inch units, ISO 32000-1 8.3.2.3):
// the transformation matrix in force at its Do operator in the page content
// stream (8.3.4, 8.9.4), or the page MediaBox when the image is inside a
// form XObject or the content cannot be read. The same matrix gives the
// PDF orientation when a scan is placed turned or mirrored.
// Cameras and some software write placeholder densities (72 or 96 dpi);
// callers should treat the values as a prior, not as a calibration.
//
// Returned image types (as decoded, no needless conversion):
//
//	PNG   *image.Gray, *image.Gray16, *image.RGBA, *image.RGBA64,
//	      *image.NRGBA, *image.NRGBA64 or *image.Paletted (1/2/4/8-bit palette)
//	JPEG  *image.YCbCr, *image.Gray or *image.CMYK
//	TIFF  *image.Gray (also 1-bit and CCITT fax pages), *image.Gray16,
//	      *image.Paletted, *image.RGBA, *image.NRGBA, *image.RGBA64, *image.NRGBA64;
//	      JPEG-compressed pages *image.Gray or *image.RGBA
//	BMP   *image.Paletted, *image.RGBA or *image.NRGBA
//	GIF   *image.Paletted (first frame)
//	WebP  *image.YCbCr, *image.NYCbCrA or *image.NRGBA
//	PDF   DCTDecode as JPEG; CCITTFaxDecode and 1-bit images *image.Gray;
//	      other DeviceGray *image.Gray; DeviceRGB/ICCBased(3) *image.NRGBA;
//	      Indexed *image.Paletted; DeviceCMYK *image.CMYK
//
// When an orientation other than 1 is applied, *image.YCbCr, *image.NYCbCrA
// and unusual types come back as *image.NRGBA; Gray, Gray16, Paletted,
// RGBA, NRGBA, RGBA64, NRGBA64 and CMYK keep their type.
//
// PDF support covers scanned documents: each page's largest raster image
// XObject (also inside form XObjects) with the filters FlateDecode, LZW,
// RunLength, ASCII85/ASCIIHex, DCTDecode and CCITTFaxDecode (K < 0 Group 4,
// K = 0 Group 3 one-dimensional). JBIG2Decode, JPXDecode and Group 3
// two-dimensional (K > 0) are reported as unsupported, and pages drawn only
// with vector paths are reported as such. The PDF object structure is read
// by github.com/pdfcpu/pdfcpu, which holds the encoded (compressed) file in
// memory; decoded pages are produced one at a time by Pages.
package decode
