package trace

import (
	"fmt"
	"image"
	"math"
	"sort"

	"tracelift/ecg"
	"tracelift/grid"
)

// The check for a limb lead read against the heart vector: the six limb
// leads printed at the same time are projections of one frontal vector
// (Einthoven, Goldberger; standards.md §1.3), so any two of them predict
// the other four. On pages whose QRS strokes cross several rows (20
// mm/mV, 12 × 1) a path can run on another row's stroke at every beat:
// the beat-to-beat test of withholdShared keeps it, and when two leads
// broke together so that they still satisfy an identity between them
// (aVR + aVL + aVF ≈ 0 with aVR and aVL both upside down: overlap 12x1
// seed 2, where aVL then matched V2's truth better than its own)
// guideLimb's consensus, which judges each lead by the pair fitting the
// rest best, is split. Here the vector is fitted per sample by
// consensus over pairs, as random sample consensus does (Fischler and
// Bolles 1981) with every minimal sample tried: every pair of the leads
// present proposes the vector through their values, its supporters are
// the leads within inTolMM of trace of its prediction, and the proposals
// with the most supporters win if those are more than half the leads
// present (three at least). A lead that supports none of the winning
// proposals, and that every one of them puts on the other side of 0 mV,
// more than offMM of trace from its reading (read minPred from 0 mV at
// least), dissents. Only the opposite direction counts: where strokes
// cross rows the agreeing leads often lost part of their apexes, so a
// lead reading more than they predict, the same way, may well be right.
// A copy's dissent stretches are acted on only when they come back at
// half the beats or more (the beats any lead dissents at, or the copy's
// own excursions if more): a path on another row's stroke takes it at every
// beat, while leads that fit a wrong vector by chance (leads near 0 mV
// support many) do so at a beat or two. Withholding every dissent
// stretch instead cost overlap 12x1 seed 3 lead II 2.9 dB (withheld at
// one beat where III, aVR and aVF near 0 mV outvoted I and II);
// agreement within 4 mm rather than 6 left overlap 12x1 seed 2 aVL
// swapped (I, II and III read their apexes 0.2–0.3 mV apart, so they
// tied with aVR, aVL and aVF); a plurality of three of six leads, or
// counting only the beats some lead dissents at, cost overlap 12x1 seed
// 4 lead I 4.7 dB (aVL and aVF upside down agreed with III at most
// beats, and at three beats with one lead missing).
// A stretch acted on is re-read at the value the winning vector
// predicts where that value lies on ink in the lead's own panel (within
// 0.35 mm, guideLimb's test) at 85 % of its samples, and withheld (NaN)
// otherwise, with a warning either way: the agreeing leads' apexes are
// often clipped, but a prediction on the lead's own ink, the right way,
// is closer than nothing (overlap 12x1 seed 2 aVL 0.5 → 1.7 dB, 6x2
// seed 1 aVL 2.4 → 6.0 dB, seeds 1–12 seven leads up, none down).

// dissentParams tunes withholdDissent.
type dissentParams struct {
	inTolMM   float64 // a lead supports a proposed vector within this, mm of trace
	offMM     float64 // a reading departing by more than this, the opposite way, dissents, mm of trace
	minPred   float64 // every winning prediction lies at least this far from 0 mV, mm of trace
	wideMM    float64 // a dissent stretch is widened while the reading departs by more than this, mm
	gapS      float64 // dissenting samples closer than this join one stretch, s
	padS      float64 // stretches widened by this on each side, s
	minS      float64 // shorter stretches (before widening) are left alone, s
	beatS     float64 // dissent stretches of any lead closer than this are one beat, s
	minBeats  float64 // a copy's stretches are withheld when they come at this share of the beats
	minRepeat int     // and at this many beats at least
}

// defaultDissent: support within 6 mm of trace (0.3 mV at 20 mm/mV); off
// by 10 mm the opposite way (a stroke of another row, far beyond a slip
// along a steep stroke) of a prediction 3 mm from 0 mV at least; at
// least 8 ms (four samples at 500 Hz, a third of a QRS stroke); beats
// 250 ms apart at least (common practice puts the QRS within 120 ms,
// from memory).
var defaultDissent = dissentParams{inTolMM: 6, offMM: 10, minPred: 3, wideMM: 4, gapS: 0.010, padS: 0.004, minS: 0.008, beatS: 0.25, minBeats: 0.5, minRepeat: 2}

// withholdDissent re-reads, or sets to NaN, the stretches of limb-lead
// samples (vals[k] panel k's samples on the record grid, mV upright, fs
// Hz; xStart[k] the x of its time T0, px; ink the page's ink map, nil to
// withhold only) that point the opposite way from what the limb leads
// printed at the same time agree on, at half the beats or more (see
// above). Samples that differ from keep[k] (when keep is not nil:
// re-read by the limb check) are left alone. It returns one warning per
// lead re-read and one per lead withheld from.
func withholdDissent(ink *image.Gray, cal grid.Calibration, fs float64, panels []*Panel, vals, keep [][]float64, xStart []float64, p dissentParams) []string {
	const nl = 6
	if len(vals) == 0 || fs <= 0 || cal.GainMMPerMV.V <= 0 {
		return nil
	}
	mmPerMV := cal.GainMMPerMV.V
	inTol, offTh, minPred, wide := p.inTolMM/mmPerMV, p.offMM/mmPerMV, p.minPred/mmPerMV, p.wideMM/mmPerMV
	ls, n := limbSetOf(panels, vals)
	if ls == nil {
		return nil
	}
	a, off, order, li := &ls.a, &ls.off, ls.order, ls.li
	coef := limbCoefficients()
	// fit[l][i]: lead l's value as the best-supported vector at sample i
	// predicts it; dis[i]: the leads dissenting there (a bit mask).
	var fit [nl][]float64
	for l := range nl {
		fit[l] = make([]float64, n)
	}
	dis := make([]uint8, n)
	var col, f [nl]float64
	for i := range n {
		for l := range nl {
			col[l] = a[l][i]
		}
		dis[i] = dissenters(&col, &coef, inTol, offTh, minPred, &f)
		for l := range nl {
			fit[l][i] = f[l]
		}
	}
	gap := int(math.Round(p.gapS * fs))
	minLen := int(math.Round(p.minS * fs))
	// The stretches each copy dissents over, widened while it departs
	// from the fit by more than wide.
	dissent := make([][]stretch, len(panels))
	mark := make([]bool, n)
	for _, k := range order {
		l := li[panels[k].Lead]
		v, pl := vals[k], fit[l]
		dep := func(i int) float64 { return v[i] - off[l] - pl[i] }
		for i := range n {
			x, q := v[i]-off[l], pl[i]
			mark[i] = dis[i]&(1<<l) != 0 && !math.IsNaN(x) && x*q < 0 && math.Abs(x) >= minPred && math.Abs(x-q) > offTh
		}
		for _, sp := range markedSpans(mark, gap, 0) {
			if sp.last-sp.first+1 < minLen {
				continue
			}
			s0, s1 := sp.first, sp.last
			for s0 > 0 && math.Abs(dep(s0-1)) > wide {
				s0--
			}
			for s1+1 < n && math.Abs(dep(s1+1)) > wide {
				s1++
			}
			dissent[k] = append(dissent[k], stretch{s0, s1})
		}
	}
	pxPerMV := mmPerMV * cal.PxPerMMY.V
	pxPerS := cal.SpeedMMPerS.V * cal.PxPerMMX.V
	inkTol := 0.35 * cal.PxPerMMY.V
	// reread writes the fit over [s0, s1] of copy k where it is known
	// throughout and lies on ink in the copy's panel at 85 % of the
	// samples; it reports whether it did.
	reread := func(k, s0, s1 int) bool {
		if ink == nil || xStart == nil {
			return false
		}
		pn := panels[k]
		l := li[pn.Lead]
		on, tot := 0, 0
		for i := s0; i <= s1; i++ {
			if math.IsNaN(vals[k][i]) || keep != nil && keep[k] != nil && keep[k][i] != vals[k][i] {
				continue
			}
			tot++
			if math.IsNaN(fit[l][i]) {
				return false
			}
			v := fit[l][i] + off[l]
			if pn.Negated {
				v = -v
			}
			if inkNear(ink, xStart[k]+(float64(i)/fs-pn.T0)*pxPerS, pn.ZeroY-v*pxPerMV, inkTol) {
				on++
			}
		}
		if tot == 0 || float64(on) < 0.85*float64(tot) {
			return false
		}
		for i := s0; i <= s1; i++ {
			if math.IsNaN(vals[k][i]) || keep != nil && keep[k] != nil && keep[k][i] != vals[k][i] {
				continue
			}
			vals[k][i] = fit[l][i] + off[l]
		}
		return true
	}
	return withholdRepeated(fs, panels, vals, keep, order, dissent, p, reread,
		"where it points against the heart vector the other limb leads agree on")
}

// limbSet holds the limb leads' samples on the record grid: per lead
// (ecg.LimbLeads order) the best copy's value (as Extract's record is
// built; NaN where none) less the lead's median, off, and the panel it
// came from (src, −1 where none).
type limbSet struct {
	a     [6][]float64
	src   [6][]int32
	off   [6]float64
	order []int // the limb-lead panels taking part, best quality first
	li    map[ecg.Lead]int
}

// limbSetOf is newLimbSet over the longest of vals, and that length.
func limbSetOf(panels []*Panel, vals [][]float64) (*limbSet, int) {
	n := 0
	for _, v := range vals {
		n = max(n, len(v))
	}
	return newLimbSet(panels, vals, n), n
}

// newLimbSet collects the limb-lead panels' samples (vals[k], n samples
// each); nil with fewer than three such panels.
func newLimbSet(panels []*Panel, vals [][]float64, n int) *limbSet {
	const nl = 6
	ls := &limbSet{li: map[ecg.Lead]int{}}
	for k, l := range ecg.LimbLeads {
		ls.li[l] = k
	}
	for k, pn := range panels {
		if _, ok := ls.li[pn.Lead]; ok && pn.Quality >= minQuality && len(vals[k]) == n {
			ls.order = append(ls.order, k)
		}
	}
	if len(ls.order) < 3 {
		return nil
	}
	sort.SliceStable(ls.order, func(a, b int) bool { return panels[ls.order[a]].Quality > panels[ls.order[b]].Quality })
	for l := range nl {
		ls.a[l], ls.src[l] = make([]float64, n), make([]int32, n)
		for i := range n {
			ls.a[l][i], ls.src[l][i] = math.NaN(), -1
		}
	}
	for _, k := range ls.order {
		l := ls.li[panels[k].Lead]
		for i, v := range vals[k] {
			if math.IsNaN(ls.a[l][i]) && !math.IsNaN(v) {
				ls.a[l][i], ls.src[l][i] = v, int32(k)
			}
		}
	}
	for l := range nl {
		ls.off[l] = nanMedian(ls.a[l])
		if math.IsNaN(ls.off[l]) {
			ls.off[l] = 0
		}
		for i := range ls.a[l] {
			ls.a[l][i] -= ls.off[l]
		}
	}
	return ls
}

// stretch is a span of samples, first and last included.
type stretch struct{ s0, s1 int }

// withholdRepeated withholds (NaN, except where vals[k] differs from
// keep[k], keep not nil) the stretches of each panel k of order in
// dissent[k], padded by p.padS, when they come at a share p.minBeats of
// the beats at least (and at p.minRepeat beats): the beats are the
// stretches of all panels joined within p.beatS, or the panel's own
// excursions if more. A stretch that reread (when not nil) re-reads
// itself is not withheld. It returns one warning per lead re-read and
// one per lead withheld from, ending in why.
func withholdRepeated(fs float64, panels []*Panel, vals, keep [][]float64, order []int, dissent [][]stretch, p dissentParams, reread func(k, s0, s1 int) bool, why string) []string {
	n := 0
	var all []stretch
	for _, k := range order {
		n = max(n, len(vals[k]))
		all = append(all, dissent[k]...)
	}
	if len(all) == 0 {
		return nil
	}
	pad := int(math.Round(p.padS * fs))
	// A path on another row's stroke takes it at every beat, while a
	// lead whose own complex happens to fit wrong readings of others
	// does so at a beat or two.
	sort.Slice(all, func(x, y int) bool { return all[x].s0 < all[y].s0 })
	sep := int(math.Round(p.beatS * fs))
	beatOf := make([]int, n)
	for i := range beatOf {
		beatOf[i] = -1
	}
	beats, end := 0, -sep-1
	for _, st := range all {
		if st.s0 > end+sep {
			beats++
		}
		end = max(end, st.s1)
		for i := st.s0; i <= st.s1; i++ {
			beatOf[i] = beats - 1
		}
	}
	withheld := map[ecg.Lead][2]int{} // samples withheld, first of them
	rr := map[ecg.Lead]int{}          // samples re-read
	for _, k := range order {
		if len(dissent[k]) == 0 {
			continue
		}
		seen, last := 0, -1
		for _, st := range dissent[k] {
			if b := beatOf[st.s0]; b != last {
				seen++
				last = b
			}
		}
		if seen < p.minRepeat || float64(seen) < p.minBeats*float64(max(beats, excursions(vals[k], sep))) {
			continue
		}
		var kept []float64
		if keep != nil {
			kept = keep[k]
		}
		for _, st := range dissent[k] {
			s0, s1 := max(0, st.s0-pad), min(len(vals[k])-1, st.s1+pad)
			if reread != nil && reread(k, s0, s1) {
				rr[panels[k].Lead] += s1 - s0 + 1
				continue
			}
			c, f := withholdSpan(vals[k], kept, s0, s1)
			w := withheld[panels[k].Lead]
			if c > 0 && (w[0] == 0 || f < w[1]) {
				w[1] = f
			}
			w[0] += c
			withheld[panels[k].Lead] = w
		}
	}
	var warns []string
	for _, l := range ecg.LimbLeads {
		if rr[l] > 0 {
			warns = append(warns, fmt.Sprintf("lead %v: %.0f ms re-read at the value the other limb leads predict, %s", l, 1000*float64(rr[l])/fs, why))
		}
		if w := withheld[l]; w[0] > 0 {
			warns = append(warns, fmt.Sprintf("lead %v: %.0f ms withheld (from %.2f s) %s", l, 1000*float64(w[0])/fs, float64(w[1])/fs, why))
		}
	}
	return warns
}

// dissenters fits the frontal vector to the limb-lead values v (NaN for
// absent; lead m = a·I + b·II with (a, b) = coef[m]): every pair of leads
// present proposes the vector through their values, and a proposal's
// supporters are the leads within tol of its prediction (the pair
// included). out receives every lead's value as the best proposal (the
// most supporters, then the smallest summed error of theirs) predicts it
// (NaN when fewer than four leads are present, or no proposal has three
// supporters and more than half the leads present). Among the proposals with the most supporters, a lead that
// supports none and that every one of them predicts at least minPred
// from 0 mV on the other side of 0 mV from its reading, more than off
// away from it, dissents; the result is the bit mask of the dissenters.
func dissenters(v *[6]float64, coef *[6][2]float64, tol, off, minPred float64, out *[6]float64) uint8 {
	const nl = 6
	var idx [nl]int
	m := 0
	for k := range nl {
		out[k] = math.NaN()
		if !math.IsNaN(v[k]) {
			idx[m] = k
			m++
		}
	}
	if m < 4 {
		return 0
	}
	type prop struct {
		h   [2]float64
		sup uint8 // bit mask of supporters
		n   int
		e   float64
	}
	var props [15]prop
	np, best := 0, -1
	for x := 0; x < m; x++ {
		for y := x + 1; y < m; y++ {
			p, q := idx[x], idx[y]
			c0, c1 := coef[p], coef[q]
			det := c0[0]*c1[1] - c0[1]*c1[0]
			hI, hII := (v[p]*c1[1]-v[q]*c0[1])/det, (c0[0]*v[q]-c1[0]*v[p])/det
			pr := prop{h: [2]float64{hI, hII}}
			for z := 0; z < m; z++ {
				k := idx[z]
				if d := math.Abs(coef[k][0]*hI + coef[k][1]*hII - v[k]); d <= tol {
					pr.sup |= 1 << k
					pr.n++
					pr.e += d
				}
			}
			props[np] = pr
			if best < 0 || pr.n > props[best].n || pr.n == props[best].n && pr.e < props[best].e {
				best = np
			}
			np++
		}
	}
	bestN := props[best].n
	if bestN < 3 || 2*bestN <= m {
		return 0
	}
	for k := range nl {
		out[k] = coef[k][0]*props[best].h[0] + coef[k][1]*props[best].h[1]
	}
	var mask uint8
	for z := 0; z < m; z++ {
		l := idx[z]
		ok := true
		for _, pr := range props[:np] {
			if pr.n != bestN {
				continue
			}
			pl := coef[l][0]*pr.h[0] + coef[l][1]*pr.h[1]
			if pr.sup&(1<<l) != 0 || pl*v[l] >= 0 || math.Abs(pl) < minPred || math.Abs(pl-v[l]) <= off {
				ok = false
				break
			}
		}
		if ok {
			mask |= 1 << l
		}
	}
	return mask
}

// excursions counts the beats of v: its distinct excursions from its
// median of at least 0.3 of the largest, sep samples apart at least
// (the count consistent makes).
func excursions(v []float64, sep int) int {
	med := nanMedian(v)
	big := 0.0
	for _, x := range v {
		if d := math.Abs(x - med); d > big {
			big = d
		}
	}
	if big == 0 {
		return 0
	}
	c, last := 0, -sep-1
	for i, x := range v {
		if math.Abs(x-med) >= 0.3*big {
			if i-last > sep {
				c++
			}
			last = i
		}
	}
	return c
}

// nanMedian returns the median of the non-NaN values of v (NaN if none).
func nanMedian(v []float64) float64 {
	var vs []float64
	for _, x := range v {
		if !math.IsNaN(x) {
			vs = append(vs, x)
		}
	}
	if len(vs) == 0 {
		return math.NaN()
	}
	sort.Float64s(vs)
	return vs[len(vs)/2]
}
