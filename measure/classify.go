package measure

import (
	"math"
	"slices"

	"tracelift/ecg"
)

// classify labels beats by timing and QRS morphology: a beat is premature
// when its RR is under 0.85 × the local median RR and the next RR is at
// least 10 % longer (a pause follows); its morphology differs when its
// mean correlation with the dominant (median) QRS template of the leads
// present is under 0.8. Premature and different → V; premature and alike →
// A; different but not premature → Q; otherwise N (common practice; the
// 0.85 prematurity ratio is a conventional choice, not a standard).
func classify(f *frame, idx []int, o *Options) []ecg.BeatClass {
	out := make([]ecg.BeatClass, len(idx))
	for i := range out {
		out[i] = ecg.BeatNormal
	}
	if len(idx) < 3 {
		return out
	}
	h := int(0.08 * f.fs)
	tmpl := templates(f, idx, h, h, o.MaxTemplateBeats)
	corr := make([]float64, len(idx))
	for i, r := range idx {
		corr[i] = beatCorrelation(f, tmpl, r, h)
	}
	rr := func(i int) float64 { // RR ending at beat i, samples
		if i <= 0 || i >= len(idx) {
			return math.NaN()
		}
		return float64(idx[i] - idx[i-1])
	}
	loc := make([]float64, 0, 8)
	for i := range idx {
		loc = loc[:0]
		for j := max(1, i-4); j <= min(len(idx)-1, i+4); j++ {
			if j != i && j != i+1 {
				loc = append(loc, rr(j))
			}
		}
		if len(loc) == 0 {
			continue
		}
		slices.Sort(loc)
		m := loc[len(loc)/2]
		prev, next := rr(i), rr(i+1)
		premature := prev < 0.85*m && (math.IsNaN(next) || next > 1.1*prev)
		different := corr[i] < 0.8
		switch {
		case premature && different:
			out[i] = ecg.BeatVentricular
		case premature:
			out[i] = ecg.BeatAtrial
		case different:
			out[i] = ecg.BeatUnknown
		}
	}
	return out
}

// templates returns, per lead of f, the sample-wise median of the windows
// [r−pre, r+post] over (at most maxBeats evenly spread) beats idx; NaN
// where no beat covers a sample.
func templates(f *frame, idx []int, pre, post, maxBeats int) [][]float64 {
	step := 1.0
	if len(idx) > maxBeats {
		step = float64(len(idx)) / float64(maxBeats)
	}
	var use []int
	for k := 0.0; int(k) < len(idx); k += step {
		use = append(use, idx[int(k)])
	}
	m := pre + post + 1
	out := make([][]float64, len(f.x))
	col := make([]float64, 0, len(use))
	for k, x := range f.x {
		t := make([]float64, m)
		for j := 0; j < m; j++ {
			col = col[:0]
			for _, r := range use {
				i := r - pre + j
				if i >= 0 && i < f.n && !math.IsNaN(x[i]) {
					col = append(col, x[i])
				}
			}
			t[j] = median(col)
		}
		out[k] = t
	}
	return out
}

// beatCorrelation is the mean Pearson correlation, over the leads whose
// window [r−h, r+h] is fully recorded, between the beat and the lead's
// template; NaN when no lead qualifies.
func beatCorrelation(f *frame, tmpl [][]float64, r, h int) float64 {
	if r-h < 0 || r+h >= f.n {
		return math.NaN()
	}
	sum, cnt := 0.0, 0
	for k, x := range f.x {
		c := pearson(x[r-h:r+h+1], tmpl[k])
		if !math.IsNaN(c) {
			sum += c
			cnt++
		}
	}
	if cnt == 0 {
		return math.NaN()
	}
	return sum / float64(cnt)
}

// pearson returns the correlation coefficient of a and b (equal length),
// NaN if either holds NaN or is constant.
func pearson(a, b []float64) float64 {
	n := float64(len(a))
	var sa, sb float64
	for i := range a {
		sa += a[i]
		sb += b[i]
	}
	ma, mb := sa/n, sb/n
	var sab, saa, sbb float64
	for i := range a {
		da, db := a[i]-ma, b[i]-mb
		sab += da * db
		saa += da * da
		sbb += db * db
	}
	if saa == 0 || sbb == 0 || math.IsNaN(sab) {
		return math.NaN()
	}
	return sab / math.Sqrt(saa*sbb)
}

// median returns the median of v (reordering it), NaN for an empty slice.
func median(v []float64) float64 {
	n := len(v)
	if n == 0 {
		return math.NaN()
	}
	slices.Sort(v)
	if n%2 == 1 {
		return v[n/2]
	}
	return (v[n/2-1] + v[n/2]) / 2
}
