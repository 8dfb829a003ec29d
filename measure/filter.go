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

// filtfilt applies each section forward and then backward (zero phase;
// the magnitude response is squared, so a 2nd-order Butterworth section
// becomes 4th order with −6 dB at its cut-off), in place. x is treated as
// extended at both ends by pad samples of odd (point) reflection, which
// keeps level and slope continuous at the edges; the extensions live in
// small side buffers, so no copy of x is made.
func filtfilt(x []float64, pad int, sections ...biquad) {
	n := len(x)
	if n < 2 {
		return
	}
	pad = min(pad, n-1)
	left := make([]float64, pad)
	right := make([]float64, pad)
	for i := 0; i < pad; i++ {
		left[pad-1-i] = 2*x[0] - x[i+1]
		right[i] = 2*x[n-1] - x[n-2-i]
	}
	for _, q := range sections {
		q.runParts(false, left, x, right)
	}
	for i := len(sections) - 1; i >= 0; i-- {
		sections[i].runParts(true, left, x, right)
	}
}

// runParts filters the concatenation of parts in place (backward when
// reverse is true), starting from the steady state for its first sample.
func (q biquad) runParts(reverse bool, parts ...[]float64) {
	var first float64
	found := false
	if !reverse {
		for _, p := range parts {
			if len(p) > 0 {
				first, found = p[0], true
				break
			}
		}
	} else {
		for k := len(parts) - 1; k >= 0; k-- {
			if p := parts[k]; len(p) > 0 {
				first, found = p[len(p)-1], true
				break
			}
		}
	}
	if !found {
		return
	}
	y0 := q.dcGain() * first
	z2 := q.b2*first - q.a2*y0
	z1 := q.b1*first - q.a1*y0 + z2
	step := func(p []float64, i int) {
		v := p[i]
		y := q.b0*v + z1
		z1 = q.b1*v - q.a1*y + z2
		z2 = q.b2*v - q.a2*y
		p[i] = y
	}
	if !reverse {
		for _, p := range parts {
			for i := range p {
				step(p, i)
			}
		}
		return
	}
	for k := len(parts) - 1; k >= 0; k-- {
		p := parts[k]
		for i := len(p) - 1; i >= 0; i-- {
			step(p, i)
		}
	}
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
// writes the result to dst, which may be x itself; runs shorter than minS
// seconds and NaN samples are NaN in dst. A nil dst is allocated; dst is
// returned.
func bandFilter(dst, x []float64, fs, padS, minS float64, sections ...biquad) []float64 {
	if dst == nil {
		dst = make([]float64, len(x))
	}
	if len(dst) != len(x) {
		panic("measure: bandFilter: length mismatch")
	}
	pad := int(padS * fs)
	prev := 0
	for _, r := range runs(nil, x, max(3, int(minS*fs))) {
		for i := prev; i < r[0]; i++ {
			dst[i] = math.NaN()
		}
		seg := dst[r[0]:r[1]]
		copy(seg, x[r[0]:r[1]])
		filtfilt(seg, pad, sections...)
		prev = r[1]
	}
	for i := prev; i < len(dst); i++ {
		dst[i] = math.NaN()
	}
	return dst
}
