package decode

import (
	"bytes"
	"fmt"
	"image"
	"image/draw"
	"image/jpeg"
)

// TIFF tags for JPEG-compressed pages (TIFF 6.0 sections 15 and 22, as
// revised by TIFF Technical Note 2, 1995: Compression 7, each strip or
// tile a JPEG stream, shared tables in JPEGTables).
const (
	tagPhotometric     = 262
	tagStripOffsets    = 273
	tagSamplesPerPixel = 277
	tagRowsPerStrip    = 278
	tagStripByteCounts = 279
	tagPlanarConfig    = 284
	tagTileWidth       = 322
	tagTileLength      = 323
	tagTileOffsets     = 324
	tagTileByteCounts  = 325
	tagJPEGTables      = 347
)

// maxTIFFBlocks bounds the strips or tiles of one JPEG-compressed page.
const maxTIFFBlocks = 1 << 20

// uints reads all values of a SHORT or LONG entry (at most max).
func (t tiffStruct) uints(es map[uint16]ifdEntry, tag uint16, max int) ([]uint32, error) {
	e, ok := es[tag]
	if !ok {
		return nil, nil
	}
	size := map[uint16]int64{typeShort: 2, typeLong: 4}[e.typ]
	if size == 0 {
		return nil, fmt.Errorf("tag %d has type %d", tag, e.typ)
	}
	n := int64(e.count)
	if n > int64(max) {
		return nil, fmt.Errorf("tag %d has %d values", tag, n)
	}
	raw := e.val[:]
	if n*size > 4 {
		off := int64(t.bo.Uint32(e.val[:]))
		if off < 0 || off+n*size > t.size {
			return nil, fmt.Errorf("tag %d values outside the file", tag)
		}
		raw = make([]byte, n*size)
		if _, err := t.r.ReadAt(raw, off); err != nil {
			return nil, err
		}
	}
	out := make([]uint32, n)
	for i := range out {
		if size == 2 {
			out[i] = uint32(t.bo.Uint16(raw[2*i:]))
		} else {
			out[i] = t.bo.Uint32(raw[4*i:])
		}
	}
	return out, nil
}

// bytesEntry reads an UNDEFINED or BYTE entry (at most max bytes).
func (t tiffStruct) bytesEntry(es map[uint16]ifdEntry, tag uint16, max int64) ([]byte, error) {
	e, ok := es[tag]
	if !ok {
		return nil, nil
	}
	n := int64(e.count)
	if n > max {
		return nil, fmt.Errorf("tag %d has %d bytes", tag, n)
	}
	if n <= 4 {
		return append([]byte(nil), e.val[:n]...), nil
	}
	off := int64(t.bo.Uint32(e.val[:]))
	if off < 0 || off+n > t.size {
		return nil, fmt.Errorf("tag %d bytes outside the file", tag)
	}
	b := make([]byte, n)
	_, err := t.r.ReadAt(b, off)
	return b, err
}

// decodeJPEGTIFF decodes a Compression 7 page: every strip or tile is a
// JPEG stream, possibly abbreviated, whose tables are then in JPEGTables
// (an SOI … EOI stream spliced in front of the block's own markers).
// Pages come back as *image.Gray (one sample) or *image.RGBA (three).
func (f *tiffFile) decodeJPEGTIFF(i int, p tiffPage) (image.Image, error) {
	t := f.t
	fail := func(reason string, err error) error { return f.src.fail(i, "corrupt tiff: "+reason, err) }
	es, _, err := t.readIFD(p.off)
	if err != nil {
		return nil, fail("directory", err)
	}
	if pc, ok := t.uint(es, tagPlanarConfig); ok && pc != 1 {
		return nil, &Error{Name: f.src.name, Page: i, Kind: ErrUnsupported, Reason: "JPEG-compressed TIFF with separate colour planes is not supported"}
	}
	spp := uint32(1)
	if v, ok := t.uint(es, tagSamplesPerPixel); ok {
		spp = v
	}
	var dst draw.Image
	switch spp {
	case 1:
		dst = image.NewGray(image.Rect(0, 0, p.w, p.h))
	case 3:
		dst = image.NewRGBA(image.Rect(0, 0, p.w, p.h))
	default:
		return nil, &Error{Name: f.src.name, Page: i, Kind: ErrUnsupported, Reason: fmt.Sprintf("JPEG-compressed TIFF with %d samples per pixel is not supported", spp)}
	}

	// Block geometry: tiles, or strips of RowsPerStrip rows.
	bw, bh := p.w, p.h
	offTag, cntTag := uint16(tagStripOffsets), uint16(tagStripByteCounts)
	if tw, ok := t.uint(es, tagTileWidth); ok {
		th, _ := t.uint(es, tagTileLength)
		if tw < 8 || th < 8 || tw > 1<<16 || th > 1<<16 {
			return nil, fail(fmt.Sprintf("tile size %d × %d", tw, th), nil)
		}
		bw, bh = int(tw), int(th)
		offTag, cntTag = tagTileOffsets, tagTileByteCounts
	} else if rps, ok := t.uint(es, tagRowsPerStrip); ok && rps > 0 && int64(rps) < int64(p.h) {
		bh = int(rps)
	}
	across, down := (p.w+bw-1)/bw, (p.h+bh-1)/bh
	if int64(across)*int64(down) > maxTIFFBlocks {
		return nil, fail("too many strips or tiles", nil)
	}
	offs, err := t.uints(es, offTag, maxTIFFBlocks)
	if err != nil {
		return nil, fail("block offsets", err)
	}
	cnts, err := t.uints(es, cntTag, maxTIFFBlocks)
	if err != nil {
		return nil, fail("block sizes", err)
	}
	if len(offs) < across*down || len(cnts) < across*down {
		return nil, fail(fmt.Sprintf("%d blocks listed, %d needed", min(len(offs), len(cnts)), across*down), nil)
	}
	tables, err := t.bytesEntry(es, tagJPEGTables, 1<<20)
	if err != nil {
		return nil, fail("JPEG tables", err)
	}
	if len(tables) >= 4 {
		tables = bytes.TrimSuffix(tables, []byte{0xFF, 0xD9}) // drop EOI, keep SOI
	} else {
		tables = nil
	}

	for k := 0; k < across*down; k++ {
		off, n := int64(offs[k]), int64(cnts[k])
		if n < 4 || off+n > f.src.size {
			return nil, f.src.fail(i, fmt.Sprintf("truncated tiff: JPEG block %d outside the file", k+1), nil)
		}
		block := make([]byte, n)
		if err := f.src.readAt(block, off); err != nil {
			return nil, f.src.decodeErr(i, "tiff", err)
		}
		if tables != nil && bytes.HasPrefix(block, []byte{0xFF, 0xD8}) {
			block = append(append([]byte(nil), tables...), block[2:]...)
		}
		c, err := jpeg.DecodeConfig(bytes.NewReader(block))
		if err != nil {
			return nil, f.src.decodeErr(i, "JPEG block in tiff", err)
		}
		if c.Width > bw+16 || c.Height > bh+16 {
			return nil, fail(fmt.Sprintf("JPEG block %d is %d × %d, larger than its %d × %d cell", k+1, c.Width, c.Height, bw, bh), nil)
		}
		img, err := jpeg.Decode(bytes.NewReader(block))
		if err != nil {
			return nil, f.src.decodeErr(i, "JPEG block in tiff", err)
		}
		at := image.Pt((k%across)*bw, (k/across)*bh)
		r := image.Rectangle{Min: at, Max: at.Add(img.Bounds().Size())}.Intersect(dst.Bounds())
		draw.Draw(dst, r, img, img.Bounds().Min, draw.Src)
	}
	return dst, nil
}
