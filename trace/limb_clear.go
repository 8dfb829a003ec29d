package trace

import (
	"fmt"
	"image"
	"math"

	"tracelift/ecg"
	"tracelift/grid"
)

// Where two neighbouring rows' QRS strokes merge, both paths may take
// part of the other's stroke: an aVR S wave and an aVL R wave of a 3 × 4
// page trade apexes, and since the two errors nearly cancel in
// aVR + aVL + aVF = 0 the identity hardly shows it. With the rhythm
// strip's II printed at the same time, aVR, aVL, aVF and II carry two
// identities (standards.md §1.3), but two broken leads among four cannot
// be told from the algebra alone: every pair predicts the other two
// wrongly. The page tells which leads to trust: a lead whose stroke is
// clear of every other row's ink (contestedColumns: no other row's path
// within half a millimetre, no merged run) was read from its own ink
// alone. reReadFromClear fits the frontal vector to the limb leads that
// are clear at a sample (two at least; with three or more they must
// agree) and re-reads the leads whose strokes meet another row's there,
// over the stretches where they depart from it, at the value it
// predicts, provided that value lies on ink in the lead's own panel over
// most of the stretch (guideLimb's test).

// clearParams tunes reReadFromClear.
type clearParams struct {
	tolMM       float64 // agreement among the clear leads, and the widening of a stretch, mm of trace
	offMM       float64 // a contested lead departing by more than this is re-read, mm of trace
	minTolMV    float64 // smallest tolerance, mV
	padS        float64 // a lead counts as contested this long on each side of a contested column, s
	stretchPadS float64 // a stretch re-read is widened by this on each side, s
	minS        float64 // shorter stretches are left alone, s
	inkTolMM    float64 // the predicted point must lie within this of ink, mm
	minInk      float64 // share of a stretch's samples whose prediction must lie on ink
	minKnown    float64 // share of a stretch's samples that must have a prediction
	penMM       float64 // a pen's width, mm
	looseMM     float64 // ink reaching this far past a path's extent leaves its column loose, mm
	edgeS       float64 // samples this close to their panel's ends, s, are neither clear nor re-read
	// Over the samples with three clear leads or more (at least minCheckS
	// of them), the share where they agree within tolMM must reach
	// minHold, or nothing is re-read.
	minCheckS, minHold float64
}

// defaultClear: guideLimb's tolerances (a millimetre of trace, a pen's
// width for the ink test, 85 % of a stretch on ink); a contested column
// taints the lead ±10 ms (a QRS stroke's duration, common practice, from
// memory) so that a stroke's foot, read where the merge begins, is not
// taken for clear; departures of 2 mm, well beyond a sub-pixel slip.
// Where three or more limb leads are clear they agree within 1 mm at
// 99.6–100 % of the samples on the overlap corpus and on LUDB records
// printed from their raw units, and at 90–96 % on LUDB records printed
// at 20 mm/mV with the dataset's per-lead header gains (which break the
// laws): 98 % is asked.
var defaultClear = clearParams{tolMM: 1, offMM: 2, minTolMV: 0.05, padS: 0.010, stretchPadS: 0.004, minS: 0.006, inkTolMM: 0.35, minInk: 0.85, minKnown: 0.7, penMM: 0.4, looseMM: 1, edgeS: 0.02, minCheckS: 0.5, minHold: 0.98}

// reReadFromClear re-reads, in place, the limb-lead samples of vals
// (vals[k] panel k's samples on the record grid, mV upright, fs Hz;
// xStart[k] the x of its time T0, px) whose strokes meet another row's,
// from the limb leads that are clear at the same time (see above). Samples
// that differ from keep[k] (already re-read by guideLimb) are left alone.
// It returns one warning per lead re-read.
func reReadFromClear(ink *image.Gray, cal grid.Calibration, fs float64, panels []*Panel, vals, keep [][]float64, xStart []float64, p clearParams) []string {
	const nl = 6
	if len(vals) == 0 || fs <= 0 || ink == nil || cal.GainMMPerMV.V <= 0 {
		return nil
	}
	ls, n := limbSetOf(panels, vals)
	if ls == nil {
		return nil
	}
	pxPerMV := cal.GainMMPerMV.V * cal.PxPerMMY.V
	pxPerS := cal.SpeedMMPerS.V * cal.PxPerMMX.V
	tol := math.Max(p.tolMM/cal.GainMMPerMV.V, p.minTolMV)
	offTh := math.Max(p.offMM/cal.GainMMPerMV.V, p.minTolMV)
	// Contested samples per lead: its source panel's (contestedSamples).
	cs := contestedSamples(ink, cal, fs, n, panels, xStart, p.padS)
	var contested [nl][]bool
	for l := range nl {
		contested[l] = make([]bool, n)
		for i := range n {
			if k := ls.src[l][i]; k >= 0 {
				contested[l][i] = cs[k][i]
			}
		}
	}
	// isLoose reports whether lead l's column at sample i has a run of ink
	// reaching more than looseMM past its path's extent (over the columns
	// a pen's width around it, which a steep stroke's ink covers): a
	// stroke the path did not read, its own apex left or another row's
	// stroke. It is asked only with two clear leads among five or six, so
	// a panel's extents are taken when first needed.
	looseTol := p.looseMM * cal.PxPerMMY.V
	w := max(1, int(math.Ceil(p.penMM*cal.PxPerMMX.V)))
	x0 := make([]int, len(panels))
	spans := make([][]colSpan, len(panels))
	isLoose := func(l, i int) bool {
		k := ls.src[l][i]
		pn := panels[k]
		if spans[k] == nil {
			x0[k], spans[k] = pathSpans(pn.Path)
		}
		sp := spans[k]
		c := int(math.Round(xStart[k]+(float64(i)/fs-pn.T0)*pxPerS)) - x0[k]
		if c < 0 || c >= len(sp) || math.IsInf(sp[c].lo, 1) {
			return false
		}
		ext := sp[c]
		for d := max(0, c-w); d <= min(len(sp)-1, c+w); d++ {
			if s := sp[d]; !math.IsInf(s.lo, 1) {
				ext.lo, ext.hi = min(ext.lo, s.lo), max(ext.hi, s.hi)
			}
		}
		r := inkRun(ink, x0[k]+c, sp[c])
		return r.lo < ext.lo-looseTol || r.hi > ext.hi+looseTol
	}
	coef := limbCoefficients()
	// Per sample: the value the clear leads' vector predicts for each
	// contested lead (NaN elsewhere).
	var pred [nl][]float64
	for l := range nl {
		pred[l] = make([]float64, n)
		for i := range pred[l] {
			pred[l][i] = math.NaN()
		}
	}
	inkTol := p.inkTolMM * cal.PxPerMMY.V
	// onInk reports whether value v (offset removed) of lead l at sample
	// i lies on ink in the lead's own panel.
	onInk := func(l, i int, v float64) bool {
		k := ls.src[l][i]
		pn := panels[k]
		v += ls.off[l]
		if pn.Negated {
			v = -v
		}
		x := xStart[k] + (float64(i)/fs-pn.T0)*pxPerS
		y := pn.ZeroY - v*pxPerMV
		return inkNear(ink, x, y, inkTol)
	}
	edge := max(1, int(math.Round(p.edgeS*fs)))
	nearEdge := func(l, i int) bool {
		pn := panels[ls.src[l][i]]
		return i < int(math.Ceil(pn.T0*fs))+edge || i > int(math.Floor(pn.T1*fs))-edge
	}
	checked, held := 0, 0
	for i := range n {
		var clear, cont []int
		for l := range nl {
			switch {
			case math.IsNaN(ls.a[l][i]) || nearEdge(l, i):
			case contested[l][i]:
				cont = append(cont, l)
			case onInk(l, i, ls.a[l][i]):
				clear = append(clear, l)
			}
		}
		if len(clear) < 2 || len(cont) == 0 && len(clear) < 3 {
			continue
		}
		// Least squares for (I, II) through the clear leads.
		var s00, s01, s11, b0, b1 float64
		for _, l := range clear {
			c := coef[l]
			s00 += c[0] * c[0]
			s01 += c[0] * c[1]
			s11 += c[1] * c[1]
			b0 += c[0] * ls.a[l][i]
			b1 += c[1] * ls.a[l][i]
		}
		det := s00*s11 - s01*s01
		if math.Abs(det) < 1e-9 {
			continue
		}
		hI, hII := (s11*b0-s01*b1)/det, (s00*b1-s01*b0)/det
		agree := true
		for _, l := range clear {
			if math.Abs(coef[l][0]*hI+coef[l][1]*hII-ls.a[l][i]) > tol {
				agree = false
				break
			}
		}
		if len(clear) >= 3 {
			checked++
			if agree {
				held++
			}
		}
		if len(cont) == 0 {
			continue
		}
		// Two clear leads cannot be checked against each other. Where at
		// most four limb leads are printed at the time (a 3 × 4 column
		// with the rhythm strip's II) two broken leads leave no more, and
		// they are trusted; with more, one of the contested leads must
		// agree with them.
		if agree && len(clear) == 2 && len(clear)+len(cont) > 4 {
			agree = !isLoose(clear[0], i) && !isLoose(clear[1], i)
		}
		if !agree {
			continue
		}
		for _, l := range cont {
			pred[l][i] = coef[l][0]*hI + coef[l][1]*hII
		}
	}
	// The page's limb leads must obey the laws where three or more are
	// clear: a page whose leads were printed at gains of their own (a
	// record stored with per-lead scales) does not, and its clear leads
	// would predict wrongly.
	if float64(checked) >= p.minCheckS*fs && float64(held) < p.minHold*float64(checked) {
		return nil
	}
	minLen := int(math.Round(p.minS * fs))
	padN := int(math.Round(p.stretchPadS * fs))
	off := make([]bool, n)
	var warns []string
	for l := range nl {
		any := false
		for i := range n {
			off[i] = !math.IsNaN(pred[l][i]) && math.Abs(pred[l][i]-ls.a[l][i]) > offTh
			any = any || off[i]
		}
		if !any {
			continue
		}
		// The stretches: the off samples of one contested run of the lead
		// joined (a path that traded strokes may cross the prediction on
		// the way), widened while the lead departs by more than tol, then
		// by stretchPadS.
		var stretches [][2]int
		for _, run := range markedSpans(contested[l], 1, 0) {
			first, last := -1, -1
			for i := run.first; i <= run.last; i++ {
				if off[i] {
					if first < 0 {
						first = i
					}
					last = i
				}
			}
			if first >= 0 {
				stretches = append(stretches, [2]int{first, last})
			}
		}
		re := 0
		for _, st := range stretches {
			i, e := st[0], st[1]
			for i > 0 && !math.IsNaN(pred[l][i-1]) && math.Abs(pred[l][i-1]-ls.a[l][i-1]) > tol {
				i--
			}
			for e+1 < n && !math.IsNaN(pred[l][e+1]) && math.Abs(pred[l][e+1]-ls.a[l][e+1]) > tol {
				e++
			}
			s0, s1 := max(0, i-padN), min(n-1, e+padN)
			if s1-s0+1 < minLen {
				continue
			}
			on, known, tot := 0, 0, 0
			for k := s0; k <= s1; k++ {
				if math.IsNaN(ls.a[l][k]) {
					continue
				}
				tot++
				if math.IsNaN(pred[l][k]) {
					continue
				}
				known++
				if onInk(l, k, pred[l][k]) {
					on++
				}
			}
			if known == 0 || float64(known) < p.minKnown*float64(tot) || float64(on) < p.minInk*float64(known) {
				continue
			}
			for k := s0; k <= s1; k++ {
				src := ls.src[l][k]
				if src < 0 || math.IsNaN(pred[l][k]) || keep != nil && keep[src] != nil && keep[src][k] != vals[src][k] {
					continue
				}
				vals[src][k] = pred[l][k] + ls.off[l]
				re++
			}
		}
		if re > 0 {
			warns = append(warns, fmt.Sprintf("lead %v: %.0f ms re-read from the limb leads clear of other rows' strokes", ecg.LimbLeads[l], 1000*float64(re)/fs))
		}
	}
	return warns
}
