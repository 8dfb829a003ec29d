package trace

import (
	"fmt"
	"image"
	"math"
	"math/bits"
	"sort"

	"tracelift/ecg"
	"tracelift/grid"
)

// The six limb leads are projections of one frontal heart vector, so any
// two of them give the other four (Einthoven: III = II − I; Goldberger:
// aVR = −(I+II)/2, aVL = I − II/2, aVF = II − I/2; standards.md §1.3).
// Where rows print the limb leads at the same time (6 × 2, 12 × 1) a lead
// whose path took a neighbouring row's stroke, or lost its own apex in a
// stroke merged with a neighbour's, breaks the identities while the others
// agree with one another. guideLimb finds those stretches and re-reads
// them at the level the others predict, where the page has ink there.

// limbGuideParams tunes guideLimb.
type limbGuideParams struct {
	tolMM    float64 // disagreement within which leads agree, mm of trace
	offMM    float64 // disagreement from which a sample counts as off, mm of trace
	minTolMV float64 // smallest tolerance, mV
	windowS  float64 // half-width of the window over which a pair's fit is judged, s
	padS     float64 // stretches widened by this much on each side, s
	inkTolMM float64 // the predicted point must lie within this of ink, mm
	minInk   float64 // fraction of a stretch's predicted samples that must lie on ink
	minKnown float64 // fraction of a stretch's samples that must have a consensus
	fitTol   float64 // the consensus pair's mean error over the window (its largest per sample left out) must stay below fitTol·tol
	badRatio float64 // a lead is re-read only if its RMS departure from the others' consensus is badRatio times the second best lead's
	agreeRel float64 // a lead agrees with the consensus within max(2·tol, agreeRel·|prediction|)
	minConsS float64 // a lead takes part only with a consensus over this long, s
	minLeads int     // leads taking part needed for the fine check (offMM)
	// With fewer leads (at least grossLeads: the second column of a 3 × 4
	// page with the rhythm strip's II) only gross breaks are acted on: a
	// departure of more than grossMV sustained over grossS.
	grossLeads int
	grossMV    float64 // mV
	grossS     float64 // s
	maxGapS    float64 // off samples closer than this join one stretch, s
	minStretS  float64 // shorter stretches are left alone, s
}

// defaultLimbGuide: the tolerance is a millimetre of trace (a pen's width
// and a half at most; common practice for reading paper ECGs to ½ mm,
// from memory), the window ±10 ms (about a QRS stroke's duration). The
// consensus fit may reach 3 mm on average: at 2 mm, overlap 6x2 seed 3
// kept aVR and aVL at 2.4 and 0.5 dB (8.9 and 7.9 dB at 3 mm; the other
// conditions unchanged).
var defaultLimbGuide = limbGuideParams{tolMM: 1, offMM: 1, minTolMV: 0.05, windowS: 0.010, padS: 0.004, inkTolMM: 0.35, minInk: 0.85, minKnown: 0.7, agreeRel: 0.1, fitTol: 3, badRatio: 2, minConsS: 0.5, minLeads: 5, maxGapS: 0.010, minStretS: 0.006,
	grossLeads: 4, grossMV: 0.3, grossS: 0.02}

// guideLimb checks the limb-lead samples of simultaneous panels against
// the Einthoven/Goldberger identities and re-reads the leads that break
// them while the others agree. vals[k] are panel k's samples on the
// record grid (mV, upright; fs Hz), xStart[k] the x of its time T0, px.
// vals are changed in place; the returned warnings name the leads
// re-read.
//
// Per sample and lead, the consensus is the pair of other limb leads
// whose prediction fits the remaining ones best over ±windowS (each
// lead's median removed first). The leads whose RMS departure from it
// stands out (badRatio, at most three) are re-read: with the pairs drawn
// from the other leads only, where the pair's fit is good and at most one
// remaining lead disagrees, the stretches departing by more than offMM of
// trace (widened while they depart by more than tolMM) take the consensus
// value, provided the page has ink within inkTolMM of where that value
// would be printed in the lead's own panel for minInk of the stretch.
func guideLimb(ink *image.Gray, cal grid.Calibration, fs float64, panels []*Panel, vals [][]float64, xStart []float64, p limbGuideParams) []string {
	const nl = 6
	if len(vals) == 0 || fs <= 0 {
		return nil
	}
	n := len(vals[0])
	pxPerMV := cal.GainMMPerMV.V * cal.PxPerMMY.V
	pxPerS := cal.SpeedMMPerS.V * cal.PxPerMMX.V
	tol := math.Max(p.tolMM/cal.GainMMPerMV.V, p.minTolMV)
	// Per limb lead: the panel supplying each sample (best quality first,
	// as Extract's record is built) and the value.
	li := map[ecg.Lead]int{}
	for k, l := range ecg.LimbLeads {
		li[l] = k
	}
	order := make([]int, 0, len(panels))
	for k, pn := range panels {
		if _, ok := li[pn.Lead]; ok && pn.Quality >= minQuality && vals[k] != nil {
			order = append(order, k)
		}
	}
	sort.SliceStable(order, func(a, b int) bool { return panels[order[a]].Quality > panels[order[b]].Quality })
	var src [nl][]int32
	var a [nl][]float64
	for l := range nl {
		src[l] = make([]int32, n)
		a[l] = make([]float64, n)
		for i := range n {
			src[l][i], a[l][i] = -1, math.NaN()
		}
	}
	for _, k := range order {
		l := li[panels[k].Lead]
		for i, v := range vals[k] {
			if src[l][i] < 0 && !math.IsNaN(v) {
				src[l][i], a[l][i] = int32(k), v
			}
		}
	}
	// Each lead's offset (its 0 mV level may be read a little off): the
	// median over its samples.
	var off [nl]float64
	for l := range nl {
		var vs []float64
		for _, v := range a[l] {
			if !math.IsNaN(v) {
				vs = append(vs, v)
			}
		}
		if len(vs) == 0 {
			continue
		}
		sort.Float64s(vs)
		off[l] = vs[len(vs)/2]
		for i := range a[l] {
			a[l][i] -= off[l]
		}
	}
	coef := limbCoefficients()
	type pair struct{ p, q int }
	var pairs []pair
	for x := 0; x < nl; x++ {
		for y := x + 1; y < nl; y++ {
			pairs = append(pairs, pair{x, y})
		}
	}
	// cost[j][i]: how badly pair j's prediction fits the other leads at
	// sample i: the mean absolute error (each capped at 3·tol) with the
	// largest left out; +Inf where the pair or fewer than two other leads
	// are present.
	predict := func(j, i int) (hI, hII float64, ok bool) {
		pr := pairs[j]
		vp, vq := a[pr.p][i], a[pr.q][i]
		if math.IsNaN(vp) || math.IsNaN(vq) {
			return 0, 0, false
		}
		c0, c1 := coef[pr.p], coef[pr.q]
		det := c0[0]*c1[1] - c0[1]*c1[0]
		return (vp*c1[1] - vq*c0[1]) / det, (c0[0]*vq - c1[0]*vp) / det, true
	}
	cost := make([][]float64, len(pairs))
	for j := range pairs {
		cost[j] = make([]float64, n)
		for i := range n {
			hI, hII, ok := predict(j, i)
			if !ok {
				cost[j][i] = math.Inf(1)
				continue
			}
			s, m, top := 0.0, 0, 0.0
			for l := range nl {
				if l == pairs[j].p || l == pairs[j].q || math.IsNaN(a[l][i]) {
					continue
				}
				e := math.Min(math.Abs(coef[l][0]*hI+coef[l][1]*hII-a[l][i]), 3*tol)
				s += e
				top = math.Max(top, e)
				m++
			}
			// The largest error is left out: it may be the lead checked.
			if m < 2 {
				cost[j][i] = math.Inf(1)
			} else {
				cost[j][i] = (s - top) / float64(m-1)
			}
		}
	}
	w := max(1, int(math.Round(p.windowS*fs)))
	// Windowed cost by prefix sums (an Inf anywhere in the window makes it
	// Inf), per pair.
	wcost := make([][]float64, len(pairs))
	pre := make([]float64, n+1)
	infs := make([]int, n+1)
	for j := range pairs {
		for i := range n {
			v := cost[j][i]
			inf := 0
			if math.IsInf(v, 1) {
				v, inf = 0, 1
			}
			pre[i+1], infs[i+1] = pre[i]+v, infs[i]+inf
		}
		wcost[j] = make([]float64, n)
		for i := range n {
			lo, hi := max(0, i-w), min(n, i+w+1)
			wcost[j][i] = math.Inf(1)
			if infs[hi]-infs[lo] == 0 {
				wcost[j][i] = pre[hi] - pre[lo]
			}
		}
	}
	best := make([]int, n)
	pred := make([]float64, n)
	// consensus fills pred with lead l's value as the pair fitting the
	// other leads best predicts it, among the pairs without l or a lead of
	// excl (a bit mask over ecg.LimbLeads); NaN where the best pair's fit
	// over the window is poor, or more than one of the leads besides the
	// pair, l and excl disagrees with it (when strict).
	consensus := func(l int, excl uint, strict bool) {
		for i := range n {
			best[i], pred[i] = -1, math.NaN()
			if math.IsNaN(a[l][i]) {
				continue
			}
			bc := math.Inf(1)
			for j, pr := range pairs {
				if pr.p != l && pr.q != l && excl&(1<<pr.p) == 0 && excl&(1<<pr.q) == 0 && wcost[j][i] < bc {
					best[i], bc = j, wcost[j][i]
				}
			}
			j := best[i]
			if j < 0 {
				continue
			}
			hI, hII, _ := predict(j, i)
			if !strict {
				pred[i] = coef[l][0]*hI + coef[l][1]*hII
				continue
			}
			if bc > p.fitTol*tol*float64(min(n, i+w+1)-max(0, i-w)) {
				continue
			}
			bad, others := 0, 0
			for m := range nl {
				if m == l || m == pairs[j].p || m == pairs[j].q || excl&(1<<m) != 0 || math.IsNaN(a[m][i]) {
					continue
				}
				others++
				if pm := coef[m][0]*hI + coef[m][1]*hII; math.Abs(pm-a[m][i]) > math.Max(2*tol, p.agreeRel*math.Abs(pm)) {
					bad++
				}
			}
			if others < 1 || bad > max(0, others-2) {
				continue
			}
			pred[i] = coef[l][0]*hI + coef[l][1]*hII
		}
	}
	// The leads to re-read: those whose RMS departure from the consensus
	// of the others is at least badRatio times the second smallest lead's
	// (the leads that agree best set the scale: several may be off on pages
	// where complexes cross rows) and more than tol/2; three at most, so
	// that a pair and one more lead remain to agree on the consensus.
	// departure is lead l's RMS departure from the consensus of the
	// leads outside excl, and whether that consensus lasts minConsS.
	departure := func(l int, excl uint) (float64, bool) {
		consensus(l, excl, false)
		s, m := 0.0, 0
		for i := range n {
			if !math.IsNaN(pred[i]) {
				d := pred[i] - a[l][i]
				s += d * d
				m++
			}
		}
		if float64(m) < p.minConsS*fs {
			return 0, false
		}
		return math.Sqrt(s / float64(m)), true
	}
	var dev [nl]float64
	var valid []int // leads with a consensus over at least minConsS
	for l := range nl {
		if d, ok := departure(l, 0); ok {
			dev[l] = d
			valid = append(valid, l)
		}
	}
	// Five leads for the fine check: with four (the second column of a
	// 3 × 4 page and the rhythm strip's II) a lead printed in another row,
	// read a fraction of a pixel later or earlier on a steep stroke, was
	// taken for the broken one (clean 3x4+3 seed 2: II 29.6 → 28.2 dB).
	// With four, only gross breaks are re-read: a departure of more than
	// grossMV (0.3 mV: 3 mm at 10 mm/mV, far beyond a sub-pixel slip)
	// held for grossS (20 ms), i.e. a stroke taken from another row.
	// AVR, aVL, aVF and II carry two independent constraints, so one
	// broken lead among them is identified: each enters the constraints
	// with different coefficients (aVR + aVL + aVF = 0, aVF = 1.5·II + aVR).
	gross := len(valid) < p.minLeads
	if gross && (p.grossLeads <= 0 || len(valid) < p.grossLeads) {
		return nil
	}
	sort.SliceStable(valid, func(x, y int) bool { return dev[valid[x]] > dev[valid[y]] })
	ref := dev[valid[len(valid)-2]]
	var badMask uint
	for _, l := range valid[:len(valid)-3] {
		if dev[l] > p.badRatio*ref && dev[l] > tol/2 {
			badMask |= 1 << l
		}
	}
	// A lead the broken ones hid: with them left out of the consensus,
	// the next lead may stand out from the rest in turn (overlap 12x1
	// seed 2: I 14.8 → 15.4 dB; the rest of the 168-page corpus as
	// before).
	if nb := bits.OnesCount(badMask); nb > 0 && nb < 3 && len(valid)-nb > 3 {
		var rest []int
		var dev2 [nl]float64
		for _, l := range valid {
			if badMask&(1<<l) != 0 {
				continue
			}
			if d, ok := departure(l, badMask); ok {
				dev2[l] = d
				rest = append(rest, l)
			}
		}
		if len(rest) > 3 {
			sort.SliceStable(rest, func(x, y int) bool { return dev2[rest[x]] > dev2[rest[y]] })
			ref2 := dev2[rest[len(rest)-2]]
			if l := rest[0]; dev2[l] > p.badRatio*ref2 && dev2[l] > tol/2 {
				badMask |= 1 << l
			}
		}
	}
	offS := make([]bool, n)
	var warns []string
	offTh := p.offMM / cal.GainMMPerMV.V
	if gross {
		offTh = math.Max(offTh, p.grossMV)
	}
	grossLen := max(1, int(math.Round(p.grossS*fs)))
	// isGross reports whether lead l departs from pred by more than
	// grossMV over grossLen samples in a row within [s0, s1].
	isGross := func(l, s0, s1 int) bool {
		run := 0
		for k := s0; k <= s1; k++ {
			if !math.IsNaN(pred[k]) && !math.IsNaN(a[l][k]) && math.Abs(pred[k]-a[l][k]) > p.grossMV {
				if run++; run >= grossLen {
					return true
				}
			} else {
				run = 0
			}
		}
		return false
	}
	maxGap := int(math.Round(p.maxGapS * fs))
	pad := int(math.Round(p.padS * fs))
	minLen := int(math.Round(p.minStretS * fs))
	inkTol := p.inkTolMM * cal.PxPerMMY.V
	for l := range nl {
		if badMask&(1<<l) == 0 {
			continue
		}
		consensus(l, badMask, true)
		any := false
		for i := range n {
			offS[i] = !math.IsNaN(pred[i]) && math.Abs(pred[i]-a[l][i]) > offTh
			any = any || offS[i]
		}
		if !any {
			continue
		}
		re := 0
		for i := 0; i < n; {
			if !offS[i] {
				i++
				continue
			}
			e := i
			for k := i; k < n && k <= e+maxGap; k++ {
				if offS[k] {
					e = k
				}
			}
			// Widened while the lead still departs by more than tol, then
			// by pad.
			for i > 0 && !math.IsNaN(pred[i-1]) && math.Abs(pred[i-1]-a[l][i-1]) > tol {
				i--
			}
			for e+1 < n && !math.IsNaN(pred[e+1]) && math.Abs(pred[e+1]-a[l][e+1]) > tol {
				e++
			}
			s0, s1 := max(0, i-pad), min(n-1, e+pad)
			i = e + 1
			if s1-s0+1 < minLen {
				continue
			}
			if gross && !isGross(l, s0, s1) {
				continue
			}
			// The stretch is re-read only where the consensus is known
			// throughout and lies on ink in the lead's own panel.
			onInk, tot, known := 0, 0, 0
			for k := s0; k <= s1; k++ {
				if math.IsNaN(a[l][k]) {
					continue
				}
				tot++
				if math.IsNaN(pred[k]) {
					continue
				}
				known++
				pk := int(src[l][k])
				pn := panels[pk]
				v := pred[k] + off[l]
				if pn.Negated {
					v = -v
				}
				x := xStart[pk] + (float64(k)/fs-pn.T0)*pxPerS
				y := pn.ZeroY - v*pxPerMV
				if inkNear(ink, x, y, inkTol) {
					onInk++
				}
			}
			if known == 0 || float64(known) < p.minKnown*float64(tot) || float64(onInk) < p.minInk*float64(known) {
				continue
			}
			for k := s0; k <= s1; k++ {
				if src[l][k] < 0 || math.IsNaN(pred[k]) {
					continue
				}
				vals[src[l][k]][k] = pred[k] + off[l]
				re++
			}
		}
		if re > 0 {
			warns = append(warns, fmt.Sprintf("lead %v: %.0f ms re-read where it broke the Einthoven/Goldberger identities the other limb leads agree on", ecg.LimbLeads[l], 1000*float64(re)/fs))
		}
	}
	return warns
}

// inkNear reports whether ink has an ink pixel within tol px of (x, y) in
// column round(x) or its two neighbours.
func inkNear(ink *image.Gray, x, y, tol float64) bool {
	cx := int(math.Round(x))
	y0, y1 := int(math.Floor(y-tol)), int(math.Ceil(y+tol))
	for c := cx - 1; c <= cx+1; c++ {
		if c < ink.Rect.Min.X || c >= ink.Rect.Max.X {
			continue
		}
		for yy := max(y0, ink.Rect.Min.Y); yy <= min(y1, ink.Rect.Max.Y-1); yy++ {
			if ink.Pix[(yy-ink.Rect.Min.Y)*ink.Stride+c-ink.Rect.Min.X] >= inkThreshold {
				return true
			}
		}
	}
	return false
}

// limbCoefficients returns (a, b) of each limb lead, in ecg.LimbLeads
// order, such that the lead is a·I + b·II (Einthoven and Goldberger).
func limbCoefficients() (coef [6][2]float64) {
	for k, l := range ecg.LimbLeads {
		coef[k][0], coef[k][1], _ = ecg.FrontalCoefficients(l)
	}
	return coef
}
