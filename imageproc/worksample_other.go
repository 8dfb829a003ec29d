//go:build !amd64 || purego

package imageproc

const haveBlocksSIMD = false

func blocks4SIMD(acc []uint32, ya, yb, cb, cr []uint8) { panic("unreachable") }
