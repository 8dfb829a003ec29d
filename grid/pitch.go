package grid

import (
	"image"
	"math"
	"slices"
)

// measureAxis measures the grid period along x (vertical lines, column
// profile) or y (horizontal lines, row profile) of a grid-strength map:
// the autocorrelation of the detrended profile gives the line period; the
// 5:1 pattern of major to minor lines says whether it is 1 mm or 5 mm;
// then every line's sub-pixel centre is located and a robust linear fit of
// position against line index over the whole page gives the pitch
// (common practice; autocorrelation after standards.md §6.3).
func measureAxis(g *image.Gray, alongX bool) (axisFit, bool) {
	prof := profile(g, alongX)
	n := len(prof)
	if n < 64 {
		return axisFit{}, false
	}
	hp := detrend(prof, max(9, n/40))
	maxLag := min(n/3, 400)
	acf := autocorr(hp, maxLag)
	if acf == nil {
		return axisFit{}, false
	}
	p1, r1 := firstPeak(acf)
	if p1 == 0 || r1 < 0.15 {
		return axisFit{}, false
	}
	// Is p1 the 1 mm period? Then the 5 mm lines make every 5th lag
	// stronger than lags 2..4 (or p1 is already the major period).
	minor := p1
	resolved := true
	if 5*p1 < float64(maxLag)-2 {
		r5 := peakNear(acf, 5*p1)
		mid := (peakNear(acf, 2*p1) + peakNear(acf, 3*p1)) / 2
		if r5-mid < 0.04 {
			// No 5:1 pattern within p1's lags: p1 may be the 5 mm period
			// of a major-only or dotted grid, if a fifth of it would still
			// be a plausible minor pitch and the page size agrees.
			if pageMM := float64(n) / p1; pageMM < 90 && p1/5 >= 1.5 {
				minor = p1 / 5
				resolved = false
			}
		}
	} else if float64(n)/p1 < 90 && p1/5 >= 1.5 {
		minor = p1 / 5
		resolved = false
	}
	// An ECG page (or a strip) is at least about 70 mm along an axis: a
	// "1 mm" period that would make the image shorter is the 5 mm one.
	if resolved && float64(n)/p1 < 70 && p1/5 >= 1.5 {
		minor = p1 / 5
		resolved = false
	}
	period := minor
	if !resolved {
		period = p1
	}
	// Sub-pixel line centres near the lattice, fitted against their index.
	centres, weights := lineCentres(hp, period)
	pitch, phase, span, ok := fitLattice(centres, weights, period)
	// A grid fills the page: at least 40 minor or 24 major periods (a
	// cropped page still shows 40 mm); QRS complexes lining up across rows
	// at the heart rate span far fewer.
	if !ok || (resolved && span < 40) || (!resolved && span < 24) {
		return axisFit{}, false
	}
	fit := axisFit{minorR: resolved, period: period, lines: span}
	if resolved {
		fit.pitch = pitch
	} else {
		fit.pitch = pitch / 5
	}
	fit.major = majorLines(hp, fit.pitch, phase, pitch, resolved)
	// Plausibility: 1 mm between 1.5 px (60 dpi-ish) and 80 px (2000 dpi).
	if fit.pitch < 1.5 || fit.pitch > 80 {
		return axisFit{}, false
	}
	return fit, true
}

// profile sums a map along y (alongX: one value per column) or along x.
func profile(g *image.Gray, alongX bool) []float64 {
	w, h := g.Rect.Dx(), g.Rect.Dy()
	if alongX {
		// Integer column sums (exact, as the float sums of integers
		// below 2^53 are), converted once.
		acc := make([]uint64, w)
		columnSums(acc, g)
		p := make([]float64, w)
		for x, v := range acc {
			p[x] = float64(v)
		}
		return p
	}
	p := make([]float64, h)
	for y := 0; y < h; y++ {
		p[y] = float64(rowSum(g.Pix[y*g.Stride : y*g.Stride+w]))
	}
	return p
}

// detrend subtracts a centred moving average of width k.
func detrend(p []float64, k int) []float64 {
	n := len(p)
	cs := make([]float64, n+1)
	for i, v := range p {
		cs[i+1] = cs[i] + v
	}
	out := make([]float64, n)
	for i := range p {
		a, b := max(0, i-k/2), min(n, i+k/2+1)
		out[i] = p[i] - (cs[b]-cs[a])/float64(b-a)
	}
	return out
}

// autocorr returns the normalised autocorrelation for lags 0..maxLag.
func autocorr(p []float64, maxLag int) []float64 {
	n := len(p)
	var c0 float64
	for _, v := range p {
		c0 += v * v
	}
	if c0 == 0 {
		return nil
	}
	r := make([]float64, maxLag+1)
	for lag := 0; lag <= maxLag; lag++ {
		s := 0.0
		for i := 0; i+lag < n; i++ {
			s += p[i] * p[i+lag]
		}
		r[lag] = s / c0 * float64(n) / float64(n-lag)
	}
	return r
}

// firstPeak returns the first local maximum of acf (lag ≥ 2) that reaches
// half of the highest one, refined by a parabola, and its height.
func firstPeak(acf []float64) (float64, float64) {
	best := 0.0
	for i := 2; i < len(acf)-1; i++ {
		if acf[i] > acf[i-1] && acf[i] >= acf[i+1] {
			best = max(best, acf[i])
		}
	}
	if best <= 0 {
		return 0, 0
	}
	for i := 2; i < len(acf)-1; i++ {
		if acf[i] > acf[i-1] && acf[i] >= acf[i+1] && acf[i] >= 0.5*best {
			a, b, c := acf[i-1], acf[i], acf[i+1]
			d := a - 2*b + c
			off := 0.0
			if d < 0 {
				off = 0.5 * (a - c) / d
			}
			return float64(i) + off, b
		}
	}
	return 0, 0
}

// peakNear returns the highest acf value within ±2 lags (at least ±8 %)
// of lag.
func peakNear(acf []float64, lag float64) float64 {
	d := max(2, int(0.08*lag))
	c := int(math.Round(lag))
	m := math.Inf(-1)
	for i := max(0, c-d); i <= min(len(acf)-1, c+d); i++ {
		m = max(m, acf[i])
	}
	return m
}

// lineCentres finds the local maxima of the detrended profile that stand
// above zero, one per period at most, with their sub-pixel centroid.
func lineCentres(hp []float64, period float64) (pos, wt []float64) {
	n := len(hp)
	half := max(1, int(period/2-0.5))
	for i := 1; i < n-1; i++ {
		v := hp[i]
		if v <= 0 {
			continue
		}
		isMax := true
		for j := max(0, i-half); j <= min(n-1, i+half); j++ {
			if hp[j] > v || (hp[j] == v && j < i) {
				isMax = false
				break
			}
		}
		if !isMax {
			continue
		}
		// Centroid of the positive part within ±period/3.
		r := max(1, int(period/3))
		s, sw := 0.0, 0.0
		for j := max(0, i-r); j <= min(n-1, i+r); j++ {
			if hp[j] > 0 {
				s += float64(j) * hp[j]
				sw += hp[j]
			}
		}
		if sw > 0 {
			pos = append(pos, s/sw)
			wt = append(wt, v)
		}
	}
	return pos, wt
}

// fitLattice fits pos ≈ phase + pitch·k (k integer line index) robustly:
// indices come from the rough period; lines far from the fit are dropped
// and the fit repeated. It reports failure when too few lines fit or they
// cover too little of the axis.
func fitLattice(pos, wt []float64, period float64) (pitch, phase, span float64, ok bool) {
	if len(pos) < 8 {
		return 0, 0, 0, false
	}
	// Anchor on the strongest line.
	a := 0
	for i := range wt {
		if wt[i] > wt[a] {
			a = i
		}
	}
	pitch = period
	phase = pos[a]
	lo0, hi0 := slices.Min(pos), slices.Max(pos)
	// Grow the window around the anchor so that a slightly wrong period
	// cannot slip the line indices at the far ends of the page.
	radius := 12 * period
	for iter, final := 0, false; ; iter++ {
		var sk, sx, skk, skx, sn float64
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, x := range pos {
			if math.Abs(x-pos[a]) > radius {
				continue
			}
			k := math.Round((x - phase) / pitch)
			if math.Abs(x-(phase+k*pitch)) >= 0.25*pitch {
				continue
			}
			sk += k
			sx += x
			skk += k * k
			skx += k * x
			sn++
			lo, hi = min(lo, x), max(hi, x)
		}
		d := sn*skk - sk*sk
		if sn < 3 || d == 0 {
			return 0, 0, 0, false
		}
		pitch = (sn*skx - sk*sx) / d
		phase = (sx - pitch*sk) / sn
		if final {
			// Lines must cover a good part of the axis and most maxima
			// must sit on the lattice (a random texture's maxima do not).
			frac := sn / float64(len(pos))
			span = (hi - lo) / pitch
			if sn < 8 || frac < 0.6 || span < 16 {
				return 0, 0, 0, false
			}
			pitch, phase = refitLattice(pos, pitch, phase)
			break
		}
		if pos[a]-radius <= lo0 && pos[a]+radius >= hi0 {
			final = true
		}
		if iter%2 == 1 { // two fits per window size
			radius *= 1.6
		}
	}
	return pitch, phase, span, pitch > 0
}

// refitLattice refines a lattice fit on its inliers: lines whose centre
// sits more than four robust standard deviations (1.4826 × the median
// absolute residual; at least 0.2 px) off the fit are dropped and the fit
// repeated, three times at most. The first fit keeps every line within a
// quarter period, and on a page of 5 mm lines a partial line at the
// paper's edge, a fold or the trace's ink on a line sits a pixel or two
// off the lattice, at the far end of the axis where it weighs most: one
// such line tilted the fit by 0.04 % (1.3 px across an A4 page, 3.6 ms
// over a 10 s row). Residuals of a fit are common practice in robust
// regression (median absolute deviation, Hampel's rule).
func refitLattice(pos []float64, pitch, phase float64) (float64, float64) {
	ks := make([]float64, len(pos))
	res := make([]float64, 0, len(pos))
	keep := make([]bool, len(pos))
	for i, x := range pos {
		ks[i] = math.Round((x - phase) / pitch)
		keep[i] = math.Abs(x-(phase+ks[i]*pitch)) < 0.25*pitch
	}
	for range 3 {
		res = res[:0]
		for i, x := range pos {
			if keep[i] {
				res = append(res, math.Abs(x-(phase+ks[i]*pitch)))
			}
		}
		if len(res) < 8 {
			break
		}
		slices.Sort(res)
		lim := math.Max(4*1.4826*res[len(res)/2], 0.2)
		var sk, sx, skk, skx, sn float64
		dropped := false
		for i, x := range pos {
			if !keep[i] {
				continue
			}
			if math.Abs(x-(phase+ks[i]*pitch)) > lim {
				keep[i], dropped = false, true
				continue
			}
			k := ks[i]
			sk += k
			sx += x
			skk += k * k
			skx += k * x
			sn++
		}
		d := sn*skk - sk*sk
		if !dropped || sn < 8 || d == 0 {
			break
		}
		pitch = (sn*skx - sk*sx) / d
		phase = (sx - pitch*sk) / sn
	}
	return pitch, phase
}

// majorLines returns the positions of the 5 mm lines: among the five
// residues of the line index, the one whose lines are strongest.
func majorLines(hp []float64, pxPerMM, phase, latticePitch float64, resolved bool) []float64 {
	n := len(hp)
	at := func(x float64) float64 {
		i := int(math.Round(x))
		if i < 0 || i >= n {
			return 0
		}
		v := hp[i]
		if i > 0 {
			v = max(v, hp[i-1])
		}
		if i < n-1 {
			v = max(v, hp[i+1])
		}
		return v
	}
	kmin := int(math.Ceil(-phase / latticePitch))
	kmax := int(math.Floor((float64(n-1) - phase) / latticePitch))
	if !resolved {
		var out, str []float64
		for k := kmin; k <= kmax; k++ {
			x := phase + float64(k)*latticePitch
			out = append(out, x)
			str = append(str, at(x))
		}
		return printed(out, str)
	}
	var sums [5]float64
	for k := kmin; k <= kmax; k++ {
		sums[((k%5)+5)%5] += at(phase + float64(k)*latticePitch)
	}
	best := 0
	for i := range sums {
		if sums[i] > sums[best] {
			best = i
		}
	}
	var out, str []float64
	for k := kmin; k <= kmax; k++ {
		if ((k%5)+5)%5 == best {
			x := phase + float64(k)*latticePitch
			out = append(out, x)
			str = append(str, at(x))
		}
	}
	return printed(out, str)
}

// printed keeps the lattice positions where a line is actually printed
// (strength at least a quarter of the median), dropping the extrapolated
// ones in margins and headers.
func printed(pos, str []float64) []float64 {
	if len(pos) == 0 {
		return pos
	}
	s := slices.Clone(str)
	slices.Sort(s)
	med := s[len(s)/2]
	var out []float64
	for i, x := range pos {
		if str[i] >= 0.25*med {
			out = append(out, x)
		}
	}
	return out
}
