//go:build !amd64 || purego

package imageproc

const haveLerpSIMD = false

func lerpI16SIMD(dst, p, q []int16, lanes *[8]uint32, inc uint32) { panic("unreachable") }

func lerp2U8SIMD(a, b []uint8, pi, qi, pg, qg *int16, frac uint32, st *lerpSteps) {
	panic("unreachable")
}

func fillYCbCrSIMD(di, dg []int16, y, cb, cr []uint8, segs []ycbcrLanes, aInk, aGrid int32) {
	panic("unreachable")
}
