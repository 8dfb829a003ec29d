package measure

import "math"

// biquad is one second-order IIR section in direct form II transposed,
// coefficients normalised so that a0 = 1.
type biquad struct{ b0, b1, b2, a1, a2 float64 }

// butterLow returns the 2nd-order Butterworth low-pass section with cut-off
// fc (Hz) at sample rate fs (Hz), by the bilinear transform with
// pre-warping (Q = 1/√2; common practice, see R. Bristow-Johnson's "Audio
// EQ cookbook"). fc is clamped below 0.45·fs.
func butterLow(fc, fs float64) biquad {
	fc = math.Min(fc, 0.45*fs)
	w := 2 * math.Pi * fc / fs
	c, s := math.Cos(w), math.Sin(w)
	alpha := s / math.Sqrt2
	a0 := 1 + alpha
	return biquad{
		b0: (1 - c) / 2 / a0, b1: (1 - c) / a0, b2: (1 - c) / 2 / a0,
		a1: -2 * c / a0, a2: (1 - alpha) / a0,
	}
}

// butterHigh returns the 2nd-order Butterworth high-pass section with
// cut-off fc (Hz) at sample rate fs (Hz).
func butterHigh(fc, fs float64) biquad {
	fc = math.Min(fc, 0.45*fs)
	w := 2 * math.Pi * fc / fs
	c, s := math.Cos(w), math.Sin(w)
	alpha := s / math.Sqrt2
	a0 := 1 + alpha
	return biquad{
		b0: (1 + c) / 2 / a0, b1: -(1 + c) / a0, b2: (1 + c) / 2 / a0,
		a1: -2 * c / a0, a2: (1 - alpha) / a0,
	}
}

// dcGain returns the section's gain at 0 Hz.
func (q biquad) dcGain() float64 { return (q.b0 + q.b1 + q.b2) / (1 + q.a1 + q.a2) }

// run filters x in place, starting from the steady state for a constant
// input equal to x[0] so that no start-up transient appears.
func (q biquad) run(x []float64) {
	if len(x) == 0 {
		return
	}
	x0 := x[0]
	y0 := q.dcGain() * x0
	z2 := q.b2*x0 - q.a2*y0
	z1 := q.b1*x0 - q.a1*y0 + z2
	for i, v := range x {
		y := q.b0*v + z1
		z1 = q.b1*v - q.a1*y + z2
		z2 = q.b2*v - q.a2*y
		x[i] = y
	}
}

// runReverse filters x in place from the last sample to the first.
func (q biquad) runReverse(x []float64) {
	n := len(x)
	if n == 0 {
		return
	}
	x0 := x[n-1]
	y0 := q.dcGain() * x0
	z2 := q.b2*x0 - q.a2*y0
	z1 := q.b1*x0 - q.a1*y0 + z2
	for i := n - 1; i >= 0; i-- {
		v := x[i]
		y := q.b0*v + z1
		z1 = q.b1*v - q.a1*y + z2
		z2 = q.b2*v - q.a2*y
		x[i] = y
	}
}

// filtfilt applies each section forward and then backward (zero phase;
// the magnitude response is squared, so a 2nd-order Butterworth section
// becomes 4th order with −6 dB at its cut-off). Before filtering, x is
// extended at both ends by pad samples of odd (point) reflection, which
// keeps level and slope continuous at the edges; work must have room for
// len(x)+2·pad samples and is used as scratch. The result is written back
// into x.
func filtfilt(x []float64, pad int, work []float64, sections ...biquad) {
	n := len(x)
	if n == 0 {
		return
	}
	pad = min(pad, n-1)
	w := work[:n+2*pad]
	for i := 0; i < pad; i++ {
		w[pad-1-i] = 2*x[0] - x[i+1]
		w[pad+n+i] = 2*x[n-1] - x[n-2-i]
	}
	copy(w[pad:], x)
	for _, q := range sections {
		q.run(w)
	}
	for i := len(sections) - 1; i >= 0; i-- {
		sections[i].runReverse(w)
	}
	copy(x, w[pad:pad+n])
}

// runs returns the [start, end) index pairs of the contiguous non-NaN runs
// of x that are at least minLen samples long, appended to dst.
func runs(dst [][2]int, x []float64, minLen int) [][2]int {
	start := -1
	for i, v := range x {
		if math.IsNaN(v) {
			if start >= 0 && i-start >= minLen {
				dst = append(dst, [2]int{start, i})
			}
			start = -1
		} else if start < 0 {
			start = i
		}
	}
	if start >= 0 && len(x)-start >= minLen {
		dst = append(dst, [2]int{start, len(x)})
	}
	return dst
}

// bandFilter filters every contiguous non-NaN run of x separately with the
// given sections (zero phase, odd-reflection padding of padS seconds) and
// writes the result to dst; runs shorter than minS seconds and NaN samples
// stay NaN in dst. A nil dst is allocated; dst is returned.
func bandFilter(dst, x []float64, fs, padS, minS float64, sections ...biquad) []float64 {
	if dst == nil {
		dst = make([]float64, len(x))
	}
	if len(dst) != len(x) {
		panic("measure: bandFilter: length mismatch")
	}
	if len(x) > 0 && &dst[0] == &x[0] {
		panic("measure: bandFilter: dst and x must not overlap")
	}
	for i := range dst {
		dst[i] = math.NaN()
	}
	pad := int(padS * fs)
	var work []float64
	for _, r := range runs(nil, x, max(3, int(minS*fs))) {
		seg := dst[r[0]:r[1]]
		copy(seg, x[r[0]:r[1]])
		need := len(seg) + 2*min(pad, len(seg)-1)
		if cap(work) < need {
			work = make([]float64, need)
		}
		filtfilt(seg, pad, work[:need], sections...)
	}
	return dst
}
