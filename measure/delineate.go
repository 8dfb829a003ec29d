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
	n                 int     // beats behind a median beat (0: a single beat)
}

func noWaves() waves {
	n := math.NaN()
	return waves{n, n, n, n, n, n, n, n, n, n, n, false, 0}
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
	qrsGap                 float64 // s, largest gap between consecutive QRS maxima
	gammaQ2                float64 // a weaker slope maximum (q wave) this close to the onset ends the P search before it
	qGap                   float64 // s, how close to the onset such a maximum must be
	envTheta               float64 // multi-lead envelope threshold (mean squared normalised slope)
	envGap                 float64 // s, gap tolerated inside the envelope
	envMargin              float64 // s, per-lead search margin beyond the envelope
	xiQOn, xiQOff          float64
	xiPOn, xiPOff          float64
	pMinRatio              float64 // P amplitude / QRS peak-to-peak to count as present
	tMinRatio              float64
	zhangW                 float64 // s, window of the Zhang et al. (2006) area indicator
	tWinRR                 float64 // T search ends at this fraction of RR after the fiducial (0.3–0.65 s)
	combFrac               float64 // global QRS onset = value at this rank fraction from the earliest (0: earliest); offset alike
	combFracP, combFracT   float64 // the same for P and T end
	qrsTol                 float64 // s, leads further than this from the median lead's QRS onset/offset are left out
	tKeep                  float64 // T end only from leads with relative T amplitude ≥ tKeep × the largest
	tEndMethod             float64 // 0: Zhang area indicator; 1: slope threshold xiTEnd
	xiTEnd                 float64
}

var defaultDelin = delinParams{
	sigmaQ: 0.004, sigmaP: 0.014, sigmaT: 0.024,
	gammaQ: 0.15, qrsGap: 0.045, gammaQ2: 0.05, qGap: 0.02,
	envTheta: 0.02, envGap: 0.02, envMargin: 0.015, qrsTol: 0.04,
	xiQOn: 0.07, xiQOff: 0.07,
	xiPOn: 0.4, xiPOff: 0.5, combFracP: 0.15,
	pMinRatio: 0.03, tMinRatio: 0.03,
	zhangW: 0.10, tWinRR: 0.62, tKeep: 0.3, tEndMethod: 1, xiTEnd: 0.15,
}

// delineator holds the smoothing-derivative kernels for one sample rate and
// scratch space; it is not safe for concurrent use.
type delineator struct {
	fs         float64
	p          delinParams
	kq, kp, kt []float64
	w          []float64
	env        []float64
	fl         []float64
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
func (d *delineator) delineate(x []float64, r int, rr float64, env [2]int, wantP, wantT bool) waves {
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
	// The QRS is the run of significant modulus maxima around the main
	// one: walk outwards from the main maximum and stop at a gap of more
	// than maxGap without a significant maximum (a P or T wave slope is
	// separated from the QRS by the PR or ST segment).
	imain := r
	for i := r - S(0.06); i <= r+S(0.06); i++ {
		if at(i) == mainMax {
			imain = i
			break
		}
	}
	maxGap := S(p.qrsGap)
	preLim, postLim := max(lo+1, r-S(0.15)), min(hi-2, r+S(0.18))
	if env[0] >= 0 {
		// A multi-lead QRS envelope bounds the search instead.
		maxGap = hi - lo
		preLim = max(preLim, env[0]-S(p.envMargin))
		postLim = min(postLim, env[1]+S(p.envMargin))
	}
	npre, npost := imain, imain
	for i := imain - 1; i > preLim && npre-i <= maxGap; i-- {
		if isMax(i) {
			npre = i
		}
	}
	for i := imain + 1; i < postLim && i-npost <= maxGap; i++ {
		if isMax(i) {
			npost = i
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
	// A small initial q wave may fall under the significance threshold.
	// It does not move the QRS onset (on 12 leads that cost accuracy
	// against the reference marks) but it must not be taken for the end
	// of a P wave: when a weaker slope maximum (≥ gammaQ2 of the main one)
	// sits within qGap before the onset, the P search ends before it.
	onP := on
	if p.gammaQ2 > 0 {
		weak := p.gammaQ2 * mainMax
		for i := on - 1; i >= max(lo+1, on-S(p.qGap)); i-- {
			if v := at(i); v > weak && v >= at(i-1) && v >= at(i+1) {
				onP = i
				for lim := p.xiQOn * at(i); onP > lo+1; onP-- {
					if at(onP) < lim || at(onP-1) > at(onP) {
						break
					}
				}
				break
			}
		}
	}
	out.qrsOn, out.qrsOff, out.ok = float64(on), float64(off), true
	// Isoelectric level for wave detection: mean of 16 ms ending 4 ms
	// before QRS onset. (Amplitudes use their own, see ampTemplates.)
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
		// P is sought before the earliest QRS activity in any lead (the
		// multi-lead envelope), so that a QRS onset found late in this
		// lead does not leave the start of the QRS in the P window.
		pc := onP
		if env[0] >= 0 {
			pc = min(onP, env[0])
		}
		d.findP(x, pc, rr, base, &out)
	}
	return out
}

// flat copies x[lo:hi] into scratch with the samples before cut (when
// before is true) or from cut on (otherwise) replaced by x[cut], so that a
// wide smoothing kernel looking for P or T waves does not see the QRS. It
// returns the copy and the offset to subtract from absolute indices.
func (d *delineator) flat(x []float64, lo, hi, cut int, before bool) []float64 {
	if cap(d.fl) < hi-lo {
		d.fl = make([]float64, hi-lo)
	}
	y := d.fl[:hi-lo]
	copy(y, x[lo:hi])
	c := x[cut]
	for i := lo; i < hi; i++ {
		if (before && i < cut) || (!before && i > cut) {
			y[i-lo] = c
		}
	}
	return y
}

// lobes finds a wave in w (slopes; index i ↔ absolute i+off) within
// [a, b]: the largest slope and its strongest opposite-sign partner
// within ±span samples, then any further alternating slopes of at least
// half the partner's size within span (biphasic waves). It returns the
// first and last slope positions (absolute), or ok=false. amp(i0, i1)
// scores the wave between two slope positions.
func lobes(w []float64, off, a, b, span int, amp func(i0, i1 int) float64) (first, last int, ok bool) {
	at := func(i int) float64 {
		if i-off < 0 || i-off >= len(w) {
			return 0
		}
		return w[i-off]
	}
	im, vm := -1, 0.0
	for i := a; i <= b; i++ {
		if v := at(i); math.Abs(v) > math.Abs(vm) {
			im, vm = i, v
		}
	}
	if im < 0 {
		return 0, 0, false
	}
	partner := func(from, to int, sign float64) (int, float64) {
		best, bv := -1, 0.0
		for i := max(a-span/2, from); i <= min(b+span/2, to); i++ {
			v := at(i)
			if v*sign > 0 && math.Abs(v) > math.Abs(bv) && math.Abs(v) >= math.Abs(at(i-1)) && math.Abs(v) >= math.Abs(at(i+1)) {
				best, bv = i, v
			}
		}
		return best, bv
	}
	// The strongest opposite-sign slope before and after; of the two
	// waves they would bound, keep the one that stands out more from the
	// isoelectric level (amp).
	bp, bv := partner(im-span, im-1, -vm)
	ap, av := partner(im+1, im+span, -vm)
	okB := bp >= 0 && math.Abs(bv) >= 0.2*math.Abs(vm)
	okA := ap >= 0 && math.Abs(av) >= 0.2*math.Abs(vm)
	switch {
	case okB && okA:
		if amp(bp, im) >= amp(im, ap) {
			return bp, im, true
		}
		return im, ap, true
	case okB:
		return bp, im, true
	case okA:
		return im, ap, true
	}
	return 0, 0, false
}

func (d *delineator) findT(x []float64, r, on, off int, rr, base float64, out *waves) {
	fs, p := d.fs, d.p
	S := func(s float64) int { return int(math.Round(s * fs)) }
	a := max(off+S(0.04), r+S(0.10))
	b := min(len(x)-1, r+S(math.Min(0.65, math.Max(0.30, p.tWinRR*rr))))
	if b-a < S(0.08) {
		return
	}
	m := len(d.kt) / 2
	lo, hi := max(0, off-m), min(len(x), b+m+1)
	y := d.flat(x, lo, hi, off, true)
	for _, v := range y {
		if math.IsNaN(v) {
			return
		}
	}
	w := d.slope(y, 0, len(y), d.kt)
	i0, i1, ok := lobes(w, lo, a, b-S(0.02), S(0.15), waveAmp(x, base))
	if !ok {
		return
	}
	// Peak: the extreme between the two slopes in the polarity of the
	// first (rising first → upright T).
	sg := math.Copysign(1, w[i0-lo])
	tp, pv := i0, math.Inf(-1)
	for i := i0; i <= i1; i++ {
		if v := sg * x[i]; v > pv {
			tp, pv = i, v
		}
	}
	amp := x[tp] - base
	if math.Abs(amp) < p.tMinRatio*out.qrsPP {
		return
	}
	// T end: maximum of the area indicator of Zhang et al. (2006),
	// A(k) = Σ_{j=k−W+1}^{k} (x[j] − x[k]), signed by the direction of
	// the wave's last slope, searched from that slope to the window end.
	sgn := -math.Copysign(1, w[i1-lo])
	ww := max(2, S(p.zhangW))
	bestA, te := math.Inf(-1), -1
	for k := i1 + 1; k <= b; k++ {
		if k-ww+1 < lo {
			continue
		}
		s := 0.0
		for j := k - ww + 1; j <= k; j++ {
			s += y[j-lo]
		}
		A := sgn * (s - float64(ww)*y[k-lo])
		if A > bestA {
			bestA, te = A, k
		}
	}
	if p.tEndMethod == 1 {
		// Slope threshold (Martínez et al. 2004): after the last slope,
		// where |W| falls under xiTEnd of it, or at a local minimum.
		lim := p.xiTEnd * math.Abs(w[i1-lo])
		te = i1
		for te < b && te+1-lo < len(w) {
			if math.Abs(w[te-lo]) < lim || math.Abs(w[te+1-lo]) > math.Abs(w[te-lo]) {
				break
			}
			te++
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
	b := on - S(0.008)
	if b-a < S(0.06) {
		return
	}
	m := len(d.kp) / 2
	lo, hi := max(0, a-S(0.03)-m), min(len(x), on+m+1)
	y := d.flat(x, lo, hi, on, false)
	for _, v := range y {
		if math.IsNaN(v) {
			return
		}
	}
	w := d.slope(y, 0, len(y), d.kp)
	at := func(i int) float64 {
		if i-lo < 0 || i-lo >= len(w) || math.IsNaN(w[i-lo]) {
			return 0
		}
		return w[i-lo]
	}
	i0, i1, ok := lobes(w, lo, a, b, S(0.10), waveAmp(x, base))
	if !ok {
		return
	}
	w0, w1 := math.Abs(at(i0)), math.Abs(at(i1))
	pOn := i0
	for lim := p.xiPOn * w0; pOn > lo+m+1; pOn-- {
		if math.Abs(at(pOn)) < lim || math.Abs(at(pOn-1)) > math.Abs(at(pOn)) {
			break
		}
	}
	pOff := i1
	for lim := p.xiPOff * w1; pOff < on; pOff++ {
		if math.Abs(at(pOff)) < lim || math.Abs(at(pOff+1)) > math.Abs(at(pOff)) {
			break
		}
	}
	if pOn <= lo+m+1 {
		return
	}
	dur := float64(pOff-pOn) / fs
	if dur < 0.04 || dur > 0.20 {
		return
	}
	sg := math.Copysign(1, at(i0))
	pk, pv := i0, math.Inf(-1)
	for i := i0; i <= i1; i++ {
		if v := sg * x[i]; v > pv {
			pk, pv = i, v
		}
	}
	edge := (x[pOn] + x[pOff]) / 2
	if math.Abs(x[pk]-edge) < p.pMinRatio*out.qrsPP {
		return
	}
	out.pOn, out.pPeak, out.pOff, out.pAmp = float64(pOn), float64(pk), float64(pOff), x[pk]-base
}

// qrsEnvelope returns the extent [lo, hi] (absolute sample indices) of the
// QRS of the beat at r seen over all the given leads at once: the mean
// over leads of the squared slope, each lead normalised by its largest
// QRS slope, stays above envTheta there, with gaps of at most envGap. The
// QRS of any single lead lies within it, and a large P or T wave in one
// lead cannot stretch it. It returns {−1, −1} when no lead covers r.
func (d *delineator) qrsEnvelope(xs [][]float64, r int) [2]int {
	fs, p := d.fs, d.p
	S := func(s float64) int { return int(math.Round(s * fs)) }
	none := [2]int{-1, -1}
	lo, hi := r-S(0.2), r+S(0.25)
	if cap(d.env) < hi-lo {
		d.env = make([]float64, hi-lo)
	}
	e := d.env[:hi-lo]
	clear(e)
	n := 0
	for _, x := range xs {
		if r >= len(x) || r < 0 || math.IsNaN(x[r]) {
			continue
		}
		a, b := max(0, lo), min(len(x), hi)
		w := d.slope(x, a, b, d.kq)
		m := 0.0
		for i := r - S(0.06); i <= r+S(0.06); i++ {
			if i >= a && i < b {
				if v := math.Abs(w[i-a]); v > m {
					m = v
				}
			}
		}
		if !(m > 0) {
			continue
		}
		for i := a; i < b; i++ {
			if v := w[i-a] / m; !math.IsNaN(v) {
				e[i-lo] += v * v
			}
		}
		n++
	}
	if n == 0 {
		return none
	}
	pk, pv := -1, 0.0
	for i := r - S(0.06); i <= r+S(0.06); i++ {
		if v := e[i-lo]; v > pv {
			pk, pv = i, v
		}
	}
	if pk < 0 {
		return none
	}
	th := p.envTheta * float64(n)
	gap := S(p.envGap)
	s0, s1 := pk, pk
	for i, g := pk, 0; i > lo && g <= gap; i-- {
		if e[i-lo] > th {
			s0, g = i, 0
		} else {
			g++
		}
	}
	for i, g := pk, 0; i < hi-1 && g <= gap; i++ {
		if e[i-lo] > th {
			s1, g = i, 0
		} else {
			g++
		}
	}
	return [2]int{s0, s1}
}

// waveAmp returns a scorer of the wave between two samples: the largest
// |x − base| there.
func waveAmp(x []float64, base float64) func(i0, i1 int) float64 {
	return func(i0, i1 int) float64 {
		m := 0.0
		for i := max(0, i0); i <= min(len(x)-1, i1); i++ {
			m = math.Max(m, math.Abs(x[i]-base))
		}
		return m
	}
}
