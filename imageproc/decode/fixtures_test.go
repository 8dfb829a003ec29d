package decode

// Test fixtures are generated here, byte by byte where the Go encoders do
// not write the metadata under test. Each writer cites the layout it
// follows.

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"image"
	"image/color"
	"image/gif"
	"image/jpeg"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/go-pdf/fpdf"
	"golang.org/x/image/bmp"
)

// pngChunk builds one PNG chunk: length, type, data, CRC-32 over type and
// data (PNG specification, W3C 2003, 5.3).
func pngChunk(typ string, data []byte) []byte {
	var b bytes.Buffer
	binary.Write(&b, binary.BigEndian, uint32(len(data)))
	b.WriteString(typ)
	b.Write(data)
	crc := crc32.ChecksumIEEE(append([]byte(typ), data...))
	binary.Write(&b, binary.BigEndian, crc)
	return b.Bytes()
}

// pngBytes encodes img and inserts extra chunks right after IHDR (the
// signature is 8 bytes and IHDR 8 + 13 + 4 bytes, so they go at 33).
func pngBytes(t testing.TB, img image.Image, extra ...[]byte) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := png.Encode(&b, img); err != nil {
		t.Fatal(err)
	}
	return insertAt(b.Bytes(), 33, extra...)
}

// insertAt returns a copy of raw with the byte strings ins inserted, in
// order, at offset at.
func insertAt(raw []byte, at int, ins ...[]byte) []byte {
	out := append([]byte{}, raw[:at]...)
	for _, c := range ins {
		out = append(out, c...)
	}
	return append(out, raw[at:]...)
}

// pHYs builds a pHYs chunk: X and Y pixels per unit, unit 1 = metre
// (PNG specification, W3C 2003, 11.3.5.3).
func pHYs(ppmX, ppmY uint32) []byte {
	d := make([]byte, 9)
	binary.BigEndian.PutUint32(d[0:], ppmX)
	binary.BigEndian.PutUint32(d[4:], ppmY)
	d[8] = 1
	return pngChunk("pHYs", d)
}

// jpegBytes encodes img at quality q and inserts the given marker segments
// after SOI.
func jpegBytes(t testing.TB, img image.Image, q int, segs ...[]byte) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := jpeg.Encode(&b, img, &jpeg.Options{Quality: q}); err != nil {
		t.Fatal(err)
	}
	return insertAt(b.Bytes(), 2, segs...)
}

// segment builds a JPEG marker segment: 0xFF, marker, 2-byte length
// including itself, payload (ITU-T T.81 B.1.1.4).
func segment(marker byte, payload []byte) []byte {
	out := []byte{0xFF, marker, 0, 0}
	binary.BigEndian.PutUint16(out[2:], uint16(len(payload)+2))
	return append(out, payload...)
}

// jfif builds an APP0 JFIF 1.02 segment with the given density units
// (0 aspect only, 1 dpi, 2 dots/cm) and densities.
func jfif(units byte, x, y uint16) []byte {
	p := []byte("JFIF\x00\x01\x02")
	p = append(p, units, byte(x>>8), byte(x), byte(y>>8), byte(y), 0, 0)
	return segment(0xE0, p)
}

// ifdField is one TIFF directory entry to write.
type ifdField struct {
	tag, typ uint16
	vals     []uint32 // SHORT/LONG values, or numerator/denominator pairs for RATIONAL
}

// tiffIFD serialises a directory at offset off (entries sorted by the
// caller), its out-of-line values placed right after it, and returns the
// bytes and the position of the 4-byte next-IFD pointer within them
// (TIFF 6.0 section 2).
func tiffIFD(bo byteOrder, off uint32, fields []ifdField) ([]byte, int) {
	n := len(fields)
	head := make([]byte, 2+12*n+4)
	bo.PutUint16(head, uint16(n))
	var extra []byte
	extraAt := off + uint32(len(head))
	for i, f := range fields {
		e := head[2+12*i:]
		bo.PutUint16(e[0:], f.tag)
		bo.PutUint16(e[2:], f.typ)
		switch f.typ {
		case typeShort:
			bo.PutUint32(e[4:], uint32(len(f.vals)))
			if len(f.vals) <= 2 {
				for k, v := range f.vals {
					bo.PutUint16(e[8+2*k:], uint16(v))
				}
				continue
			}
			bo.PutUint32(e[8:], extraAt+uint32(len(extra)))
			for _, v := range f.vals {
				extra = bo.AppendUint16(extra, uint16(v))
			}
		case typeLong:
			bo.PutUint32(e[4:], uint32(len(f.vals)))
			if len(f.vals) == 1 {
				bo.PutUint32(e[8:], f.vals[0])
				continue
			}
			bo.PutUint32(e[8:], extraAt+uint32(len(extra)))
			for _, v := range f.vals {
				extra = bo.AppendUint32(extra, v)
			}
		case typeRational:
			bo.PutUint32(e[4:], uint32(len(f.vals)/2))
			bo.PutUint32(e[8:], extraAt+uint32(len(extra)))
			for _, v := range f.vals {
				extra = bo.AppendUint32(extra, v)
			}
		}
		if len(extra)%2 == 1 {
			extra = append(extra, 0)
		}
	}
	return append(head, extra...), 2 + 12*n
}

// exifBlock builds a TIFF-structured Exif block whose IFD0 holds only the
// Orientation tag (Exif 2.3, tag 0x0112 SHORT).
func exifBlock(bo byteOrder, orientation int) []byte {
	var hdr []byte
	if bo == byteOrder(binary.BigEndian) {
		hdr = []byte("MM\x00*\x00\x00\x00\x08")
	} else {
		hdr = []byte("II*\x00\x08\x00\x00\x00")
	}
	ifd, _ := tiffIFD(bo, 8, []ifdField{{tagOrientation, typeShort, []uint32{uint32(orientation)}}})
	return append(hdr, ifd...)
}

// exifResSegment builds a JPEG APP1 Exif segment whose IFD0 holds
// Orientation, XResolution, YResolution and ResolutionUnit (Exif 2.3 tags
// 0x0112, 0x011A, 0x011B, 0x0128).
func exifResSegment(bo byteOrder, orientation int, xres, yres, unit uint32) []byte {
	var hdr []byte
	if bo == byteOrder(binary.BigEndian) {
		hdr = []byte("MM\x00*\x00\x00\x00\x08")
	} else {
		hdr = []byte("II*\x00\x08\x00\x00\x00")
	}
	ifd, _ := tiffIFD(bo, 8, []ifdField{
		{tagOrientation, typeShort, []uint32{uint32(orientation)}},
		{tagXResolution, typeRational, []uint32{xres, 1}},
		{tagYResolution, typeRational, []uint32{yres, 1}},
		{tagResolutionUnit, typeShort, []uint32{unit}},
	})
	return segment(0xE1, append([]byte("Exif\x00\x00"), append(hdr, ifd...)...))
}

// exifSegment wraps an Exif block in a JPEG APP1 segment.
func exifSegment(bo byteOrder, orientation int) []byte {
	return segment(0xE1, append([]byte("Exif\x00\x00"), exifBlock(bo, orientation)...))
}

// tiffPageSpec is one page of a hand-assembled TIFF.
type tiffPageSpec struct {
	w, h        int
	compression uint32 // 1 none, 3 CCITT T.4, 4 CCITT T.6
	photometric uint32 // 0 WhiteIsZero, 1 BlackIsZero
	bits        uint32 // bits per sample
	data        []byte // strip bytes (a single strip)
	xres, yres  uint32 // dots per unit, 0 = no tags
	unit        uint32 // 2 inch, 3 cm; 0 = no tag
	orientation uint32 // 0 = no tag
	subfile     uint32 // NewSubfileType; 1 = reduced resolution
	t4opts      uint32 // T4Options; 0 = no tag
}

// tiffBytes assembles a multi-page TIFF: header, then per page the strip
// data followed by its IFD; each IFD points to the next (TIFF 6.0 sections
// 2, 3 and 8; Group 3/4 options tags 292/293 left at their defaults).
func tiffBytes(bo byteOrder, pages []tiffPageSpec) []byte {
	var out []byte
	if bo == byteOrder(binary.BigEndian) {
		out = []byte("MM\x00*\x00\x00\x00\x00")
	} else {
		out = []byte("II*\x00\x00\x00\x00\x00")
	}
	nextPtr := 4 // where the previous "next IFD" pointer lives
	for _, p := range pages {
		dataOff := uint32(len(out))
		out = append(out, p.data...)
		if len(out)%2 == 1 {
			out = append(out, 0)
		}
		ifdOff := uint32(len(out))
		bo.PutUint32(out[nextPtr:], ifdOff)
		fields := []ifdField{}
		if p.subfile != 0 {
			fields = append(fields, ifdField{tagNewSubfileType, typeLong, []uint32{p.subfile}})
		}
		fields = append(fields,
			ifdField{tagImageWidth, typeLong, []uint32{uint32(p.w)}},
			ifdField{tagImageLength, typeLong, []uint32{uint32(p.h)}},
			ifdField{258, typeShort, []uint32{p.bits}},
			ifdField{259, typeShort, []uint32{p.compression}},
			ifdField{262, typeShort, []uint32{p.photometric}},
			ifdField{273, typeLong, []uint32{dataOff}},
		)
		if p.orientation != 0 {
			fields = append(fields, ifdField{tagOrientation, typeShort, []uint32{p.orientation}})
		}
		fields = append(fields,
			ifdField{277, typeShort, []uint32{1}},
			ifdField{278, typeLong, []uint32{uint32(p.h)}},
			ifdField{279, typeLong, []uint32{uint32(len(p.data))}},
		)
		if p.xres != 0 {
			fields = append(fields,
				ifdField{tagXResolution, typeRational, []uint32{p.xres, 1}},
				ifdField{tagYResolution, typeRational, []uint32{p.yres, 1}})
		}
		if p.t4opts != 0 {
			fields = append(fields, ifdField{tagT4Options, typeLong, []uint32{p.t4opts}})
		}
		if p.unit != 0 {
			fields = append(fields, ifdField{tagResolutionUnit, typeShort, []uint32{p.unit}})
		}
		ifd, np := tiffIFD(bo, ifdOff, fields)
		out = append(out, ifd...)
		nextPtr = int(ifdOff) + np
	}
	return out
}

// grayPattern is a w × h gray image whose value at (x, y) encodes both
// coordinates, so any misplaced pixel is detected.
func grayPattern(w, h int) *image.Gray {
	m := image.NewGray(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			m.Pix[y*m.Stride+x] = uint8((x*7 + y*31 + x*y) % 251)
		}
	}
	return m
}

// blockColors is a 3 × 2 grid of distinct, saturated colours; blockImage
// paints each in a 16 × 16 block (aligned to JPEG 4:2:0 MCUs so the colours
// survive compression).
var blockColors = [2][3]color.RGBA{
	{{220, 30, 30, 255}, {30, 200, 40, 255}, {30, 40, 220, 255}},
	{{230, 220, 40, 255}, {30, 210, 220, 255}, {20, 20, 20, 255}},
}

func blockImage() *image.RGBA {
	m := image.NewRGBA(image.Rect(0, 0, 48, 32))
	for y := 0; y < 32; y++ {
		for x := 0; x < 48; x++ {
			m.SetRGBA(x, y, blockColors[y/16][x/16])
		}
	}
	return m
}

// ecgPage draws a w × h colour page resembling a scanned ECG: white paper,
// pink 1 mm and darker 5 mm grid lines, a dark wavy trace. Used for
// realistic compression in benchmarks.
func ecgPage(w, h int, pxPerMM float64) *image.NRGBA {
	m := image.NewNRGBA(image.Rect(0, 0, w, h))
	for i := 0; i < len(m.Pix); i += 4 {
		m.Pix[i], m.Pix[i+1], m.Pix[i+2], m.Pix[i+3] = 255, 252, 250, 255
	}
	set := func(x, y int, r, g, b uint8) {
		if x < 0 || y < 0 || x >= w || y >= h {
			return
		}
		o := y*m.Stride + 4*x
		m.Pix[o], m.Pix[o+1], m.Pix[o+2] = r, g, b
	}
	for k := 0; float64(k)*pxPerMM < float64(max(w, h)); k++ {
		p := int(float64(k) * pxPerMM)
		r, g, b := uint8(250), uint8(200), uint8(205)
		if k%5 == 0 {
			r, g, b = 235, 130, 140
		}
		for y := 0; y < h; y++ {
			set(p, y, r, g, b)
		}
		for x := 0; x < w; x++ {
			set(x, p, r, g, b)
		}
	}
	for row := 0; row < 4; row++ {
		base := float64(h) * (float64(row) + 0.5) / 4
		prev := base
		for x := 0; x < w; x++ {
			ph := float64(x%int(20*pxPerMM)) / (20 * pxPerMM)
			y := base - 10*pxPerMM*spike(ph)
			lo, hi := min(prev, y), max(prev, y)
			for yy := int(lo) - 1; yy <= int(hi)+1; yy++ {
				set(x, yy, 20, 20, 30)
			}
			prev = y
		}
	}
	return m
}

// spike is a crude QRS-like bump over one cycle (demo drawing only).
func spike(ph float64) float64 {
	switch {
	case ph > 0.30 && ph < 0.33:
		return (ph - 0.30) / 0.03
	case ph >= 0.33 && ph < 0.37:
		return 1 - 1.3*(ph-0.33)/0.04
	case ph >= 0.37 && ph < 0.40:
		return -0.3 + 0.3*(ph-0.37)/0.03
	}
	return 0
}

// pdfFromJPEGs writes a PDF with one page per JPEG using fpdf; each page is
// sized so the image fills it at the given dpi (page points = px / dpi × 72).
func pdfFromJPEGs(t testing.TB, jpegs [][]byte, dpi float64) []byte {
	t.Helper()
	pdf := fpdf.New("P", "pt", "A4", "")
	pdf.SetCompression(false)
	for i, j := range jpegs {
		cfg, err := jpeg.DecodeConfig(bytes.NewReader(j))
		if err != nil {
			t.Fatal(err)
		}
		wPt, hPt := float64(cfg.Width)/dpi*72, float64(cfg.Height)/dpi*72
		pdf.AddPageFormat("P", fpdf.SizeType{Wd: wPt, Ht: hPt})
		name := fmt.Sprintf("scan%d", i)
		pdf.RegisterImageOptionsReader(name, fpdf.ImageOptions{ImageType: "JPG"}, bytes.NewReader(j))
		pdf.ImageOptions(name, 0, 0, wPt, hPt, false, fpdf.ImageOptions{ImageType: "JPG"}, 0, "")
	}
	var b bytes.Buffer
	if err := pdf.Output(&b); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// pdfVector writes a one-page PDF drawn with lines only.
func pdfVector(t testing.TB) []byte {
	t.Helper()
	pdf := fpdf.New("L", "mm", "A4", "")
	pdf.AddPage()
	pdf.SetDrawColor(240, 150, 150)
	for x := 10.0; x < 290; x += 5 {
		pdf.Line(x, 10, x, 200)
	}
	pdf.SetDrawColor(0, 0, 0)
	pdf.Line(10, 100, 290, 100)
	var b bytes.Buffer
	if err := pdf.Output(&b); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// rawPDF assembles a PDF 1.4 file by hand: catalog, page tree and one page
// per entry, each showing one image XObject with the given dictionary
// entries and stream (ISO 32000-1:2008, 7.5 file structure with a classic
// cross-reference table; 7.7.3 page tree; 8.9.5 image dictionaries).
type rawPDFPage struct {
	mediaW, mediaH float64 // points
	rotate         int
	imageDict      string // entries inside << >> except Length
	stream         []byte
	content        string // content stream; default fills the MediaBox
	// formContent, when set, wraps the image in a form XObject /Fm0 with
	// this content and formMatrix as its /Matrix (ISO 32000-1 8.10); the
	// page content then paints /Fm0.
	formContent, formMatrix string
}

func rawPDF(pages []rawPDFPage) []byte {
	var objs []string // object bodies, numbered from 1
	var streams [][]byte
	add := func(body string, stream []byte) int {
		objs = append(objs, body)
		streams = append(streams, stream)
		return len(objs)
	}
	catalog := add("", nil)
	tree := add("", nil)
	var kids []string
	for _, p := range pages {
		img := add(fmt.Sprintf("<< /Type /XObject /Subtype /Image %s /Length %d >>", p.imageDict, len(p.stream)), p.stream)
		content := p.content
		if content == "" {
			content = fmt.Sprintf("q %g 0 0 %g 0 0 cm /Im0 Do Q", p.mediaW, p.mediaH)
		}
		cs := add(fmt.Sprintf("<< /Length %d >>", len(content)), []byte(content))
		xobj := fmt.Sprintf("/Im0 %d 0 R", img)
		if p.formContent != "" {
			form := add(fmt.Sprintf("<< /Type /XObject /Subtype /Form /BBox [0 0 1000 1000] /Matrix %s /Resources << /XObject << /Im0 %d 0 R >> >> /Length %d >>",
				p.formMatrix, img, len(p.formContent)), []byte(p.formContent))
			xobj = fmt.Sprintf("/Fm0 %d 0 R", form)
			if p.content == "" {
				content = "/Fm0 Do"
				objs[cs-1] = fmt.Sprintf("<< /Length %d >>", len(content))
				streams[cs-1] = []byte(content)
			}
		}
		rot := ""
		if p.rotate != 0 {
			rot = fmt.Sprintf(" /Rotate %d", p.rotate)
		}
		page := add(fmt.Sprintf("<< /Type /Page /Parent %d 0 R /MediaBox [0 0 %g %g]%s /Resources << /XObject << %s >> >> /Contents %d 0 R >>",
			tree, p.mediaW, p.mediaH, rot, xobj, cs), nil)
		kids = append(kids, fmt.Sprintf("%d 0 R", page))
	}
	objs[catalog-1] = fmt.Sprintf("<< /Type /Catalog /Pages %d 0 R >>", tree)
	objs[tree-1] = fmt.Sprintf("<< /Type /Pages /Kids [%s] /Count %d >>", strings.Join(kids, " "), len(kids))

	var b bytes.Buffer
	b.WriteString("%PDF-1.4\n%\xe2\xe3\xcf\xd3\n")
	offs := make([]int, len(objs))
	for i, body := range objs {
		offs[i] = b.Len()
		fmt.Fprintf(&b, "%d 0 obj\n%s\n", i+1, body)
		if streams[i] != nil {
			b.WriteString("stream\n")
			b.Write(streams[i])
			b.WriteString("\nendstream\n")
		}
		b.WriteString("endobj\n")
	}
	xref := b.Len()
	fmt.Fprintf(&b, "xref\n0 %d\n0000000000 65535 f \n", len(objs)+1)
	for _, o := range offs {
		fmt.Fprintf(&b, "%010d 00000 n \n", o)
	}
	fmt.Fprintf(&b, "trailer\n<< /Size %d /Root %d 0 R >>\nstartxref\n%d\n%%%%EOF\n", len(objs)+1, catalog, xref)
	return b.Bytes()
}

// zlibBytes compresses b (FlateDecode, RFC 1950).
func zlibBytes(b []byte) []byte {
	var out bytes.Buffer
	w := zlib.NewWriter(&out)
	w.Write(b)
	w.Close()
	return out.Bytes()
}

func gifBytes(t testing.TB, img image.Image) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := gif.Encode(&b, img, nil); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// bmpBytes encodes img and sets biXPelsPerMeter/biYPelsPerMeter (file
// offsets 38 and 42 of a BITMAPINFOHEADER file).
func bmpBytes(t testing.TB, img image.Image, ppmX, ppmY uint32) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := bmp.Encode(&b, img); err != nil {
		t.Fatal(err)
	}
	out := b.Bytes()
	binary.LittleEndian.PutUint32(out[38:], ppmX)
	binary.LittleEndian.PutUint32(out[42:], ppmY)
	return out
}

// modCacheFile returns a file from golang.org/x/image's own test data in
// the module cache (public test data of the library, read in place, never
// copied), or skips.
func modCacheFile(t testing.TB, rel string) []byte {
	t.Helper()
	dir := modCacheDir()
	if dir == "" {
		t.Skip("module cache not found")
	}
	b, err := os.ReadFile(filepath.Join(dir, "golang.org/x/image@v0.48.0", rel))
	if err != nil {
		t.Skipf("x/image test data absent: %v", err)
	}
	return b
}

// modCacheDir returns the Go module cache directory, or "".
func modCacheDir() string {
	if dir := os.Getenv("GOMODCACHE"); dir != "" {
		return dir
	}
	out, err := exec.Command("go", "env", "GOMODCACHE").Output()
	if err != nil {
		return ""
	}
	return strings.TrimSpace(string(out))
}

// writeTemp writes b to a file in a test temp dir and returns its path.
func writeTemp(t testing.TB, name string, b []byte) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// byteOrder is binary.LittleEndian or binary.BigEndian.
type byteOrder interface {
	binary.ByteOrder
	binary.AppendByteOrder
}

// tiffBytesExtra writes a one-page TIFF like tiffBytes with
// SamplesPerPixel spp and a JPEGTables entry (tag 347, UNDEFINED).
func tiffBytesExtra(bo byteOrder, p tiffPageSpec, spp uint32, tables []byte) []byte {
	var out []byte
	if bo == byteOrder(binary.BigEndian) {
		out = []byte("MM\x00*\x00\x00\x00\x00")
	} else {
		out = []byte("II*\x00\x00\x00\x00\x00")
	}
	dataOff := uint32(len(out))
	out = append(out, p.data...)
	tabOff := uint32(len(out))
	out = append(out, tables...)
	if len(out)%2 == 1 {
		out = append(out, 0)
	}
	ifdOff := uint32(len(out))
	bo.PutUint32(out[4:], ifdOff)
	bits := make([]uint32, spp)
	for i := range bits {
		bits[i] = 8
	}
	fields := []ifdField{
		{tagImageWidth, typeLong, []uint32{uint32(p.w)}},
		{tagImageLength, typeLong, []uint32{uint32(p.h)}},
		{258, typeShort, bits},
		{259, typeShort, []uint32{p.compression}},
		{262, typeShort, []uint32{p.photometric}},
		{273, typeLong, []uint32{dataOff}},
		{277, typeShort, []uint32{spp}},
		{278, typeLong, []uint32{uint32(p.h)}},
		{279, typeLong, []uint32{uint32(len(p.data))}},
	}
	ifd, _ := tiffIFD(bo, ifdOff, fields)
	// JPEGTables (347, type 7 UNDEFINED) appended by hand: tiffIFD knows
	// SHORT, LONG and RATIONAL only. Rebuild with one more entry.
	n := len(fields) + 1
	head := make([]byte, 2+12*n+4)
	bo.PutUint16(head, uint16(n))
	copy(head[2:], ifd[2:2+12*len(fields)])
	e := head[2+12*len(fields):]
	bo.PutUint16(e[0:], tagJPEGTables)
	bo.PutUint16(e[2:], 7)
	bo.PutUint32(e[4:], uint32(len(tables)))
	bo.PutUint32(e[8:], tabOff)
	// Out-of-line values (the BitsPerSample triple) follow the longer
	// directory: move them and fix their offset.
	extra := ifd[2+12*len(fields)+4:]
	if len(extra) > 0 {
		bo.PutUint32(head[2+12*2+8:], ifdOff+uint32(len(head)))
	}
	out = append(out, head...)
	return append(out, extra...)
}
