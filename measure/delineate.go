package measure

import "math"

// waves are one lead's fiducial points of one beat, in samples on the
// signal they were found in (fractional, NaN when absent), plus the
// isoelectric level used (mV).
type waves struct {
	pOn, pPeak, pOff  float64
	qrsOn, qrsOff     float64
	tPeak, tEnd       float64
	base              float64 // PR-segment level, mV
	qrsPP, tAmp, pAmp float64 // QRS peak-to-peak, T and P amplitude vs base, mV
	ok                bool    // QRS found
}

func noWaves() waves {
	n := math.NaN()
	return waves{n, n, n, n, n, n, n, n, n, n, n, false}
}

// Delineation parameters. The smoothing scales play the part of the dyadic
// scales of the quadratic-spline wavelet of Martínez et al. (2004): the
// wavelet is the derivative of a smoothing function, so its modulus maxima
// mark a wave's steepest slopes and its zero crossings the wave's peaks.
// We use the derivative of a Gaussian, whose scale is set in seconds and
// so does not depend on the sample rate. Thresholds are ratios of the
// modulus maximum they start from, after Martínez et al. (values tuned on
// the QT Database and LUDB, see measure_test.go).
type delinParams struct {
	sigmaQ, sigmaP, sigmaT float64 // s
	gammaQ                 float64 // significant QRS maxima: > gammaQ × the largest
	xiQOn, xiQOff          float64
	xiPOn, xiPOff          float64
	pMinRatio              float64 // P amplitude / QRS peak-to-peak to count as present
	tMinRatio              float64
	zhangW                 float64 // s, window of the Zhang et al. (2006) area indicator
}

var defaultDelin = delinParams{
	sigmaQ: 0.006, sigmaP: 0.014, sigmaT: 0.024,
	gammaQ: 0.15,
	xiQOn:  0.08, xiQOff: 0.12,
	xiPOn: 0.25, xiPOff: 0.35,
	pMinRatio: 0.03, tMinRatio: 0.03,
	zhangW: 0.10,
}

// delineator holds the smoothing-derivative kernels for one sample rate and
// scratch space; it is not safe for concurrent use.
type delineator struct {
	fs         float64
	p          delinParams
	kq, kp, kt []float64
	w          []float64
}

func newDelineator(fs float64, p delinParams) *delineator {
	return &delineator{fs: fs, p: p, kq: dogKernel(p.sigmaQ*fs, fs), kp: dogKernel(p.sigmaP*fs, fs), kt: dogKernel(p.sigmaT*fs, fs)}
}

// dogKernel returns the derivative-of-Gaussian kernel w[j], j = −m…m
// (m = ⌈3σ⌉), scaled so that Σ w[j]·x[i+j] is the slope of x in units per
// second for a straight line.
func dogKernel(sigma, fs float64) []float64 {
	sigma = math.Max(sigma, 0.7)
	m := int(math.Ceil(3 * sigma))
	k := make([]float64, 2*m+1)
	norm := 0.0
	for j := -m; j <= m; j++ {
		g := float64(j) * math.Exp(-float64(j*j)/(2*sigma*sigma))
		k[j+m] = g
		norm += float64(j) * g
	}
	for i := range k {
		k[i] *= fs / norm
	}
	return k
}

// slope fills w[i−lo] for i in [lo, hi) with the kernel response of x at
// i (NaN near the ends of x or where the support holds NaN) and returns it.
func (d *delineator) slope(x []float64, lo, hi int, k []float64) []float64 {
	if cap(d.w) < hi-lo {
		d.w = make([]float64, hi-lo)
	}
	w := d.w[:max(0, hi-lo)]
	m := len(k) / 2
	for i := lo; i < hi; i++ {
		if i-m < 0 || i+m >= len(x) {
			w[i-lo] = math.NaN()
			continue
		}
		s := 0.0
		for j, c := range k {
			s += c * x[i-m+j]
		}
		w[i-lo] = s
	}
	return w
}

// delineate finds the waves of the beat whose QRS fiducial is sample r of
// x (a conditioned signal, mV), given the beat's RR (s), and tells whether
// to look for P and T.
func (d *delineator) delineate(x []float64, r int, rr float64, wantP, wantT bool) waves {
	out := noWaves()
	fs, p := d.fs, d.p
	if r < 0 || r >= len(x) {
		return out
	}
	S := func(s float64) int { return int(math.Round(s * fs)) }
	// QRS.
	lo, hi := max(0, r-S(0.2)), min(len(x), r+S(0.25))
	wq := d.slope(x, lo, hi, d.kq)
	at := func(i int) float64 { // |W| at absolute index i
		if i < lo || i >= hi {
			return math.NaN()
		}
		return math.Abs(wq[i-lo])
	}
	mainMax := 0.0
	for i := r - S(0.06); i <= r+S(0.06); i++ {
		if v := at(i); v > mainMax {
			mainMax = v
		}
	}
	if !(mainMax > 0) {
		return out
	}
	thr := p.gammaQ * mainMax
	isMax := func(i int) bool {
		v := at(i)
		return v > thr && v >= at(i-1) && v >= at(i+1)
	}
	npre, npost := -1, -1
	for i := max(lo+1, r-S(0.12)); i <= r; i++ {
		if isMax(i) {
			npre = i
			break
		}
	}
	for i := min(hi-2, r+S(0.14)); i >= r; i-- {
		if isMax(i) {
			npost = i
			break
		}
	}
	if npre < 0 || npost < 0 {
		return out
	}
	on := npre
	for lim := p.xiQOn * at(npre); on > lo+1; on-- {
		if at(on) < lim || at(on-1) > at(on) {
			break
		}
	}
	off := npost
	for lim := p.xiQOff * at(npost); off < hi-2; off++ {
		if at(off) < lim || at(off+1) > at(off) {
			break
		}
	}
	out.qrsOn, out.qrsOff, out.ok = float64(on), float64(off), true
	// Isoelectric level: mean of 16 ms ending 4 ms before QRS onset.
	b0, b1 := max(0, on-S(0.020)), max(0, on-S(0.004))
	sum, cnt := 0.0, 0
	for i := b0; i <= b1; i++ {
		if !math.IsNaN(x[i]) {
			sum += x[i]
			cnt++
		}
	}
	if cnt == 0 {
		return out
	}
	base := sum / float64(cnt)
	out.base = base
	qmin, qmax := math.Inf(1), math.Inf(-1)
	for i := on; i <= off; i++ {
		qmin, qmax = math.Min(qmin, x[i]), math.Max(qmax, x[i])
	}
	out.qrsPP = qmax - qmin
	if wantT {
		d.findT(x, r, on, off, rr, base, &out)
	}
	if wantP {
		d.findP(x, on, rr, base, &out)
	}
	return out
}

func (d *delineator) findT(x []float64, r, on, off int, rr, base float64, out *waves) {
	fs, p := d.fs, d.p
	S := func(s float64) int { return int(math.Round(s * fs)) }
	a := max(off+S(0.04), r+S(0.10))
	b := min(len(x)-1, r+S(math.Min(0.65, math.Max(0.30, 0.75*rr))))
	if b-a < S(0.08) {
		return
	}
	// T peak: the largest deviation from the isoelectric level.
	tp, amp := -1, 0.0
	for i := a; i <= b-S(0.04); i++ {
		v := x[i] - base
		if math.IsNaN(v) {
			return
		}
		if math.Abs(v) > math.Abs(amp) {
			tp, amp = i, v
		}
	}
	if tp < 0 || math.Abs(amp) < p.tMinRatio*out.qrsPP {
		return
	}
	// A later lobe of opposite sign (biphasic T) ends the wave instead.
	last, sgn := tp, math.Copysign(1, amp)
	amp2 := 0.0
	for i := tp; i <= b-S(0.04); i++ {
		v := x[i] - base
		if v*sgn < 0 && math.Abs(v) > math.Abs(amp2) {
			last, amp2 = i, v
		}
	}
	if math.Abs(amp2) > 0.3*math.Abs(amp) {
		sgn = -sgn
	} else {
		last = tp
	}
	// T end: maximum of the area indicator of Zhang et al. (2006),
	// A(k) = Σ_{j=k−w+1}^{k} (x[j] − x[k]), signed by the wave's polarity.
	w := max(2, S(p.zhangW))
	bestA, te := math.Inf(-1), -1
	for k := last + 1; k <= b; k++ {
		if k-w+1 < 0 {
			continue
		}
		s := 0.0
		for j := k - w + 1; j <= k; j++ {
			s += x[j]
		}
		A := sgn * (s - float64(w)*x[k])
		if A > bestA {
			bestA, te = A, k
		}
	}
	if te < 0 {
		return
	}
	out.tPeak, out.tEnd, out.tAmp = float64(tp), float64(te), amp
}

func (d *delineator) findP(x []float64, on int, rr, base float64, out *waves) {
	fs, p := d.fs, d.p
	S := func(s float64) int { return int(math.Round(s * fs)) }
	a := max(0, on-S(math.Min(0.30, 0.55*rr)))
	b := on - S(0.012)
	if b-a < S(0.06) {
		return
	}
	m := len(d.kp) / 2
	lo, hi := max(m, a-S(0.03)), min(len(x)-m, b+S(0.01))
	if hi-lo < S(0.06) {
		return
	}
	wp := d.slope(x, lo, hi, d.kp)
	at := func(i int) float64 {
		if i < lo || i >= hi {
			return math.NaN()
		}
		return wp[i-lo]
	}
	im, vm := -1, 0.0
	for i := a; i <= b; i++ {
		v := at(i)
		if math.IsNaN(v) {
			return
		}
		if math.Abs(v) > math.Abs(vm) {
			im, vm = i, v
		}
	}
	if im < 0 {
		return
	}
	// Partner: the strongest opposite-sign slope within 100 ms either side.
	best, bv := -1, 0.0
	for i := max(lo, im-S(0.10)); i <= min(hi-1, im+S(0.10)); i++ {
		v := at(i)
		if v*vm < 0 && math.Abs(v) > math.Abs(bv) {
			best, bv = i, v
		}
	}
	if best < 0 || math.Abs(bv) < 0.2*math.Abs(vm) {
		return
	}
	i0, i1 := min(im, best), max(im, best)
	w0, w1 := math.Abs(at(i0)), math.Abs(at(i1))
	pOn := i0
	for lim := p.xiPOn * w0; pOn > lo+1; pOn-- {
		if math.Abs(at(pOn)) < lim || math.Abs(at(pOn-1)) > math.Abs(at(pOn)) {
			break
		}
	}
	pOff := i1
	for lim := p.xiPOff * w1; pOff < hi-2; pOff++ {
		if math.Abs(at(pOff)) < lim || math.Abs(at(pOff+1)) > math.Abs(at(pOff)) {
			break
		}
	}
	if pOn <= lo+1 || pOff >= on {
		return
	}
	dur := float64(pOff-pOn) / fs
	if dur < 0.04 || dur > 0.20 {
		return
	}
	// Peak: the extreme between the two slopes, in the polarity of the
	// first slope (rising first → positive P).
	sg := math.Copysign(1, at(i0))
	pk, pv := i0, math.Inf(-1)
	for i := i0; i <= i1; i++ {
		if v := sg * x[i]; v > pv {
			pk, pv = i, v
		}
	}
	edge := (x[pOn] + x[pOff]) / 2
	amp := x[pk] - edge
	if math.Abs(amp) < p.pMinRatio*out.qrsPP {
		return
	}
	out.pOn, out.pPeak, out.pOff, out.pAmp = float64(pOn), float64(pk), float64(pOff), x[pk]-base
}
