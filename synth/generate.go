package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"

	"tracelift/ecg"
)

// placement is one wave group of one beat: the template, the reference
// time (s, record time base) and the time scale.
type placement struct {
	g      *group
	ref, s float64
}

// morphology holds a record's templates, measured at unit scale.
type morphology struct {
	pSinus, pAtrial, qrsN, tN, qrsV, tV group
	qrsVDur                             float64 // s
}

// Generate returns a synthetic 12-lead record (ecg.Standard12 order, Start
// 0, Meta.Source "synthetic") and its true beats in rec.Beats: every beat
// whose R time lies in [0, DurationS), with fiducials outside the record
// set to NaN. The same parameters and seed give identical output.
// Parameter errors wrap ErrParams.
func Generate(p Params, seed uint64) (ecg.Record, error) {
	r, err := resolve(p)
	if err != nil {
		return ecg.Record{}, err
	}
	rng := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))

	m := morphology{pSinus: sinusP(), pAtrial: ectopicP()}
	m.qrsN, m.tN = withAxis(normalQRS(), normalT(), r.AxisDeg)
	m.qrsV = ventricularQRS(rng.IntN(2) == 0, 2*rng.Float64()-1)
	m.tV = discordantT(m.qrsV, 0.3)
	m.qrsVDur = 0.13 + 0.03*rng.Float64()
	for _, g := range []*group{&m.pSinus, &m.pAtrial, &m.qrsN, &m.tN, &m.qrsV, &m.tV} {
		g.measure()
	}

	rTimes := rhythm(r, rng)
	classes := ectopics(r, rng, rTimes)
	// Breathing moves the heart against the electrodes: each beat's
	// amplitude follows a slow sine (drawn only when asked for, so records
	// without it are unchanged).
	respF, respPh := 0.0, 0.0
	if r.RespirationPct > 0 {
		respF, respPh = 0.2+0.13*rng.Float64(), 2*math.Pi*rng.Float64()
	}

	n := int(math.Round(r.DurationS * r.SampleRate))
	var h [3][]float64
	for k := range h {
		h[k] = make([]float64, n)
	}
	var beats []ecg.Beat
	for k, tr := range rTimes {
		rrPrev := r.rr
		if k > 0 {
			rrPrev = tr - rTimes[k-1]
		}
		b, pl := beat(r, &m, classes[k], tr, rrPrev)
		amp := r.AmplitudeScale * (1 + r.RespirationPct/100*math.Sin(2*math.Pi*respF*tr+respPh))
		for _, q := range pl {
			if q.g != nil {
				add(h, q, r.SampleRate, amp)
			}
		}
		if tr >= 0 && tr < r.DurationS {
			clip(&b, r.DurationS)
			beats = append(beats, b)
		}
	}

	rec := ecg.Record{Meta: ecg.Metadata{Source: "synthetic",
		Notes: []string{fmt.Sprintf("synth seed %d: %g bpm, axis %g°, PR %.0f ms, QRS %.0f ms, QT %.0f ms",
			seed, r.HeartRateBPM, r.AxisDeg, 1000*r.pr, 1000*r.qrs, 1000*r.qt)}},
		Beats: beats}
	recorded := []int{0, 1, 6, 7, 8, 9, 10, 11} // I, II, V1–V6
	sig := make(map[ecg.Lead]ecg.Signal, 12)
	for _, li := range recorded {
		lv := leadVec[li]
		x := make([]float64, n)
		for i := range x {
			x[i] = lv[0]*h[0][i] + lv[1]*h[1][i] + lv[2]*h[2][i]
		}
		addNoise(x, r, rng)
		l := ecg.Standard12[li]
		sig[l] = ecg.Signal{Lead: l, SampleRate: r.SampleRate, Start: 0, Samples: x}
	}
	derived, err := ecg.DeriveLimb(sig[ecg.LeadI], sig[ecg.LeadII])
	if err != nil {
		return ecg.Record{}, fmt.Errorf("synth: %w", err)
	}
	for _, s := range derived {
		sig[s.Lead] = s
	}
	for _, l := range ecg.Standard12 {
		rec.Signals = append(rec.Signals, sig[l])
	}
	return rec, nil
}

// rhythm returns the R times of sinus beats covering [-2 s, D + 2 s]. The
// RR series is McSharry's: a sum of sinusoids with random phases whose
// power spectrum is the sum of two Gaussians (0.1 Hz and 0.25 Hz, SD
// 0.01 Hz, LF/HF = 0.5), normalised to zero mean and the requested SD
// over the generated beats.
func rhythm(r resolved, rng *rand.Rand) []float64 {
	// 25 % spare: premature atrial beats reset the rhythm and pull every
	// later beat earlier (at most 0.35 RR per ectopic, ≤ 30 % ectopics).
	nb := int(math.Ceil(1.25*(r.DurationS+4)/r.rr)) + 2
	rr := make([]float64, nb)
	for k := range rr {
		rr[k] = r.rr
	}
	if r.HRVStdMS > 0 {
		const f1, f2, c1, c2, lfhf = 0.1, 0.25, 0.01, 0.01, 0.5
		type comp struct{ f, a, ph float64 }
		var cs []comp
		for j := 1; j <= 100; j++ {
			f := 0.005 * float64(j)
			s := lfhf*math.Exp(-(f-f1)*(f-f1)/(2*c1*c1))/c1 + math.Exp(-(f-f2)*(f-f2)/(2*c2*c2))/c2
			cs = append(cs, comp{f, math.Sqrt(s), 2 * math.Pi * rng.Float64()})
		}
		g := make([]float64, nb)
		mean := 0.0
		for k := range g {
			t := float64(k) * r.rr
			for _, c := range cs {
				g[k] += c.a * math.Sin(2*math.Pi*c.f*t+c.ph)
			}
			mean += g[k]
		}
		mean /= float64(nb)
		ss := 0.0
		for k := range g {
			g[k] -= mean
			ss += g[k] * g[k]
		}
		sd := math.Sqrt(ss / float64(nb))
		for k := range rr {
			if sd > 0 {
				rr[k] = r.rr + r.HRVStdMS/1000*g[k]/sd
			}
		}
	}
	t := make([]float64, nb)
	t[0] = -2 + r.rr*rng.Float64()
	for k := 1; k < nb; k++ {
		t[k] = t[k-1] + rr[k]
	}
	return t
}

// ectopics makes round(EctopicRate × beats in [0, D)) of the beats in
// [0, D) premature, never two in a row nor the first beat: each is
// ventricular or atrial with equal chance. A ventricular beat comes at
// 55–65 % of the RR interval and the sinus rhythm continues (compensatory
// pause); an atrial beat comes at 65–75 % and resets the rhythm, pulling
// the later beats earlier, so beats are added until the count is met. It
// changes t in place and returns each beat's class.
func ectopics(r resolved, rng *rand.Rand, t []float64) []ecg.BeatClass {
	cl := make([]ecg.BeatClass, len(t))
	for k := range cl {
		cl[k] = ecg.BeatNormal
	}
	if r.EctopicRate == 0 {
		return cl
	}
	for range 20 {
		var cand []int
		visible, have, first := 0, 0, -1
		for k := 1; k < len(t)-1; k++ {
			if t[k] < 0 || t[k] >= r.DurationS {
				continue
			}
			visible++
			if first < 0 {
				first = k
			}
			if cl[k] != ecg.BeatNormal {
				have++
			} else if k != first && cl[k-1] == ecg.BeatNormal && cl[k+1] == ecg.BeatNormal {
				cand = append(cand, k)
			}
		}
		want := int(math.Round(r.EctopicRate*float64(visible))) - have
		if want <= 0 || len(cand) == 0 {
			break
		}
		rng.Shuffle(len(cand), func(i, j int) { cand[i], cand[j] = cand[j], cand[i] })
		var picked []int
		for _, k := range cand {
			if len(picked) == want {
				break
			}
			if slices.Contains(picked, k-1) || slices.Contains(picked, k+1) {
				continue
			}
			picked = append(picked, k)
		}
		sort.Ints(picked)
		for _, k := range picked {
			rrk := t[k] - t[k-1]
			if rng.IntN(2) == 0 {
				cl[k] = ecg.BeatVentricular
				t[k] = t[k-1] + (0.55+0.1*rng.Float64())*rrk
				continue
			}
			cl[k] = ecg.BeatAtrial
			d := t[k-1] + (0.65+0.1*rng.Float64())*rrk - t[k]
			for j := k; j < len(t); j++ {
				t[j] += d
			}
		}
	}
	return cl
}

// beat places one beat's wave groups and returns its true fiducials.
func beat(r resolved, m *morphology, c ecg.BeatClass, tr, rrPrev float64) (ecg.Beat, [3]placement) {
	b := ecg.NewBeat(c, tr)
	qt := r.qt * math.Cbrt(rrPrev/r.rr)
	qrsG, tG, qrs, tFrac := &m.qrsN, &m.tN, r.qrs, 0.66
	if c == ecg.BeatVentricular {
		qrsG, tG, qrs, tFrac = &m.qrsV, &m.tV, m.qrsVDur, 0.8
		qt += qrs - r.qrs
	}
	var pl [3]placement
	sQ := qrs / qrsG.width()
	pl[1] = placement{qrsG, tr, sQ}
	b.QRSOn, b.QRSOff = tr+sQ*qrsG.on, tr+sQ*qrsG.off

	td := tFrac * (qt - qrs)
	sT := td / tG.width()
	b.TEnd = b.QRSOn + qt
	tref := b.TEnd - sT*tG.off
	pl[2] = placement{tG, tref, sT}
	b.TPeak = tref + sT*tG.peak

	if c != ecg.BeatVentricular {
		pG := &m.pSinus
		if c == ecg.BeatAtrial {
			pG = &m.pAtrial
		}
		sP := r.pdur / pG.width()
		b.POn = b.QRSOn - r.pr
		pref := b.POn - sP*pG.on
		pl[0] = placement{pG, pref, sP}
		b.PPeak, b.POff = pref+sP*pG.peak, pref+sP*pG.off
	}
	return b, pl
}

// add accumulates a placed group into the heart-vector arrays h, sampled at
// fs Hz from t = 0, with amplitude scale a.
func add(h [3][]float64, q placement, fs, a float64) {
	n := len(h[0])
	for _, w := range q.g.waves {
		c, sd := q.ref+q.s*w.c, q.s*w.sigma
		lo := max(0, int(math.Ceil((c-6*sd)*fs)))
		hi := min(n-1, int(math.Floor((c+6*sd)*fs)))
		inv := 1 / (2 * sd * sd)
		for i := lo; i <= hi; i++ {
			d := float64(i)/fs - c
			e := a * math.Exp(-d*d*inv)
			h[0][i] += w.v[0] * e
			h[1][i] += w.v[1] * e
			h[2][i] += w.v[2] * e
		}
	}
}

// addNoise adds baseline wander, mains interference and white noise to one
// recorded lead.
func addNoise(x []float64, r resolved, rng *rand.Rand) {
	fs := r.SampleRate
	if r.BaselineWanderMV > 0 {
		// One respiratory component (0.15–0.4 Hz) and two slower drifts
		// (0.05–0.15 Hz); weights sum to one so the peak is at most the
		// requested amplitude.
		f := [3]float64{0.15 + 0.25*rng.Float64(), 0.05 + 0.1*rng.Float64(), 0.05 + 0.1*rng.Float64()}
		w := [3]float64{0.5 + rng.Float64(), rng.Float64(), rng.Float64()}
		ph := [3]float64{2 * math.Pi * rng.Float64(), 2 * math.Pi * rng.Float64(), 2 * math.Pi * rng.Float64()}
		sw := w[0] + w[1] + w[2]
		for i := range x {
			t := float64(i) / fs
			for j := range 3 {
				x[i] += r.BaselineWanderMV * w[j] / sw * math.Sin(2*math.Pi*f[j]*t+ph[j])
			}
		}
	}
	if r.PowerlineMV > 0 {
		ph := 2 * math.Pi * rng.Float64()
		for i := range x {
			x[i] += r.PowerlineMV * math.Sin(2*math.Pi*r.PowerlineHz*float64(i)/fs+ph)
		}
	}
	if r.NoiseMV > 0 {
		for i := range x {
			x[i] += r.NoiseMV * rng.NormFloat64()
		}
	}
}

// clip sets fiducials outside [0, d) to NaN.
func clip(b *ecg.Beat, d float64) {
	for _, p := range []*float64{&b.POn, &b.PPeak, &b.POff, &b.QRSOn, &b.QRSOff, &b.TPeak, &b.TEnd} {
		if *p < 0 || *p >= d {
			*p = math.NaN()
		}
	}
}
