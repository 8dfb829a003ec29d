package imageproc

// Linear interpolation between two rows, the kernel of the upright pass's
// two one-dimensional resamplings (shearPairRow: lerpI16,
// sampleShearedRow: lerp2U8). The weight of pixel j is the fraction frac + j·step (32-bit fixed point,
// wrapping: only the fraction matters) rounded to 1/256, f = 0..256, and
// the result round((p·(256 − f) + q·f) / 256): the same sums as the
// bilinear samplers' (p·256 + f·(q − p)), once per axis. On amd64 the
// kernels run eight pixels at a time in SSE2 (lerp_amd64.s, part of
// every amd64 CPU, so nothing is detected); lerpI16Go and lerpU8Go are
// the same arithmetic in Go, used elsewhere, for short runs and tails, and
// the reference the tests hold the vector code to bit for bit.

// lerpWeight is the weight of a 32-bit fraction rounded to 1/256
// (0..256), without overflowing 32 bits: ⌊(frac + 2²³) / 2²⁴⌋.
func lerpWeight(frac uint32) int32 { return int32((frac>>1 + 1<<22) >> 23) }

// lerpI16 sets dst[j] to the interpolation of p[j] and q[j] (|values| ≤
// pairLimit, so that nothing saturates) with weight frac + j·step.
func lerpI16(dst, p, q []int16, frac, step uint32) {
	p, q = p[:len(dst)], q[:len(dst)]
	n := 0
	if haveLerpSIMD {
		n = len(dst) &^ 7
		if n > 0 {
			lanes := lerpLanes(frac, step)
			lerpI16SIMD(dst[:n], p[:n], q[:n], &lanes, 8*step)
		}
	}
	lerpI16Go(dst[n:], p[n:], q[n:], frac+uint32(n)*step, step)
}

// lerpSteps is a row's step between pixels as lerp2U8 takes it: j·step
// for the eight pixels of a block, and the step over a block.
type lerpSteps struct {
	lanes     [8]uint32
	inc, step uint32
}

func newLerpSteps(step uint32) lerpSteps {
	return lerpSteps{lanes: lerpLanes(0, step), inc: 8 * step, step: step}
}

// lerp2U8 is lerpU8Go (lerpI16 clipped to 0..255) on two pairs of rows
// with the same weights: a from pi and qi, b from pg and qg. On amd64 a
// run of at least eight pixels is vector code throughout, its last block
// overlapping the one before when the length is not a multiple of eight
// (each pixel depends only on its own inputs, so it is written twice with
// the same value): the runs between two input rows are only a few dozen
// pixels long on a skewed page.
func lerp2U8(a, b []uint8, pi, qi, pg, qg []int16, frac uint32, st *lerpSteps) {
	n := len(a)
	b, pi, qi, pg, qg = b[:n], pi[:n], qi[:n], pg[:n], qg[:n]
	if haveLerpSIMD && n >= 8 {
		lerp2U8SIMD(a, b, &pi[0], &qi[0], &pg[0], &qg[0], frac, st)
		return
	}
	lerpU8Go(a, pi, qi, frac, st.step)
	lerpU8Go(b, pg, qg, frac, st.step)
}

// lerpLanes returns the fractions of eight consecutive pixels.
func lerpLanes(frac, step uint32) [8]uint32 {
	var l [8]uint32
	for j := range l {
		l[j] = frac + uint32(j)*step
	}
	return l
}

func lerpI16Go(dst, p, q []int16, frac, step uint32) {
	p, q = p[:len(dst)], q[:len(dst)]
	for j := range dst {
		f := lerpWeight(frac)
		frac += step
		dst[j] = int16((int32(p[j])*(256-f) + int32(q[j])*f + 128) >> 8)
	}
}

func lerpU8Go(dst []uint8, p, q []int16, frac, step uint32) {
	p, q = p[:len(dst)], q[:len(dst)]
	for j := range dst {
		f := lerpWeight(frac)
		frac += step
		dst[j] = clip8((int32(p[j])*(256-f) + int32(q[j])*f + 128) >> 8)
	}
}

// runLength returns how many pixels, at most n, a point starting at v and
// moving by step a pixel (32.32 fixed point) covers before its integer
// part changes.
func runLength(v, step int64, n int) int {
	r := v >> 32
	switch {
	case step > 0:
		return int(min(int64(n), ((r+1)<<32-v+step-1)/step))
	case step < 0:
		return int(min(int64(n), (v-r<<32)/-step+1))
	}
	return n
}
