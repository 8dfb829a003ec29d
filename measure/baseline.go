package measure

import (
	"math"
	"slices"
)

// medianBaseline estimates baseline wander of x (fs Hz) by two median
// filters in cascade, 200 ms then 600 ms wide: the first removes QRS
// complexes and P waves, the second T waves, leaving the baseline (de
// Chazal, O'Dwyer & Reilly 2004, IEEE TBME 51:1196). Median filters do not
// ring, so unlike a high-pass filter they leave no undershoot around large
// QRS complexes to distort ST and T levels. To keep the cost linear in
// long records the filters run on block means at about 50 Hz and the
// result is interpolated back linearly. NaN samples are skipped; dst
// receives the baseline (NaN where x is NaN). A nil dst is allocated.
func medianBaseline(dst, x []float64, fs float64) []float64 {
	n := len(x)
	if dst == nil {
		dst = make([]float64, n)
	}
	dec := max(1, int(math.Round(fs/50)))
	m := (n + dec - 1) / dec
	lo := make([]float64, m)
	for b := range lo {
		s, c := 0.0, 0
		for i := b * dec; i < min(n, (b+1)*dec); i++ {
			if !math.IsNaN(x[i]) {
				s += x[i]
				c++
			}
		}
		lo[b] = math.NaN()
		if c > 0 {
			lo[b] = s / float64(c)
		}
	}
	rate := fs / float64(dec)
	tmp := make([]float64, m)
	runningMedian(tmp, lo, max(1, int(0.2*rate)/2))
	runningMedian(lo, tmp, max(1, int(0.6*rate)/2))
	for i := range dst {
		if math.IsNaN(x[i]) {
			dst[i] = math.NaN()
			continue
		}
		// Block b's mean sits at the block centre.
		p := (float64(i)+0.5)/float64(dec) - 0.5
		b0 := int(math.Floor(p))
		f := p - float64(b0)
		v0, v1 := at(lo, b0), at(lo, b0+1)
		switch {
		case math.IsNaN(v0) && math.IsNaN(v1):
			dst[i] = x[i]
		case math.IsNaN(v0):
			dst[i] = v1
		case math.IsNaN(v1):
			dst[i] = v0
		default:
			dst[i] = v0*(1-f) + v1*f
		}
	}
	return dst
}

// runningMedian writes to dst the median of src over [i−h, i+h] (NaN
// samples skipped, NaN where src is NaN) using a sorted sliding window.
func runningMedian(dst, src []float64, h int) {
	win := make([]float64, 0, 2*h+1)
	add := func(v float64) {
		if math.IsNaN(v) {
			return
		}
		k, _ := slices.BinarySearch(win, v)
		win = slices.Insert(win, k, v)
	}
	del := func(v float64) {
		if math.IsNaN(v) {
			return
		}
		k, _ := slices.BinarySearch(win, v)
		win = slices.Delete(win, k, k+1)
	}
	n := len(src)
	for i := 0; i < min(h, n); i++ {
		add(src[i])
	}
	for i := range dst {
		if j := i + h; j < n {
			add(src[j])
		}
		if j := i - h - 1; j >= 0 {
			del(src[j])
		}
		if math.IsNaN(src[i]) || len(win) == 0 {
			dst[i] = math.NaN()
			continue
		}
		k := len(win)
		if k%2 == 1 {
			dst[i] = win[k/2]
		} else {
			dst[i] = (win[k/2-1] + win[k/2]) / 2
		}
	}
}
