package grid

import (
	"encoding/binary"
	"image"
)

// Word-at-a-time sums over 8-bit maps: eight pixels are read as one
// 64-bit word and added in 16-bit lanes (bytes 0, 2, 4, 6 in one word,
// 1, 3, 5, 7 in another), the lanes emptied into wide sums before they
// can overflow. The sums are exact integers, equal to adding the pixels
// one by one (common practice, "SIMD within a register").

const (
	lanes16 = 0x00ff00ff00ff00ff // even bytes as 16-bit lanes
	bytes1  = 0x0101010101010101
	high8   = 0x8080808080808080
)

// columnSums adds every row of g into dst (len = width), column by column.
func columnSums(dst []uint64, g *image.Gray) {
	w, h := g.Rect.Dx(), g.Rect.Dy()
	dst = dst[:w]
	nw := w / 8
	even := make([]uint64, nw)
	odd := make([]uint64, nw)
	flush := func() {
		for i := range nw {
			e, o := even[i], odd[i]
			d := dst[8*i : 8*i+8 : 8*i+8]
			for k := range 4 {
				d[2*k] += e >> (16 * k) & 0xffff
				d[2*k+1] += o >> (16 * k) & 0xffff
			}
			even[i], odd[i] = 0, 0
		}
	}
	// 257 rows of 255 fill a 16-bit lane: empty them every 256 rows.
	for y0 := 0; y0 < h; y0 += 256 {
		for y := y0; y < min(h, y0+256); y++ {
			row := g.Pix[y*g.Stride : y*g.Stride+w]
			for i := range nw {
				v := binary.LittleEndian.Uint64(row[8*i:])
				even[i] += v & lanes16
				odd[i] += v >> 8 & lanes16
			}
			for x := 8 * nw; x < w; x++ {
				dst[x] += uint64(row[x])
			}
		}
		flush()
	}
}

// rowSum returns the sum of the bytes of row.
func rowSum(row []uint8) int {
	s := 0
	i := 0
	for i+8 <= len(row) {
		// At most 128 words per pass: a lane holds up to 128·510.
		var acc uint64
		end := min(len(row)&^7, i+8*128)
		for ; i < end; i += 8 {
			v := binary.LittleEndian.Uint64(row[i:])
			acc += v&lanes16 + v>>8&lanes16
		}
		s += int(acc&0xffff + acc>>16&0xffff + acc>>32&0xffff + acc>>48)
	}
	for _, v := range row[i:] {
		s += int(v)
	}
	return s
}

// atLeastAddend returns the addend anyAtLeast uses for the threshold on
// (1 ≤ on ≤ 128).
func atLeastAddend(on uint8) uint64 { return uint64(128-int(on)) * bytes1 }

// anyAtLeast reports whether any byte of v is ≥ on, given k =
// atLeastAddend(on): adding 128 − on to the low seven bits of a byte sets
// its top bit exactly when the byte is ≥ on (no carry leaves the byte).
func anyAtLeast(v, k uint64) bool {
	return ((v&^high8)+k|v)&high8 != 0
}
