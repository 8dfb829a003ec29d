package measure

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"tracelift/ecg"
)

// Measure detects the beats of rec, builds a median beat per lead from the
// dominant beats, delineates P, QRS and T on each, and reports global
// intervals, QTc, frontal axes, per-lead amplitudes, voltage criteria, a
// per-beat table and flags against common adult reference ranges.
//
// Leads need not be simultaneous: on a 3 × 4 page each short lead covers
// only its 2.5 s column and is NaN elsewhere. Every lead's median beat is
// aligned on the same beat fiducials (refined on the lead that covers most
// of the record, normally the rhythm strip), so all leads' boundaries are
// on one time frame relative to the QRS fiducial, and global intervals
// take the earliest onset and latest offset over all leads after dropping
// outlying leads (see combine). This treats the dominant beats of
// different columns as one morphology, which is the premise of a median
// beat.
//
// Errors wrap ecg.ErrNoECG when the record has no samples or fewer than two
// beats are found, and ecg.ErrUnreadable when a sample rate lies outside
// MinSampleRate–MaxSampleRate, a start time is not finite, or the leads'
// time spans would need a grid far larger than the samples given.
func Measure(rec ecg.Record, opt *Options) (*Report, error) {
	o := opt.withDefaults()
	f, err := newFrame(&rec, o.Leads)
	if err != nil {
		return nil, fmt.Errorf("measure: %w", err)
	}
	idx := detect(f, &o)
	if len(idx) < 2 {
		return nil, fmt.Errorf("measure: %d beats found, need at least 2: %w", len(idx), ecg.ErrNoECG)
	}
	cls := classify(f, idx, &o)
	cond := condition(f, &o)
	rep := &Report{Caution: Caution, QTcMS: map[string]float64{}, Flags: []Flag{}, Warnings: []string{}, Leads: []LeadMeasures{}}
	fs := f.fs
	ms := func(samples float64) float64 { return samples / fs * 1000 }
	rep.BeatCount = len(idx)

	// Rhythm.
	var rr, nn []float64
	for i := 1; i < len(idx); i++ {
		v := ms(float64(idx[i] - idx[i-1]))
		rr = append(rr, v)
		if cls[i] == ecg.BeatNormal && cls[i-1] == ecg.BeatNormal {
			nn = append(nn, v)
		}
	}
	meanRR, sdRR := meanSD(rr)
	rep.RRMS, rep.RRSDMS = round(meanRR, 1), round(sdRR, 1)
	rep.HeartRateBPM = round(HeartRate(meanRR), 1)
	if len(nn) >= 2 {
		s := 0.0
		for i := 1; i < len(nn); i++ {
			d := nn[i] - nn[i-1]
			s += d * d
		}
		rep.RMSSDMS = round(math.Sqrt(s/float64(len(nn)-1)), 1)
	} else {
		rep.RMSSDMS = NaN()
	}
	if len(nn) == 0 {
		nn = slices.Clone(rr)
	}
	rrDom := median(slices.Clone(nn)) / 1000 // s

	// Dominant beats, aligned.
	var dom []int
	for i, c := range cls {
		if c == ecg.BeatNormal {
			dom = append(dom, idx[i])
		}
	}
	if len(dom) < max(2, len(idx)/5) {
		dom = slices.Clone(idx)
		rep.Warnings = append(rep.Warnings, "no dominant beat class: the median beat mixes all beats")
	}
	dom = align(cond, dom, &o)

	S := func(s float64) int { return int(math.Round(s * fs)) }
	pre := S(math.Min(0.42, math.Max(0.22, 0.6*rrDom)))
	post := S(math.Min(0.74, math.Max(0.36, 0.8*rrDom)))
	tmpl := templates(cond, dom, pre, post, o.MaxTemplateBeats)
	d := newDelineator(fs, o.delinParams())
	lw := make([]waves, len(f.leads))
	// Delineate per group of simultaneous leads (all leads when one lead,
	// such as a rhythm strip, runs alongside every other).
	groups := leadGroups(f)
	gl := make([]waves, len(f.leads)) // each lead's group boundaries
	var gs []waves
	for _, grp := range groups {
		sub := make([][]float64, len(grp))
		for i, k := range grp {
			sub[i] = tmpl[k]
		}
		env := d.qrsEnvelope(sub, pre)
		ws := make([]waves, len(grp))
		for i, k := range grp {
			lw[k] = d.delineate(tmpl[k], pre, rrDom, env, true, true)
			lw[k].n = coverage(cond.x[k], dom)
			ws[i] = lw[k]
		}
		g := combineLeads(ws, fs, &d.p)
		for _, k := range grp {
			gl[k] = g
		}
		gs = append(gs, g)
	}
	if len(groups) > 1 {
		rep.Warnings = append(rep.Warnings, fmt.Sprintf("the leads form %d groups that were not recorded at the same time and no lead runs alongside all of them; QRS and QT are the longest of the groups', P and PR their median", len(groups)))
	}
	pWithheld := false
	if why := atrialCheck(cond, dom, tmpl, lw, pre, rrDom); why != "" {
		pWithheld = true
		for i := range gs {
			gs[i].pOn, gs[i].pOff, gs[i].pPeak = math.NaN(), math.NaN(), math.NaN()
		}
		for k := range gl {
			gl[k].pOn, gl[k].pOff, gl[k].pPeak = math.NaN(), math.NaN(), math.NaN()
		}
		rep.Warnings = append(rep.Warnings, "P waves not reported: "+why)
	}
	rel := func(i float64) Num { return round(ms(i-float64(pre)), 1) }
	p, pr, qrs, qt := globalIntervals(gs)
	rep.PMS, rep.PRMS, rep.QRSMS, rep.QTMS = round(ms(p), 1), round(ms(pr), 1), round(ms(qrs), 1), round(ms(qt), 1)
	anyOK := false
	for _, g := range gs {
		anyOK = anyOK || g.ok
	}
	if !anyOK {
		rep.Warnings = append(rep.Warnings, "no lead's median beat could be delineated")
	}
	if rep.QTMS.Valid() && rrDom > 0 {
		for _, k := range qtcNames {
			rep.QTcMS[k] = float64(round(QTc(k, float64(rep.QTMS), rrDom*1000), 1))
		}
	}
	if anyOK && !rep.PMS.Valid() && !pWithheld {
		rep.Warnings = append(rep.Warnings, "no P waves found (atrial fibrillation or flutter, junctional or paced rhythm, or a noisy tracing)")
	}

	// Per-lead amplitudes on amplitude median beats (see ampTemplates),
	// against the PR-segment level just before the group's QRS onset.
	atmpl := ampTemplates(f, idx, dom, gl, pre, post, &o)
	amps := make(map[ecg.Lead]LeadMeasures)
	for k, l := range f.leads {
		at := atmpl[k]
		if at == nil {
			at = tmpl[k]
		}
		lm := leadAmplitudes(at, gl[k], fs)
		lm.Lead = l.String()
		lm.Beats = coverage(cond.x[k], dom)
		w := lw[k]
		lm.POnMS, lm.POffMS = rel(w.pOn), rel(w.pOff)
		lm.QRSOnMS, lm.QRSOffMS = rel(w.qrsOn), rel(w.qrsOff)
		lm.TPeakMS, lm.TEndMS = rel(w.tPeak), rel(w.tEnd)
		rep.Leads = append(rep.Leads, lm)
		amps[l] = lm
	}
	for k := range atmpl {
		if atmpl[k] == nil {
			atmpl[k] = tmpl[k]
		}
	}
	rep.Axes = axes(f, atmpl, gl, fs)
	if v1, ok := amps[ecg.LeadV1]; ok && v1.SMV.Valid() {
		r5, r6 := amps[ecg.LeadV5].RMV, amps[ecg.LeadV6].RMV
		_, ok5 := amps[ecg.LeadV5]
		_, ok6 := amps[ecg.LeadV6]
		if ok5 || ok6 {
			m := math.Inf(-1)
			if ok5 && r5.Valid() {
				m = float64(r5)
			}
			if ok6 && r6.Valid() {
				m = math.Max(m, float64(r6))
			}
			if !math.IsInf(m, -1) {
				v := float64(round(-float64(v1.SMV)+m, 3))
				rep.SokolowLyonMV = &v
			}
		}
	}
	if avl, ok := amps[ecg.LeadAVL]; ok && avl.RMV.Valid() {
		if v3, ok := amps[ecg.LeadV3]; ok && v3.SMV.Valid() {
			v := float64(round(float64(avl.RMV)-float64(v3.SMV), 3))
			rep.CornellMV = &v
		}
	}

	// Per-beat table.
	if !o.NoBeatTable {
		rep.Beats = beatTable(f, cond, idx, cls, d)
	} else {
		rep.Beats = []Beat{}
	}
	rep.Flags = flags(rep, &o)
	if n := len(idx) - len(dom); n > 0 {
		counts := map[ecg.BeatClass]int{}
		for _, c := range cls {
			counts[c]++
		}
		rep.Warnings = append(rep.Warnings, fmt.Sprintf("%d of %d beats are not dominant (V %d, A %d, Q %d) and were left out of the median beat",
			n, len(idx), counts[ecg.BeatVentricular], counts[ecg.BeatAtrial], counts[ecg.BeatUnknown]))
	}
	return rep, nil
}

// condition returns f's leads with baseline wander removed and band
// limited: by default the median-filter baseline (medianBaseline) is
// subtracted; with o.HighPassHz > 0 a 2nd-order Butterworth high-pass runs
// forward and backward instead. Then a 2nd-order Butterworth low-pass at
// o.LowPassHz runs forward and backward (zero phase). Each contiguous run
// of samples is filtered separately.
func condition(f *frame, o *Options) *frame {
	c := &frame{fs: f.fs, t0: f.t0, n: f.n, leads: f.leads, x: make([][]float64, len(f.x))}
	lp := butterLow(o.LowPassHz, f.fs)
	for k, x := range f.x {
		if o.HighPassHz > 0 {
			c.x[k] = bandFilter(nil, x, f.fs, 1.0, 0.3, butterHigh(o.HighPassHz, f.fs), lp)
			continue
		}
		y := medianBaseline(nil, x, f.fs)
		for i := range y {
			y[i] = x[i] - y[i]
		}
		c.x[k] = bandFilter(y, y, f.fs, 0.2, 0.3, lp)
	}
	return c
}

// align refines each beat fiducial by up to ±20 ms to best match the QRS
// template (±60 ms) of the reference lead — the lead recorded over most of
// the record — or, where that lead is absent, the sum of the matches of
// the leads present.
func align(f *frame, idx []int, o *Options) []int {
	h := int(0.06 * f.fs)
	sh := int(0.02 * f.fs)
	tmpl := templates(f, idx, h, h, o.MaxTemplateBeats)
	ref, refN := -1, 0
	for k, x := range f.x {
		n := 0
		for _, v := range x {
			if !math.IsNaN(v) {
				n++
			}
		}
		if n > refN || (n == refN && f.leads[k] == ecg.LeadII) {
			ref, refN = k, n
		}
	}
	covered := func(k, r int) bool {
		if r-h-sh < 0 || r+h+sh >= f.n {
			return false
		}
		x := f.x[k]
		return !math.IsNaN(x[r-h-sh]) && !math.IsNaN(x[r+h+sh]) && !math.IsNaN(x[r])
	}
	out := make([]int, len(idx))
	var use []int
	for i, r := range idx {
		out[i] = r
		use = use[:0]
		if ref >= 0 && covered(ref, r) {
			use = append(use, ref)
		} else {
			for k := range f.x {
				if covered(k, r) {
					use = append(use, k)
				}
			}
		}
		if len(use) == 0 {
			continue
		}
		best, bd := math.Inf(-1), 0
		for dlt := -sh; dlt <= sh; dlt++ {
			s := 0.0
			for _, k := range use {
				c := pearson(f.x[k][r+dlt-h:r+dlt+h+1], tmpl[k])
				if !math.IsNaN(c) {
					s += c
				}
			}
			if s > best {
				best, bd = s, dlt
			}
		}
		out[i] = r + bd
	}
	return out
}

// coverage counts the beats whose fiducial sample is recorded in x.
func coverage(x []float64, idx []int) int {
	n := 0
	for _, r := range idx {
		if r >= 0 && r < len(x) && !math.IsNaN(x[r]) {
			n++
		}
	}
	return n
}

// combineLeads merges per-lead waves of simultaneous (or aligned) leads
// into global boundaries (sample positions on the shared frame): the
// earliest onset and latest offset over the leads, CSE/AHA style, after
// leaving out leads whose value lies further than a tolerance from the
// median over leads (40 ms for QRS, 60 ms for P, 80 ms for T end) — one
// badly delineated lead would otherwise set the global value. P counts as
// present when found in at least a third of the leads with a QRS.
func combineLeads(ws []waves, fs float64, p *delinParams) waves {
	g := noWaves()
	var nq int
	for _, w := range ws {
		if w.ok {
			nq++
		}
	}
	if nq == 0 {
		return g
	}
	g.ok = true
	pick := func(get func(w waves) float64, tolS float64, earliest bool, minN int, frac float64) float64 {
		var v []float64
		for _, w := range ws {
			if x := get(w); w.ok && !math.IsNaN(x) {
				v = append(v, x)
			}
		}
		if len(v) < minN || len(v) == 0 {
			return math.NaN()
		}
		m := median(slices.Clone(v))
		kept := v[:0]
		for _, x := range v {
			if math.Abs(x-m) <= tolS*fs {
				kept = append(kept, x)
			}
		}
		if len(kept) == 0 {
			kept = append(kept, m)
		}
		slices.Sort(kept)
		k := int(math.Floor(frac * float64(len(kept)-1)))
		if earliest {
			return kept[k]
		}
		return kept[len(kept)-1-k]
	}
	g.qrsOn = pick(func(w waves) float64 { return w.qrsOn }, p.qrsTol, true, 1, p.combFrac)
	g.qrsOff = pick(func(w waves) float64 { return w.qrsOff }, p.qrsTol, false, 1, p.combFrac)
	// T end only from leads whose T wave is at least tKeep × the largest
	// relative T amplitude (|T| / QRS peak-to-peak): a flat T gives no
	// reliable end and tends to merge with a U wave.
	// On a 3 × 4 page a short lead's median beat may rest on one or two
	// beats; when other leads have at least three, only those give T ends.
	nmax := 0
	for _, w := range ws {
		nmax = max(nmax, w.n)
	}
	nmin := min(3, nmax)
	tmax := 0.0
	for _, w := range ws {
		if w.ok && !math.IsNaN(w.tEnd) && w.qrsPP > 0 && w.n >= nmin {
			tmax = math.Max(tmax, math.Abs(w.tAmp)/w.qrsPP)
		}
	}
	// The latest T end must be confirmed by a second lead within 80 ms;
	// when the two latest disagree by more, the one whose T wave is
	// smaller relative to its QRS is dropped (typically a U wave merged
	// into a low T in one lead), and the next pair is tried.
	type tend struct{ at, rel float64 }
	var tends []tend
	for _, w := range ws {
		if w.ok && !math.IsNaN(w.tEnd) && w.qrsPP > 0 && w.n >= nmin && math.Abs(w.tAmp)/w.qrsPP >= p.tKeep*tmax {
			tends = append(tends, tend{w.tEnd, math.Abs(w.tAmp) / w.qrsPP})
		}
	}
	slices.SortFunc(tends, func(a, b tend) int { return cmp.Compare(a.at, b.at) })
	for n := len(tends); n >= 2 && tends[n-1].at-tends[n-2].at > 0.08*fs; n = len(tends) {
		if tends[n-1].rel < tends[n-2].rel {
			tends = tends[:n-1]
		} else {
			tends = append(tends[:n-2], tends[n-1])
		}
	}
	if len(tends) > 0 {
		g.tEnd = tends[len(tends)-1].at
	}
	pMin := max(1, (nq+2)/3)
	g.pOn = pick(func(w waves) float64 { return w.pOn }, 0.06, true, pMin, p.combFracP)
	g.pOff = pick(func(w waves) float64 { return w.pOff }, 0.06, false, pMin, p.combFracP)
	g.pOff = math.Min(g.pOff, g.qrsOn)
	if math.IsNaN(g.pOn) || math.IsNaN(g.pOff) || g.pOff <= g.pOn {
		g.pOn, g.pOff = math.NaN(), math.NaN()
	}
	return g
}

// leadAmplitudes measures one median beat x against global boundaries g.
func leadAmplitudes(x []float64, g waves, fs float64) LeadMeasures {
	lm := LeadMeasures{PMV: NaN(), QMV: NaN(), RMV: NaN(), SMV: NaN(), TMV: NaN(), STJMV: NaN(), STJ60MV: NaN()}
	if !g.ok || math.IsNaN(g.qrsOn) || math.IsNaN(g.qrsOff) {
		return lm
	}
	S := func(s float64) int { return int(math.Round(s * fs)) }
	on, off := int(g.qrsOn), int(g.qrsOff)
	base := meanRange(x, on-S(0.026), on-S(0.010))
	if math.IsNaN(base) || off >= len(x) {
		return lm
	}
	ir, rv := -1, 0.0
	for i := on; i <= off; i++ {
		if v := x[i] - base; v > rv {
			ir, rv = i, v
		}
	}
	lm.RMV = round(rv, 3)
	q, s := 0.0, 0.0
	if ir < 0 { // QS complex: the whole negative deflection counts as Q
		for i := on; i <= off; i++ {
			q = math.Min(q, x[i]-base)
		}
	} else {
		for i := on; i < ir; i++ {
			q = math.Min(q, x[i]-base)
		}
		for i := ir; i <= off; i++ {
			s = math.Min(s, x[i]-base)
		}
	}
	lm.QMV, lm.SMV = round(q, 3), round(s, 3)
	lm.STJMV = round(at(x, off)-base, 3)
	lm.STJ60MV = round(at(x, off+S(0.06))-base, 3)
	if !math.IsNaN(g.tEnd) {
		lm.TMV = round(extreme(x, off+S(0.04), int(g.tEnd), base), 3)
	}
	if !math.IsNaN(g.pOn) {
		lm.PMV = round(extreme(x, int(g.pOn), int(g.pOff), base), 3)
	}
	return lm
}

// axes computes the frontal P, QRS and T axes from the limb leads' median
// beats: QRS from net amplitude (largest positive + largest negative
// deflection), P and T from the mean level over the wave (area / duration),
// after fitting leads I and II by least squares to every limb lead present
// (lead = a·I + b·II, Einthoven/Goldberger) so that any two limb leads
// suffice.
func axes(f *frame, tmpl [][]float64, gl []waves, fs float64) Axes {
	ax := Axes{PDeg: NaN(), QRSDeg: NaN(), TDeg: NaN()}
	S := func(s float64) int { return int(math.Round(s * fs)) }
	type obs struct{ a, b, v float64 }
	// fit evaluates val on every limb lead with its group's boundaries g.
	fit := func(val func(x []float64, base float64, g waves) float64) Num {
		var os []obs
		for k, l := range f.leads {
			a, b, ok := ecg.FrontalCoefficients(l)
			g := gl[k]
			if !ok || !g.ok || math.IsNaN(g.qrsOn) {
				continue
			}
			x := tmpl[k]
			on := int(g.qrsOn)
			base := meanRange(x, on-S(0.026), on-S(0.010))
			if math.IsNaN(base) {
				continue
			}
			if v := val(x, base, g); !math.IsNaN(v) {
				os = append(os, obs{a, b, v})
			}
		}
		var s11, s12, s22, b1, b2 float64
		for _, o := range os {
			s11 += o.a * o.a
			s12 += o.a * o.b
			s22 += o.b * o.b
			b1 += o.a * o.v
			b2 += o.b * o.v
		}
		det := s11*s22 - s12*s12
		if len(os) < 2 || math.Abs(det) < 1e-9 {
			return NaN()
		}
		i := (s22*b1 - s12*b2) / det
		ii := (s11*b2 - s12*b1) / det
		return round(FrontalAxis(i, ii-i/2), 1)
	}
	ax.QRSDeg = fit(func(x []float64, base float64, g waves) float64 {
		hi, lo := 0.0, 0.0
		for i := int(g.qrsOn); i <= int(g.qrsOff) && i < len(x); i++ {
			hi, lo = math.Max(hi, x[i]-base), math.Min(lo, x[i]-base)
		}
		return hi + lo
	})
	ax.TDeg = fit(func(x []float64, base float64, g waves) float64 {
		if math.IsNaN(g.tEnd) {
			return math.NaN()
		}
		return meanRange(x, int(g.qrsOff)+S(0.04), int(g.tEnd)) - base
	})
	ax.PDeg = fit(func(x []float64, base float64, g waves) float64 {
		if math.IsNaN(g.pOn) {
			return math.NaN()
		}
		return meanRange(x, int(g.pOn), int(g.pOff)) - base
	})
	return ax
}

// leadGroups partitions f's leads into groups recorded at the same time.
// When one lead overlaps (for ≥ 80 % of its samples) every other lead — a
// rhythm strip, or any simultaneous recording — all leads form one group,
// because the beat fiducials are refined on that lead and so share one
// time frame. Otherwise leads that overlap for at least half of the
// shorter one's samples are joined (a 3 × 4 page without a rhythm strip
// gives its four columns).
func leadGroups(f *frame) [][]int {
	n := len(f.x)
	valid := make([][2]int, n) // first, last valid sample
	count := make([]int, n)
	for k, x := range f.x {
		valid[k] = [2]int{-1, -1}
		for i, v := range x {
			if !math.IsNaN(v) {
				if valid[k][0] < 0 {
					valid[k][0] = i
				}
				valid[k][1] = i
				count[k]++
			}
		}
	}
	overlap := func(a, b int) int {
		lo, hi := max(valid[a][0], valid[b][0]), min(valid[a][1], valid[b][1])
		return max(0, hi-lo+1)
	}
	for r := range n {
		all := true
		for k := range n {
			if k != r && float64(overlap(r, k)) < 0.8*float64(count[k]) {
				all = false
				break
			}
		}
		if all {
			g := make([]int, n)
			for k := range g {
				g[k] = k
			}
			return [][]int{g}
		}
	}
	comp := make([]int, n)
	for k := range comp {
		comp[k] = k
	}
	var find func(int) int
	find = func(k int) int {
		for comp[k] != k {
			k = comp[k]
		}
		return k
	}
	for a := range n {
		for b := a + 1; b < n; b++ {
			if float64(overlap(a, b)) >= 0.5*float64(min(count[a], count[b])) {
				comp[find(a)] = find(b)
			}
		}
	}
	idx := map[int]int{}
	var out [][]int
	for k := range n {
		r := find(k)
		j, ok := idx[r]
		if !ok {
			j = len(out)
			idx[r] = j
			out = append(out, nil)
		}
		out[j] = append(out[j], k)
	}
	return out
}

// globalIntervals returns P duration, PR, QRS and QT (samples) from the
// groups' boundaries: those of the single group, or with several groups
// for QRS and QT the longest over the groups that measured them (each
// group's interval can only under-estimate the global one, which spans
// the earliest onset and latest offset of all leads), and for P and PR the
// median over the groups that found a P wave (a P wave is small in some
// leads, and the longest would follow the worst group); P counts as
// present when found in at least half of the groups.
func globalIntervals(gs []waves) (p, pr, qrs, qt float64) {
	p, pr, qrs, qt = math.NaN(), math.NaN(), math.NaN(), math.NaN()
	mx := func(a, b float64) float64 {
		if math.IsNaN(a) {
			return b
		}
		if math.IsNaN(b) {
			return a
		}
		return math.Max(a, b)
	}
	var ps, prs []float64
	for _, g := range gs {
		if !g.ok {
			continue
		}
		qrs = mx(qrs, g.qrsOff-g.qrsOn)
		qt = mx(qt, g.tEnd-g.qrsOn)
		if !math.IsNaN(g.pOn) {
			ps = append(ps, g.pOff-g.pOn)
			prs = append(prs, g.qrsOn-g.pOn)
		}
	}
	if len(gs) == 1 || 2*len(ps) >= len(gs) {
		p, pr = median(ps), median(prs)
	}
	return p, pr, qrs, qt
}

// beatTable delineates QRS and T of every beat on the leads recorded at
// that beat and combines them like the median beats.
func beatTable(f, cond *frame, idx []int, cls []ecg.BeatClass, d *delineator) []Beat {
	out := make([]Beat, len(idx))
	ws := make([]waves, 0, len(f.x))
	fs := f.fs
	for i, r := range idx {
		b := Beat{RS: round6(f.time(r)), Class: string(rune(cls[i])), RRMS: NaN(),
			QRSOnS: NaN(), QRSOffS: NaN(), TEndS: NaN(), QRSMS: NaN(), QTMS: NaN()}
		rrS := math.NaN()
		if i > 0 {
			rrS = float64(r-idx[i-1]) / fs
			b.RRMS = round(rrS*1000, 1)
		}
		next := math.NaN()
		if i+1 < len(idx) {
			next = float64(idx[i+1]-r) / fs
		}
		if math.IsNaN(next) {
			next = rrS
		}
		ws = ws[:0]
		env := d.qrsEnvelope(cond.x, r)
		for _, x := range cond.x {
			if math.IsNaN(x[r]) {
				continue
			}
			ws = append(ws, d.delineate(x, r, next, env, false, !math.IsNaN(next)))
		}
		g := combineLeads(ws, fs, &d.p)
		if g.ok && !math.IsNaN(g.qrsOn) && !math.IsNaN(g.qrsOff) {
			b.QRSOnS = Num(round6(f.time(0) + g.qrsOn/fs))
			b.QRSOffS = Num(round6(f.time(0) + g.qrsOff/fs))
			b.QRSMS = round((g.qrsOff-g.qrsOn)/fs*1000, 1)
			if !math.IsNaN(g.tEnd) {
				b.TEndS = Num(round6(f.time(0) + g.tEnd/fs))
				b.QTMS = round((g.tEnd-g.qrsOn)/fs*1000, 1)
			}
		}
		out[i] = b
	}
	return out
}

func meanSD(v []float64) (mean, sd float64) {
	if len(v) == 0 {
		return math.NaN(), math.NaN()
	}
	for _, x := range v {
		mean += x
	}
	mean /= float64(len(v))
	if len(v) < 2 {
		return mean, math.NaN()
	}
	for _, x := range v {
		sd += (x - mean) * (x - mean)
	}
	return mean, math.Sqrt(sd / float64(len(v)-1))
}

// meanRange is the mean of x[a..b] (inclusive, clipped), NaN if empty or
// if any sample is NaN.
func meanRange(x []float64, a, b int) float64 {
	a, b = max(a, 0), min(b, len(x)-1)
	if b < a {
		return math.NaN()
	}
	s := 0.0
	for i := a; i <= b; i++ {
		s += x[i]
	}
	return s / float64(b-a+1)
}

// extreme returns the value of x[a..b] − base with the largest magnitude.
func extreme(x []float64, a, b int, base float64) float64 {
	a, b = max(a, 0), min(b, len(x)-1)
	best := math.NaN()
	for i := a; i <= b; i++ {
		v := x[i] - base
		if math.IsNaN(best) || math.Abs(v) > math.Abs(best) {
			best = v
		}
	}
	return best
}

func at(x []float64, i int) float64 {
	if i < 0 || i >= len(x) {
		return math.NaN()
	}
	return x[i]
}

func round(v float64, dec int) Num {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return NaN()
	}
	p := math.Pow(10, float64(dec))
	return Num(math.Round(v*p) / p)
}

func round6(v float64) float64 { return math.Round(v*1e6) / 1e6 }

// atrialCheck tests whether the P waves found on the median beats behave
// like sinus (or ectopic atrial) P waves, and returns why not, or "". It
// looks at the lead with the most prominent P wave (|P| / QRS
// peak-to-peak): (1) in atrial fibrillation the "P wave" of the median beat
// is an average of unrelated fibrillatory waves, so the beats' own
// segments correlate poorly with it (median Pearson r < 0.8 over at least
// three beats; sinus P waves of the reference records gave 0.89–0.998); (2) in atrial flutter with a fixed conduction ratio the
// flutter waves are locked to the QRS and survive in the median beat, but
// then further atrial waves fill the T–P segment, which is flat in sinus
// rhythm (peak-to-peak there ≥ half that of the P wave). Criteria chosen
// for this package on the LUDB and QT Database records, not from a
// standard.
func atrialCheck(cond *frame, dom []int, tmpl [][]float64, lw []waves, pre int, rr float64) string {
	fs := cond.fs
	S := func(s float64) int { return int(math.Round(s * fs)) }
	k, best := -1, 0.0
	for i, w := range lw {
		if w.ok && !math.IsNaN(w.pOn) && w.qrsPP > 0 {
			if v := math.Abs(w.pAmp) / w.qrsPP; v > best {
				k, best = i, v
			}
		}
	}
	if k < 0 {
		return ""
	}
	w, x := lw[k], tmpl[k]
	a, b := max(0, int(w.pOn)-S(0.02)), min(len(x)-1, int(w.pOff)+S(0.02))
	seg := x[a : b+1]
	var cs []float64
	for _, r := range dom {
		i0 := r - pre + a
		i1 := i0 + len(seg)
		if i0 < 0 || i1 > cond.n {
			continue
		}
		if c := pearson(cond.x[k][i0:i1], seg); !math.IsNaN(c) {
			cs = append(cs, c)
		}
	}
	if len(cs) >= 3 {
		if m := median(cs); m < 0.8 {
			return fmt.Sprintf("they differ from beat to beat (median correlation %.2f in lead %v; atrial fibrillation?)", m, cond.leads[k])
		}
	}
	if !math.IsNaN(w.tEnd) && rr > 0 {
		start := max(0, int(w.tEnd)-S(rr)+S(0.04))
		end := int(w.pOn) - S(0.04)
		if end-start >= S(0.12) {
			lo, hi := math.Inf(1), math.Inf(-1)
			for i := start; i < end; i++ {
				lo, hi = math.Min(lo, x[i]), math.Max(hi, x[i])
			}
			plo, phi := math.Inf(1), math.Inf(-1)
			for i := int(w.pOn); i <= int(w.pOff); i++ {
				plo, phi = math.Min(plo, x[i]), math.Max(phi, x[i])
			}
			if hi-lo >= 0.5*(phi-plo) {
				return fmt.Sprintf("atrial waves also fill the T–P segment (lead %v; atrial flutter?)", cond.leads[k])
			}
		}
	}
	return ""
}

// ampTemplates returns per-lead median beats for amplitude measurement.
// The delineation signals are low-passed at 40 Hz (which rounds a sharp R
// peak by 10–15 %) and their median-filter baseline follows a sustained
// ST shift in part, so amplitudes are taken from the recorded samples
// instead: each beat's window is referred to a baseline drawn straight
// between the PR-segment levels (16 ms ending 10 ms before the QRS onset)
// of consecutive beats — the isoelectric-knot method, common practice —
// and the median over the dominant beats is taken, with no further
// filtering (the record's own bandwidth; the median suppresses noise). Leads without a QRS onset fall
// back to the delineation median beat.
func ampTemplates(f *frame, all, dom []int, gl []waves, pre, post int, o *Options) [][]float64 {
	fs := f.fs
	S := func(s float64) int { return int(math.Round(s * fs)) }
	out := make([][]float64, len(f.x))
	step := 1.0
	if len(dom) > o.MaxTemplateBeats {
		step = float64(len(dom)) / float64(o.MaxTemplateBeats)
	}
	var use []int
	for k := 0.0; int(k) < len(dom); k += step {
		use = append(use, dom[int(k)])
	}
	m := pre + post + 1
	for k, x := range f.x {
		g := gl[k]
		if !g.ok || math.IsNaN(g.qrsOn) {
			continue
		}
		onRel := int(g.qrsOn) - pre
		// Knots at every detected beat.
		var kp []int
		var kv []float64
		for _, r := range all {
			c := r + onRel - S(0.018)
			if v := meanRange(x, c-S(0.008), c+S(0.008)); !math.IsNaN(v) && c-S(0.008) >= 0 && c+S(0.008) < len(x) {
				kp, kv = append(kp, c), append(kv, v)
			}
		}
		if len(kp) == 0 {
			continue
		}
		base := func(i int) float64 {
			j, _ := slices.BinarySearch(kp, i)
			switch {
			case j == 0:
				return kv[0]
			case j >= len(kp):
				return kv[len(kv)-1]
			}
			a, b := kp[j-1], kp[j]
			w := float64(i-a) / float64(b-a)
			return kv[j-1]*(1-w) + kv[j]*w
		}
		t := make([]float64, m)
		col := make([]float64, 0, len(use))
		for j := 0; j < m; j++ {
			col = col[:0]
			for _, r := range use {
				i := r - pre + j
				if i >= 0 && i < len(x) && !math.IsNaN(x[i]) {
					col = append(col, x[i]-base(i))
				}
			}
			t[j] = median(col)
		}
		out[k] = t
	}
	return out
}
