//go:build amd64 && !purego

package imageproc

const haveBlocksSIMD = true

// blocks4SIMD is yccTables.blocks4 for pairs of blocks: it adds to acc
// (4 per block, red, green and blue sums; the fourth untouched) the
// converted pixels of len(acc)/8 pairs of 4 × 2 blocks, luma rows ya and
// yb (8 per pair), chroma cb and cr (4 per pair), eight pixels of a row a
// step in SSE2 (worksample_amd64.s). The conversion is image/color's
// YCbCrToRGB to the bit.
//
//go:noescape
func blocks4SIMD(acc []uint32, ya, yb, cb, cr []uint8)
