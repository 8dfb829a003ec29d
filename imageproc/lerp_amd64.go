//go:build amd64 && !purego

package imageproc

const haveLerpSIMD = true

// lerpI16SIMD is lerpI16Go for len(dst) a multiple of 8 (p and q at
// least as long), the fractions of the first eight pixels in lanes, inc =
// 8·step (lerp_amd64.s).
//
//go:noescape
func lerpI16SIMD(dst, p, q []int16, lanes *[8]uint32, inc uint32)

// lerp2U8SIMD is lerp2U8 for len(a) ≥ 8; b and the four rows hold at
// least len(a) values.
//
//go:noescape
func lerp2U8SIMD(a, b []uint8, pi, qi, pg, qg *int16, frac uint32, st *lerpSteps)

// fillYCbCrSIMD is ycbcrSeg.fill for whole segments, eight pixels a step:
// segment k covers pixels [32k, 32k+32) of di, dg and y and chroma samples
// [16k, 16k+16) of cb and cr, with the constants segs[k] (every segment's
// sums fitting its lanes: ycbcrLanes.set) and the constant parts aInk and
// aGrid (ycbcrConstants).
//
//go:noescape
func fillYCbCrSIMD(di, dg []int16, y, cb, cr []uint8, segs []ycbcrLanes, aInk, aGrid int32)
