package trace

import (
	"image"
	"math"

	"tracelift/grid"
)

// The check for three limb leads printed at the same time (a column of
// a 3 × 4 page: I, II, III or aVR, aVL, aVF; and the second column of a
// 3x4+3 page where the rhythm strip's II is withheld through a mass of
// merged strokes): three projections of one frontal vector carry one
// identity (aVR + aVL + aVF = 0, III = II − I; standards.md §1.3), which
// shows that a lead is wrong but not which one. Two things tell. A lead
// whose path took another row's stroke reads its QRS the other way from
// the value the two others predict for it, while for a right lead the
// prediction, off by the wrong lead's error, mostly keeps its reading's
// direction (the wrong stroke adds to one side only). And the wrong
// lead's own stroke is printed in its panel, so the value predicted for
// it lies on ink there. Where the three break the identity by more than
// offMM of trace for every lead over a stretch, the one lead whose
// reading points the other way from its prediction over most of it
// (both at least minPred from 0 mV: a reading near 0 mV points nowhere,
// and III, right and near 0 mV on overlap 3x4+1 seed 12 where I read
// another row's stroke, was withheld at every beat, 14.1 → 5.8 dB),
// with the prediction on ink, is blamed, when the evidence against it
// clearly exceeds the evidence against the others; its stretches are
// withheld when they come back at half the beats or more
// (withholdRepeated). On overlap 3x4+3 seed 3 aVF's path left its own
// 0.45 mV R wave for the merged strokes of II and V5 below, read −1 to
// −2 mV at every beat and matched aVR's truth better than its own; there
// the ink alone did not tell (the predictions for aVR lay on ink at 50–
// 78 % of each stretch, where its own strokes and aVL's cross), the
// direction did (aVF 88–100 %, aVR and aVL 38 % at most).

// tripleParams tunes withholdTriple.
type tripleParams struct {
	dissentParams
	inkTolMM float64 // a predicted point lies on ink within this, mm
	// A lead's evidence over a stretch is the smaller of the share of it
	// over which the lead points the other way from its prediction and
	// the share over which that prediction lies on its ink. The lead with
	// the most is blamed when it has at least minEvidence and margin more
	// than either other lead.
	minEvidence, margin float64
	// A lead blamed clearly at most stretches is blamed at the others
	// with relaxEvidence and relaxMargin.
	relaxEvidence, relaxMargin float64
}

// defaultTriple: the dissent check's thresholds (10 mm of trace, 3 mm
// from 0 mV, 8 ms, half the beats); a predicted point on ink within
// 0.35 mm (a pen's width; guideLimb's test); evidence 0.6 at least and
// 0.25 more than the next lead's; 0.5 and 0.1 where the lead was blamed
// at most of the stretches. On overlap 3x4+3 seed 3 the stretches
// where aVF read the strips' strokes gave aVF 0.67–1.0 and aVR, whose
// own strokes and aVL's cross its prediction, 0.25–0.44: absolute bounds
// (aVF pointing the other way over 80 %, the others over 40 % at most)
// let a beat where aVF pointed the other way over 78 % or aVR over 44 %
// through as the page's time base moved by a third of a pixel; the
// beat where aVF pointed the other way over 78 % (evidence 0.67, aVR
// 0.44) is blamed as its other four beats were.
var defaultTriple = tripleParams{dissentParams: defaultDissent, inkTolMM: 0.35, minEvidence: 0.6, margin: 0.25, relaxEvidence: 0.5, relaxMargin: 0.1}

// withholdTriple sets to NaN the stretches where exactly three limb
// leads are present at a time (vals[k] panel k's samples on the record
// grid, mV upright, fs Hz; xStart[k] the x of its time T0, px; ink the
// page's ink map) and break their identity by more than offMM of trace,
// in the one lead that reads the other way from the value the other two
// predict for it, that value on its ink (see above). Samples that
// differ from keep[k] (when keep is not nil: re-read by the limb check)
// are left alone. It returns one warning per lead withheld from.
func withholdTriple(ink *image.Gray, cal grid.Calibration, fs float64, panels []*Panel, vals, keep [][]float64, xStart []float64, p tripleParams) []string {
	const nl = 6
	if len(vals) == 0 || fs <= 0 || ink == nil || cal.GainMMPerMV.V <= 0 {
		return nil
	}
	ls, n := limbSetOf(panels, vals)
	if ls == nil {
		return nil
	}
	mmPerMV := cal.GainMMPerMV.V
	pxPerMV := mmPerMV * cal.PxPerMMY.V
	pxPerS := cal.SpeedMMPerS.V * cal.PxPerMMX.V
	offTh, minPred := p.offMM/mmPerMV, p.minPred/mmPerMV
	inkTol := p.inkTolMM * cal.PxPerMMY.V
	coef := limbCoefficients()
	// Per sample with exactly three leads present and the identity
	// broken grossly: per lead, the value the other two predict (NaN
	// elsewhere).
	var pred [nl][]float64
	for l := range nl {
		pred[l] = make([]float64, n)
	}
	broken := make([]bool, n)
	var idx [3]int
	for i := range n {
		m := 0
		for l := range nl {
			pred[l][i] = math.NaN()
			if !math.IsNaN(ls.a[l][i]) {
				if m < 3 {
					idx[m] = l
				}
				m++
			}
		}
		if m != 3 {
			continue
		}
		gross := true
		for j, l := range idx {
			u, w := idx[(j+1)%3], idx[(j+2)%3]
			c0, c1 := coef[u], coef[w]
			det := c0[0]*c1[1] - c0[1]*c1[0]
			vp, vq := ls.a[u][i], ls.a[w][i]
			hI, hII := (vp*c1[1]-vq*c0[1])/det, (c0[0]*vq-c1[0]*vp)/det
			pred[l][i] = coef[l][0]*hI + coef[l][1]*hII
			gross = gross && math.Abs(pred[l][i]-ls.a[l][i]) > offTh
		}
		broken[i] = gross
	}
	// onInk reports whether lead l's predicted value at sample i lies on
	// ink in its own panel.
	onInk := func(l, i int) bool {
		k := ls.src[l][i]
		if k < 0 {
			return false
		}
		pn := panels[k]
		v := pred[l][i] + ls.off[l]
		if pn.Negated {
			v = -v
		}
		x := xStart[k] + (float64(i)/fs-pn.T0)*pxPerS
		y := pn.ZeroY - v*pxPerMV
		if y < float64(pn.Bounds.Min.Y) || y >= float64(pn.Bounds.Max.Y) {
			return false
		}
		return inkNear(ink, x, y, inkTol)
	}
	gap := int(math.Round(p.gapS * fs))
	minLen := int(math.Round(p.minS * fs))
	// Per stretch: the lead with the most evidence against it, that
	// evidence and the next lead's.
	type verdict struct {
		sp           span
		lead         int
		best, second float64
		present      uint // the leads taking part (bits of ecg.LimbLeads)
	}
	var vs []verdict
	for _, sp := range markedSpans(broken, gap, 0) {
		if sp.last-sp.first+1 < minLen {
			continue
		}
		var on, dir, tot [nl]int
		for i := sp.first; i <= sp.last; i++ {
			if !broken[i] {
				continue
			}
			for l := range nl {
				if math.IsNaN(pred[l][i]) {
					continue
				}
				tot[l]++
				if onInk(l, i) {
					on[l]++
				}
				if x, q := ls.a[l][i], pred[l][i]; x*q < 0 && math.Abs(q) >= minPred && math.Abs(x) >= minPred {
					dir[l]++
				}
			}
		}
		v := verdict{sp: sp, lead: -1}
		for l := range nl {
			if tot[l] == 0 {
				continue
			}
			v.present |= 1 << l
			t := float64(tot[l])
			e := math.Min(float64(dir[l])/t, float64(on[l])/t)
			switch {
			case e > v.best:
				v.lead, v.best, v.second = l, e, v.best
			case e > v.second:
				v.second = e
			}
		}
		if v.lead >= 0 {
			vs = append(vs, v)
		}
	}
	// A lead blamed clearly at two stretches or more, and at half of the
	// stretches it took part in at least, took other rows' strokes at
	// every beat (a lead's complexes repeat): where it is again the lead
	// with the most evidence, with relaxEvidence of it and relaxMargin
	// over the next lead, it is blamed there too. (Counting the stretches
	// of the other column's three leads as well, overlap 3x4+3 seed 3's
	// aVF, blamed clearly at four of its five beats, was not blamed at
	// the fifth once four stretches of III appeared in the first column.)
	blamedClearly := func(v verdict) bool { return v.best >= p.minEvidence && v.best-v.second >= p.margin }
	var nClear, nIn [nl]int
	for _, v := range vs {
		if blamedClearly(v) {
			nClear[v.lead]++
		}
		for l := range nl {
			if v.present&(1<<l) != 0 {
				nIn[l]++
			}
		}
	}
	dissent := make([][]stretch, len(panels))
	for _, v := range vs {
		repeated := nClear[v.lead] >= 2 && 2*nClear[v.lead] >= nIn[v.lead]
		if !blamedClearly(v) && !(repeated && v.best >= p.relaxEvidence && v.best-v.second >= p.relaxMargin) {
			continue
		}
		// The stretch goes to the copy that supplied most of it.
		cnt := map[int32]int{}
		for i := v.sp.first; i <= v.sp.last; i++ {
			if k := ls.src[v.lead][i]; k >= 0 {
				cnt[k]++
			}
		}
		bk, bc := int32(-1), 0
		for k, c := range cnt {
			if c > bc || c == bc && k < bk {
				bk, bc = k, c
			}
		}
		if bk >= 0 {
			dissent[bk] = append(dissent[bk], stretch{v.sp.first, v.sp.last})
		}
	}
	return withholdRepeated(fs, panels, vals, keep, ls.order, dissent, p.dissentParams, nil,
		"where it breaks the Einthoven/Goldberger identity with the two limb leads printed with it, whose prediction for it lies on its ink")
}
