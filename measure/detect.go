package measure

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"tracelift/ecg"
)

// DetectBeats finds the QRS complexes of rec and labels each beat (N
// dominant, V premature ventricular, A premature supraventricular, Q
// unclassified). Only R (the QRS fiducial, s, on the record's time base)
// and Class are set; the other fiducials are NaN (Measure fills them).
//
// Detection follows Pan & Tompkins (1985) on a multi-lead detection signal:
// each lead present at a moment contributes its squared 5–15 Hz derivative,
// normalised by a running robust estimate of its own QRS energy, and the
// sum is divided by the number of leads present, so leads may come and go
// (3 × 4 pages) without changing the signal's scale. Long records are
// processed in chunks; memory grows with the chunk, not the record.
//
// It returns an error wrapping ecg.ErrNoECG when the record has no
// samples, ecg.ErrUnreadable when it is implausible (see Measure).
func DetectBeats(rec ecg.Record, opt *Options) ([]ecg.Beat, error) {
	o := opt.withDefaults()
	f, err := newFrame(&rec, o.Leads)
	if err != nil {
		return nil, fmt.Errorf("measure: detect beats: %w", err)
	}
	idx := detect(f, &o)
	cls := classify(f, idx, &o)
	out := make([]ecg.Beat, len(idx))
	for i, r := range idx {
		out[i] = ecg.NewBeat(cls[i], f.time(r))
	}
	return out, nil
}

// detect returns the sample indices of the QRS fiducials in f.
func detect(f *frame, o *Options) []int {
	// max(…, 1): the loop below must advance whatever the rate (newFrame
	// refuses implausible rates; this keeps detect safe on its own).
	chunk := max(int(o.ChunkS*f.fs), int(20*f.fs), 1)
	over := int(4 * f.fs)
	var beats []int
	for a := 0; a < f.n; a += chunk {
		b := min(f.n, a+chunk)
		lo, hi := max(0, a-over), min(f.n, b+over)
		if f.n-b < over { // absorb a short tail
			hi = f.n
		}
		for _, r := range detectChunk(f.sub(lo, hi), o) {
			if r+lo >= a && (r+lo < b || hi == f.n) {
				beats = append(beats, r+lo)
			}
		}
		if hi == f.n {
			break
		}
	}
	// Merge duplicates across chunk seams.
	refr := int(o.RefractoryS * f.fs)
	out := beats[:0]
	for _, r := range beats {
		if len(out) > 0 && r-out[len(out)-1] < refr {
			continue
		}
		out = append(out, r)
	}
	return out
}

// detectionSignal returns the combined normalised slope energy of f and
// the number of leads present at each sample.
func detectionSignal(f *frame) (comb []float64, count []int) {
	n := f.n
	comb = make([]float64, n)
	count = make([]int, n)
	bp := make([]float64, n)
	e := make([]float64, n)
	hp, lp := butterHigh(5, f.fs), butterLow(15, f.fs)
	blk := max(1, int(2*f.fs))
	nb := (n + blk - 1) / blk
	bmax := make([]float64, nb)
	scale := make([]float64, nb)
	tmp := make([]float64, 0, 5)
	for _, x := range f.x {
		bandFilter(bp, x, f.fs, 0.5, 0.3, hp, lp)
		// Five-point derivative (Pan & Tompkins 1985), squared.
		for i := range e {
			if i < 2 || i >= n-2 {
				e[i] = math.NaN()
				continue
			}
			d := 2*bp[i+2] + bp[i+1] - bp[i-1] - 2*bp[i-2]
			e[i] = d * d
		}
		// Robust per-block QRS energy: block maxima, then the upper median
		// of up to five neighbouring valid blocks.
		for b := range bmax {
			m, valid := 0.0, 0
			for i := b * blk; i < min(n, (b+1)*blk); i++ {
				if v := e[i]; !math.IsNaN(v) {
					valid++
					m = math.Max(m, v)
				}
			}
			if valid < blk/4 || m == 0 {
				m = math.NaN()
			}
			bmax[b] = m
		}
		for b := range scale {
			tmp = tmp[:0]
			for c := max(0, b-2); c <= min(nb-1, b+2); c++ {
				if !math.IsNaN(bmax[c]) {
					tmp = append(tmp, bmax[c])
				}
			}
			if len(tmp) == 0 {
				scale[b] = math.NaN()
				continue
			}
			sort.Float64s(tmp)
			scale[b] = tmp[len(tmp)/2]
		}
		for i, v := range e {
			s := scale[i/blk]
			if math.IsNaN(v) || math.IsNaN(s) {
				continue
			}
			comb[i] += math.Min(v/s, 4)
			count[i]++
		}
	}
	for i := range comb {
		if count[i] > 0 {
			comb[i] /= float64(count[i])
		}
	}
	return comb, count
}

// detectChunk runs the Pan–Tompkins decision rules on one stretch of f and
// returns fiducial indices relative to it.
func detectChunk(f *frame, o *Options) []int {
	fs := f.fs
	comb, _ := detectionSignal(f)
	n := len(comb)
	// Centred moving-window integration, 150 ms.
	w := max(1, int(0.150*fs)) | 1
	h := w / 2
	mwi := make([]float64, n)
	acc := 0.0
	for i := 0; i < n+h; i++ {
		if i < n {
			acc += comb[i]
		}
		if i-w >= 0 {
			acc -= comb[i-w]
		}
		if j := i - h; j >= 0 && j < n {
			mwi[j] = acc / float64(w)
		}
	}
	// Candidate peaks: local maxima of the integrated signal.
	type peak struct {
		i int
		v float64
	}
	var cand []peak
	for i := 1; i < n-1; i++ {
		if mwi[i] > mwi[i-1] && mwi[i] >= mwi[i+1] {
			cand = append(cand, peak{i, mwi[i]})
		}
	}
	if len(cand) == 0 {
		return nil
	}
	// Initial signal level: median of 2 s block maxima; noise level: a tenth.
	blk := max(1, int(2*fs))
	var bm []float64
	for a := 0; a < n; a += blk {
		m := 0.0
		for i := a; i < min(n, a+blk); i++ {
			m = math.Max(m, mwi[i])
		}
		if m > 0 {
			bm = append(bm, m)
		}
	}
	if len(bm) == 0 {
		return nil
	}
	sort.Float64s(bm)
	spk := bm[len(bm)/2]
	npk := 0.1 * spk
	refr := int(o.RefractoryS * fs)
	twin := int(0.360 * fs)
	half := int(0.075 * fs)
	slope := func(i int) float64 {
		m := 0.0
		for j := max(0, i-half); j <= min(n-1, i+half); j++ {
			m = math.Max(m, comb[j])
		}
		return math.Sqrt(m)
	}
	var qrs []peak
	var rrs []int
	rrAvg := func() float64 {
		if len(rrs) == 0 {
			return 0
		}
		k := rrs[max(0, len(rrs)-8):]
		t := slices.Clone(k)
		slices.Sort(t)
		return float64(t[len(t)/2])
	}
	accept := func(p peak, weight float64) {
		if len(qrs) > 0 {
			rrs = append(rrs, p.i-qrs[len(qrs)-1].i)
		}
		qrs = append(qrs, p)
		spk = weight*p.v + (1-weight)*spk
	}
	ci := 0
	for ci < len(cand) {
		p := cand[ci]
		t1 := npk + 0.25*(spk-npk)
		// Search back when no beat was found for 166 % of the RR average.
		if ra := rrAvg(); ra > 0 && len(qrs) > 0 && float64(p.i-qrs[len(qrs)-1].i) > 1.66*ra {
			last := qrs[len(qrs)-1]
			best := peak{-1, 0}
			for _, q := range cand {
				if q.i <= last.i+refr || q.i >= p.i-refr/2 {
					continue
				}
				if q.v > 0.5*t1 && q.v > best.v {
					if q.i-last.i < twin && slope(q.i) < 0.5*slope(last.i) {
						continue
					}
					best = q
				}
			}
			if best.i >= 0 {
				accept(best, 0.25)
				continue // re-examine p against the new last beat
			}
		}
		ci++
		if p.v <= t1 {
			npk = 0.125*p.v + 0.875*npk
			continue
		}
		if len(qrs) > 0 {
			last := qrs[len(qrs)-1]
			d := p.i - last.i
			if d < refr {
				if p.v > last.v {
					qrs = qrs[:len(qrs)-1]
					if len(rrs) > 0 && len(qrs) > 0 {
						rrs = rrs[:len(rrs)-1]
					}
					accept(p, 0.125)
				}
				continue
			}
			if d < twin && slope(p.i) < 0.5*slope(last.i) {
				npk = 0.125*p.v + 0.875*npk // a T wave
				continue
			}
		}
		accept(p, 0.125)
	}
	// Fiducial: the maximum of the lightly smoothed detection signal within
	// ±100 ms of the integrated peak.
	sw := max(1, int(0.02*fs))
	out := make([]int, 0, len(qrs))
	for _, q := range qrs {
		best, bi := -1.0, q.i
		for j := max(sw, q.i-int(0.1*fs)); j <= min(n-1-sw, q.i+int(0.1*fs)); j++ {
			s := 0.0
			for k := j - sw; k <= j+sw; k++ {
				s += comb[k]
			}
			if s > best {
				best, bi = s, j
			}
		}
		out = append(out, bi)
	}
	return out
}
