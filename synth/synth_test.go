package synth

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"tracelift/ecg"
)

func gen(t *testing.T, p Params, seed uint64) ecg.Record {
	t.Helper()
	rec, err := Generate(p, seed)
	if err != nil {
		t.Fatalf("Generate: %v", err)
	}
	return rec
}

// leadEnvelope returns the function giving the largest |amplitude| (mV) over
// rec's leads at sample i.
func leadEnvelope(rec ecg.Record) func(i int) float64 {
	return func(i int) float64 {
		m := 0.0
		for _, s := range rec.Signals {
			m = max(m, math.Abs(s.Samples[i]))
		}
		return m
	}
}

// globalFiducials measures a beat's wave boundaries back from a noise-free
// record, independently of the generator's bookkeeping: the envelope is the
// largest |amplitude| over the twelve leads at each sample, and each wave
// (T searched before the next beat's QRS, rr s after this one)
// spans the samples around its envelope peak that stay at or above 5 % of
// that peak (the global earliest-onset / latest-offset rule of standards.md
// §4.4, with the threshold the package documents).
type measured struct{ pOn, qrsOn, qrsOff, tOn, tEnd float64 }

func measureBeat(rec ecg.Record, rTime, rr float64) measured {
	fs := rec.Signals[0].SampleRate
	n := len(rec.Signals[0].Samples)
	env := leadEnvelope(rec)
	idx := func(t float64) int { return min(n-1, max(0, int(math.Round(t*fs)))) }
	// wave finds the envelope peak in [a, b] s and walks out to 5 %.
	wave := func(a, b float64) (on, off float64) {
		ip, pk := idx(a), 0.0
		for i := idx(a); i <= idx(b); i++ {
			if e := env(i); e > pk {
				ip, pk = i, e
			}
		}
		thr := onsetFrac * pk
		lo, hi := ip, ip
		for lo > 0 && env(lo-1) >= thr {
			lo--
		}
		for hi < n-1 && env(hi+1) >= thr {
			hi++
		}
		return float64(lo) / fs, float64(hi) / fs
	}
	var m measured
	m.qrsOn, m.qrsOff = wave(rTime-0.01, rTime+0.01)
	m.tOn, m.tEnd = wave(m.qrsOff+0.06, m.qrsOn+min(0.6, rr-0.1))
	m.pOn, _ = wave(m.qrsOn-0.22, m.qrsOn-0.03)
	return m
}

// midBeat returns a normal beat with all fiducials inside the record.
func midBeat(t *testing.T, rec ecg.Record) ecg.Beat {
	t.Helper()
	for _, b := range rec.Beats[1:] {
		if b.Class == ecg.BeatNormal && !math.IsNaN(b.POn) && !math.IsNaN(b.TEnd) && b.TEnd < 9 {
			return b
		}
	}
	t.Fatal("no complete normal beat")
	return ecg.Beat{}
}

// Einthoven (II = I + III) and Goldberger (aVR + aVL + aVF = 0, aVR =
// −(I+II)/2, aVL = I − II/2, aVF = II − I/2) hold by construction of the
// lead systems (common practice; standards.md §1.3), noise included.
func TestLimbLaws(t *testing.T) {
	p := Default()
	p.NoiseMV, p.BaselineWanderMV, p.PowerlineMV, p.HRVStdMS, p.EctopicRate = 0.05, 0.4, 0.1, 40, 0.1
	rec := gen(t, p, 3)
	if len(rec.Signals) != 12 || rec.Meta.Source != "synthetic" {
		t.Fatalf("got %d signals, source %q", len(rec.Signals), rec.Meta.Source)
	}
	for i, l := range ecg.Standard12 {
		if rec.Signals[i].Lead != l || rec.Signals[i].Start != 0 || len(rec.Signals[i].Samples) != 5000 {
			t.Fatalf("signal %d: lead %v start %g len %d", i, rec.Signals[i].Lead, rec.Signals[i].Start, len(rec.Signals[i].Samples))
		}
	}
	s := func(l ecg.Lead) []float64 { return rec.Signal(l).Samples }
	I, II, III, aVR, aVL, aVF := s(ecg.LeadI), s(ecg.LeadII), s(ecg.LeadIII), s(ecg.LeadAVR), s(ecg.LeadAVL), s(ecg.LeadAVF)
	worst := 0.0
	for k := range I {
		for _, d := range []float64{
			II[k] - (I[k] + III[k]),
			aVR[k] + (I[k]+II[k])/2,
			aVL[k] - (I[k] - II[k]/2),
			aVF[k] - (II[k] - I[k]/2),
			aVR[k] + aVL[k] + aVF[k],
		} {
			worst = max(worst, math.Abs(d))
		}
	}
	if worst > 1e-3 { // 1 µV in mV
		t.Errorf("largest limb-law residual %.3g mV, want ≤ 1 µV", worst)
	}
	if c, ok := ecg.CheckLimb(&rec); !ok || c.ResidualUV > 1 {
		t.Errorf("CheckLimb residual %.3g µV (ok=%v), want ≤ 1 µV", c.ResidualUV, ok)
	}
}

// HR = 60/RR (standards.md §2.1) from the true R times.
func TestHeartRate(t *testing.T) {
	for _, hr := range []float64{40, 60, 72, 100, 150} {
		p := Default()
		p.HeartRateBPM, p.DurationS = hr, 30
		rec := gen(t, p, 1)
		b := rec.Beats
		got := 60 * float64(len(b)-1) / (b[len(b)-1].R - b[0].R)
		if math.Abs(got-hr) > 1 {
			t.Errorf("%g bpm requested: %.2f bpm from %d R times", hr, got, len(b))
		}
	}
	// With variability the mean rate over a long record still matches and
	// the RR standard deviation is the requested one (McSharry 2003: RR
	// series scaled to the requested SD).
	p := Default()
	p.HeartRateBPM, p.DurationS, p.HRVStdMS = 65, 300, 50
	rec := gen(t, p, 2)
	var rr []float64
	for k := 1; k < len(rec.Beats); k++ {
		rr = append(rr, rec.Beats[k].R-rec.Beats[k-1].R)
	}
	mean, sd := meanSD(rr)
	if math.Abs(60/mean-65) > 1 {
		t.Errorf("HRV record: %.2f bpm, want 65 ± 1", 60/mean)
	}
	if math.Abs(1000*sd-50) > 5 {
		t.Errorf("HRV record: RR SD %.1f ms, want 50 ± 5", 1000*sd)
	}
}

func meanSD(x []float64) (mean, sd float64) {
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	for _, v := range x {
		sd += (v - mean) * (v - mean)
	}
	return mean, math.Sqrt(sd / float64(len(x)))
}

// Rules of thumb (common practice; standards.md §2.1): QT ≈ 0.40 s at
// 60 bpm, ST segment (QRS offset → T onset) ≈ 0.08–0.12 s, QT shortens as
// the rate rises.
func TestQTAndSTAtSixty(t *testing.T) {
	p := Default()
	p.HeartRateBPM, p.SampleRate = 60, 1000
	rec := gen(t, p, 5)
	b := midBeat(t, rec)
	m := measureBeat(rec, b.R, 60/p.HeartRateBPM)
	qt := m.tEnd - m.qrsOn
	st := m.tOn - m.qrsOff
	if qt < 0.36 || qt > 0.44 {
		t.Errorf("QT at 60 bpm %.3f s, want 0.36–0.44", qt)
	}
	if st < 0.08 || st > 0.12 {
		t.Errorf("ST segment at 60 bpm %.3f s, want 0.08–0.12", st)
	}
	t.Logf("60 bpm: QT %.1f ms, ST segment %.1f ms", 1000*qt, 1000*st)
	prevQT := qt
	for _, hr := range []float64{80, 100, 115} {
		p.HeartRateBPM = hr
		rec := gen(t, p, 5)
		b := midBeat(t, rec)
		m := measureBeat(rec, b.R, 60/p.HeartRateBPM)
		q := m.tEnd - m.qrsOn
		if q >= prevQT {
			t.Errorf("QT at %g bpm %.3f s not shorter than %.3f s at the slower rate", hr, q, prevQT)
		}
		prevQT = q
	}
}

// Requested PR, QRS and QT come back from the signals within 4 ms (the
// global-interval tolerances of IEC 60601-2-25 are ±10 ms for PR, ±6 ms for
// QRS and ±25 ms for QT, standards.md §3, from memory there).
func TestRequestedIntervals(t *testing.T) {
	cases := []struct {
		name            string
		hr, pr, qrs, qt float64 // bpm, ms
	}{
		{"short PR, narrow", 75, 120, 80, 360},
		{"long PR", 60, 220, 100, 420},
		{"wide QRS", 70, 180, 130, 400},
		{"tachycardia", 110, 140, 86, 300},
		{"defaults", 70, 0, 0, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := Default()
			p.HeartRateBPM, p.PRMS, p.QRSMS, p.QTMS, p.SampleRate = c.hr, c.pr, c.qrs, c.qt, 1000
			rec := gen(t, p, 11)
			want := [3]float64{c.pr, c.qrs, c.qt}
			if c.pr == 0 {
				want = [3]float64{160, 90, 400 * math.Cbrt(60/c.hr)}
			}
			b := midBeat(t, rec)
			truth := [3]float64{b.QRSOn - b.POn, b.QRSOff - b.QRSOn, b.TEnd - b.QRSOn}
			m := measureBeat(rec, b.R, 60/p.HeartRateBPM)
			got := [3]float64{m.qrsOn - m.pOn, m.qrsOff - m.qrsOn, m.tEnd - m.qrsOn}
			t.Logf("measured PR %.1f QRS %.1f QT %.1f ms; requested %.1f %.1f %.1f", 1000*got[0], 1000*got[1], 1000*got[2], want[0], want[1], want[2])
			for k, name := range []string{"PR", "QRS", "QT"} {
				if d := math.Abs(1000*truth[k] - want[k]); d > 0.1 {
					t.Errorf("%s in beat truth %.2f ms, want %.1f", name, 1000*truth[k], want[k])
				}
				if d := math.Abs(1000*got[k] - want[k]); d > 4 {
					t.Errorf("%s measured %.1f ms, want %.1f ± 4", name, 1000*got[k], want[k])
				}
			}
		})
	}
}

// netQRS returns largest positive + largest negative deflection of lead l
// within the beat's QRS (standards.md §2.3, "net amplitude").
func netQRS(rec ecg.Record, l ecg.Lead, b ecg.Beat) (net, pos, neg float64) {
	s := rec.Signal(l)
	for i := int(math.Ceil(b.QRSOn * s.SampleRate)); float64(i) <= b.QRSOff*s.SampleRate; i++ {
		pos, neg = max(pos, s.Samples[i]), min(neg, s.Samples[i])
	}
	return pos + neg, pos, neg
}

// Frontal axis θ = atan2(2·aVF, √3·I) from net QRS amplitudes
// (standards.md §2.3) within 10° of the request.
func TestAxis(t *testing.T) {
	for _, ax := range []float64{-150, -90, -60, -30, 0, 30, 60, 75, 90, 120, 160, 180} {
		p := Default()
		p.AxisDeg = ax
		rec := gen(t, p, 4)
		b := midBeat(t, rec)
		nI, _, _ := netQRS(rec, ecg.LeadI, b)
		nF, _, _ := netQRS(rec, ecg.LeadAVF, b)
		got := math.Atan2(2*nF, math.Sqrt(3)*nI) * 180 / math.Pi
		t.Logf("axis %g°: measured %.1f°", ax, got)
		if d := math.Abs(math.Remainder(got-ax, 360)); d > 10 {
			t.Errorf("axis %g° requested, measured %.1f°", ax, got)
		}
	}
}

// Textbook morphology of a normal adult 12-lead (common practice): R in II
// about 1–1.5 mV, aVR mostly negative, V1 rS, V6 qR, R grows from V1 to
// V4/V5, T upright in II and V5 and inverted in aVR.
func TestMorphology(t *testing.T) {
	rec := gen(t, Default(), 9)
	b := midBeat(t, rec)
	_, rII, _ := netQRS(rec, ecg.LeadII, b)
	if rII < 1 || rII > 1.5 {
		t.Errorf("R in II %.2f mV, want 1–1.5", rII)
	}
	if n, _, _ := netQRS(rec, ecg.LeadAVR, b); n >= 0 {
		t.Errorf("aVR net QRS %.2f mV, want negative", n)
	}
	if _, r, s := netQRS(rec, ecg.LeadV1, b); r <= 0.05 || -s < 2*r {
		t.Errorf("V1 r %.2f S %.2f mV: want small r, deep S", r, s)
	}
	if _, r, q := netQRS(rec, ecg.LeadV6, b); q >= -0.02 || r < 4*(-q) {
		t.Errorf("V6 q %.2f R %.2f mV: want small q, tall R", q, r)
	}
	var rs []float64
	for _, l := range []ecg.Lead{ecg.LeadV1, ecg.LeadV2, ecg.LeadV3, ecg.LeadV4} {
		_, r, _ := netQRS(rec, l, b)
		rs = append(rs, r)
	}
	for k := 1; k < len(rs); k++ {
		if rs[k] <= rs[k-1] {
			t.Errorf("R progression V1–V4 %.2f mV not increasing", rs)
			break
		}
	}
	// Transition zone (net QRS changes sign) at V3–V4 in most normal
	// adults (common practice).
	var net []float64
	for _, l := range ecg.Standard12[6:] {
		n, _, _ := netQRS(rec, l, b)
		net = append(net, n)
	}
	if net[0] >= 0 || net[1] >= 0 || net[4] <= 0 || net[5] <= 0 || (net[2] >= 0 && net[3] >= 0) || (net[2] < 0 && net[3] < 0) {
		t.Errorf("chest net QRS %.2f mV: want negative V1–V2, positive V5–V6, transition at V3/V4", net)
	}
	tAt := func(l ecg.Lead) float64 { return rec.Signal(l).At(b.TPeak) }
	if tAt(ecg.LeadII) <= 0.1 || tAt(ecg.LeadV5) <= 0.1 || tAt(ecg.LeadAVR) >= -0.05 {
		t.Errorf("T at peak: II %.2f, V5 %.2f, aVR %.2f mV", tAt(ecg.LeadII), tAt(ecg.LeadV5), tAt(ecg.LeadAVR))
	}
}

func TestSeed(t *testing.T) {
	p := Default()
	p.NoiseMV, p.HRVStdMS, p.EctopicRate, p.BaselineWanderMV = 0.02, 30, 0.1, 0.2
	a, b, c := gen(t, p, 42), gen(t, p, 42), gen(t, p, 43)
	same, diff := true, false
	for i := range a.Signals {
		for k := range a.Signals[i].Samples {
			same = same && a.Signals[i].Samples[k] == b.Signals[i].Samples[k]
			diff = diff || a.Signals[i].Samples[k] != c.Signals[i].Samples[k]
		}
	}
	if !same || len(a.Beats) != len(b.Beats) {
		t.Error("same seed gave different records")
	}
	if !diff {
		t.Error("different seeds gave identical records")
	}
}

// Premature beats: ventricular ones are wide (QRS ≥ 120 ms, the
// complete-block threshold of standards.md §2.1 used here as a width test),
// lack P and have a T opposite to the QRS; atrial ones keep a P; both come
// early.
func TestEctopics(t *testing.T) {
	for _, rate := range []float64{0.05, 0.12, 0.3} {
		p := Default()
		p.DurationS, p.EctopicRate = 300, rate
		t.Run(fmt.Sprint(rate), func(t *testing.T) { checkEctopics(t, p) })
	}
}

func checkEctopics(t *testing.T, p Params) {
	rec := gen(t, p, 8)
	// Beats fill the record to its end even when atrial ectopics pull the
	// rhythm earlier.
	if last := rec.Beats[len(rec.Beats)-1].R; last < p.DurationS-60/p.HeartRateBPM {
		t.Errorf("last beat at %.1f s of %g s", last, p.DurationS)
	}
	var nV, nA int
	for k, b := range rec.Beats {
		if k == 0 || b.Class == ecg.BeatNormal {
			continue
		}
		rr := b.R - rec.Beats[k-1].R
		if rr > 0.8*60/p.HeartRateBPM {
			t.Errorf("beat %d (%c) not premature: RR %.3f s", k, b.Class, rr)
		}
		switch b.Class {
		case ecg.BeatVentricular:
			nV++
			if !math.IsNaN(b.POn) || b.QRSOff-b.QRSOn < 0.12 {
				t.Errorf("V beat %d: POn %g, QRS %.0f ms", k, b.POn, 1000*(b.QRSOff-b.QRSOn))
			}
			// Discordance in the lead with the largest QRS deflection.
			best, sign := 0.0, 0.0
			for _, l := range ecg.Standard12 {
				if n, _, _ := netQRS(rec, l, b); math.Abs(n) > best {
					best, sign = math.Abs(n), n*rec.Signal(l).At(b.TPeak)
				}
			}
			if sign >= 0 {
				t.Errorf("V beat %d: T not discordant", k)
			}
		case ecg.BeatAtrial:
			nA++
			if math.IsNaN(b.POn) || b.QRSOff-b.QRSOn > 0.1 {
				t.Errorf("A beat %d: POn %g, QRS %.0f ms", k, b.POn, 1000*(b.QRSOff-b.QRSOn))
			}
		default:
			t.Errorf("beat %d: class %c", k, b.Class)
		}
	}
	frac := float64(nV+nA) / float64(len(rec.Beats))
	t.Logf("%d beats: %d V, %d A, fraction %.4f", len(rec.Beats), nV, nA, frac)
	if math.Abs(frac-p.EctopicRate) > 1/float64(len(rec.Beats)) || nV == 0 || nA == 0 {
		t.Errorf("ectopic fraction %.3f (V %d, A %d of %d), want %.2f", frac, nV, nA, len(rec.Beats), p.EctopicRate)
	}
}

func TestNoiseLevels(t *testing.T) {
	clean := gen(t, Default(), 6)
	p := Default()
	p.NoiseMV = 0.05
	noisy := gen(t, p, 6)
	d := make([]float64, 0, 5000)
	a, b := clean.Signal(ecg.LeadV2).Samples, noisy.Signal(ecg.LeadV2).Samples
	for k := range a {
		d = append(d, b[k]-a[k])
	}
	_, sd := meanSD(d)
	if math.Abs(sd-0.05) > 0.005 {
		t.Errorf("noise RMS %.4f mV, want 0.05 ± 10 %%", sd)
	}
}

// Baseline wander stays below its stated peak and below 0.5 Hz; mains
// interference is a sine of the stated amplitude and frequency.
func TestWanderAndMains(t *testing.T) {
	clean := gen(t, Default(), 6)
	p := Default()
	p.BaselineWanderMV = 0.3
	wander := gen(t, p, 6)
	p = Default()
	p.PowerlineMV, p.PowerlineHz = 0.05, 60
	mains := gen(t, p, 6)
	for _, l := range []ecg.Lead{ecg.LeadI, ecg.LeadV4} {
		a, w, m := clean.Signal(l).Samples, wander.Signal(l).Samples, mains.Signal(l).Samples
		peak, maxStep := 0.0, 0.0
		var re, im float64
		for k := range a {
			d := w[k] - a[k]
			peak = max(peak, math.Abs(d))
			if k > 0 {
				maxStep = max(maxStep, math.Abs(d-(w[k-1]-a[k-1])))
			}
			e := m[k] - a[k]
			tt := float64(k) / 500
			re += e * math.Cos(2*math.Pi*60*tt)
			im += e * math.Sin(2*math.Pi*60*tt)
		}
		// A sum of sines of total amplitude A below 0.5 Hz changes by at
		// most 2π·0.5·A/fs per sample.
		if peak > 0.3+1e-9 || peak < 0.1 || maxStep > 2*math.Pi*0.5*0.3/500 {
			t.Errorf("%v wander: peak %.3f mV, largest step %.2g mV", l, peak, maxStep)
		}
		amp := 2 * math.Hypot(re, im) / float64(len(a))
		if math.Abs(amp-0.05) > 0.001 {
			t.Errorf("%v mains: 60 Hz amplitude %.4f mV, want 0.05", l, amp)
		}
	}
}

// Respiratory modulation: R amplitude in II swings by the requested
// fraction at a breathing rate of 12–20 per minute; without it every beat
// is the same.
func TestRespiration(t *testing.T) {
	p := Default()
	p.DurationS = 30
	flat := gen(t, p, 14)
	p.RespirationPct = 10
	resp := gen(t, p, 14)
	rAmp := func(rec ecg.Record) []float64 {
		var out []float64
		for _, b := range rec.Beats {
			if !math.IsNaN(b.QRSOn) && !math.IsNaN(b.QRSOff) {
				_, r, _ := netQRS(rec, ecg.LeadII, b)
				out = append(out, r)
			}
		}
		return out
	}
	f, m := rAmp(flat), rAmp(resp)
	lo, hi := slices.Min(f), slices.Max(f)
	if hi-lo > 0.005*hi {
		t.Errorf("unmodulated R amplitudes vary %.3f–%.3f mV", lo, hi)
	}
	mlo, mhi := slices.Min(m), slices.Max(m)
	swing := (mhi - mlo) / (mhi + mlo) // ≈ modulation depth
	t.Logf("R in II %.3f–%.3f mV, depth %.3f", mlo, mhi, swing)
	if swing < 0.07 || swing > 0.105 {
		t.Errorf("modulation depth %.3f, want about 0.10", swing)
	}
	// Sign changes of (R − mean) give the breathing rate.
	mean, _ := meanSD(m)
	cross := 0
	for k := 1; k < len(m); k++ {
		if (m[k]-mean)*(m[k-1]-mean) < 0 {
			cross++
		}
	}
	if rate := float64(cross) / 2 / p.DurationS * 60; rate < 10 || rate > 22 {
		t.Errorf("breathing rate %.1f/min from %d crossings, want 12–20", rate, cross)
	}
}

func TestBadParams(t *testing.T) {
	mod := func(f func(*Params)) Params { p := Default(); f(&p); return p }
	cases := map[string]Params{
		"negative rate":   mod(func(p *Params) { p.HeartRateBPM = -5 }),
		"rate too high":   mod(func(p *Params) { p.HeartRateBPM = 400 }),
		"QT over RR":      mod(func(p *Params) { p.HeartRateBPM = 150; p.QTMS = 450 }),
		"negative noise":  mod(func(p *Params) { p.NoiseMV = -1 }),
		"NaN duration":    mod(func(p *Params) { p.DurationS = math.NaN() }),
		"ectopic rate":    mod(func(p *Params) { p.EctopicRate = 0.9 }),
		"PR below P":      mod(func(p *Params) { p.PRMS = 60 }),
		"QRS too wide":    mod(func(p *Params) { p.QRSMS = 400 }),
		"mains > Nyquist": mod(func(p *Params) { p.SampleRate = 80; p.PowerlineMV = 0.1; p.PowerlineHz = 60 }),
		"sample rate":     mod(func(p *Params) { p.SampleRate = 10 }),
		"HRV too large":   mod(func(p *Params) { p.HRVStdMS = 500 }),
		"no samples":      mod(func(p *Params) { p.DurationS = 0.001 }),
		"respiration":     mod(func(p *Params) { p.RespirationPct = 50 }),
	}
	for name, p := range cases {
		if _, err := Generate(p, 1); !errors.Is(err, ErrParams) {
			t.Errorf("%s: err = %v, want ErrParams", name, err)
		}
	}
	if _, err := Generate(Params{}, 1); err != nil {
		t.Errorf("zero Params: %v", err)
	}
	// Defaults are valid across the whole accepted rate range.
	for hr := 20.0; hr <= 220; hr += 10 {
		p := Default()
		p.HeartRateBPM, p.DurationS = hr, 3
		if _, err := Generate(p, 1); err != nil {
			t.Errorf("%g bpm with default intervals: %v", hr, err)
		}
	}
}

func BenchmarkGenerate10s(b *testing.B) {
	p := Default()
	p.NoiseMV, p.BaselineWanderMV = 0.02, 0.2
	for b.Loop() {
		if _, err := Generate(p, 1); err != nil {
			b.Fatal(err)
		}
	}
}

// McSharry et al. 2003 give the RR tachogram a bimodal spectrum: a
// Mayer-wave peak at 0.1 Hz and a respiratory peak at 0.25 Hz with LF/HF
// power ratio 0.5. A direct Fourier sum over the beat times of a 10-minute
// record must show both peaks and about that ratio.
func TestHRVSpectrum(t *testing.T) {
	p := Default()
	p.DurationS, p.HRVStdMS, p.HeartRateBPM = 600, 40, 60
	rec := gen(t, p, 12)
	var tk, rr []float64
	for k := 1; k < len(rec.Beats); k++ {
		tk = append(tk, rec.Beats[k].R)
		rr = append(rr, rec.Beats[k].R-rec.Beats[k-1].R)
	}
	mean, _ := meanSD(rr)
	power := func(f float64) float64 {
		var re, im float64
		for k, v := range rr {
			re += (v - mean) * math.Cos(2*math.Pi*f*tk[k])
			im -= (v - mean) * math.Sin(2*math.Pi*f*tk[k])
		}
		return re*re + im*im
	}
	var lf, hf, lfPk, hfPk, lfAt, hfAt float64
	for f := 0.04; f < 0.4; f += 0.0025 {
		pw := power(f)
		if f < 0.15 {
			lf += pw
			if pw > lfPk {
				lfPk, lfAt = pw, f
			}
		} else {
			hf += pw
			if pw > hfPk {
				hfPk, hfAt = pw, f
			}
		}
	}
	t.Logf("LF peak %.3f Hz, HF peak %.3f Hz, LF/HF %.2f", lfAt, hfAt, lf/hf)
	if math.Abs(lfAt-0.1) > 0.015 || math.Abs(hfAt-0.25) > 0.015 {
		t.Errorf("spectral peaks at %.3f and %.3f Hz, want 0.1 and 0.25", lfAt, hfAt)
	}
	if r := lf / hf; r < 0.35 || r > 0.7 {
		t.Errorf("LF/HF = %.2f, want about 0.5", r)
	}
}

// With an irregular rhythm every beat's true fiducials still agree with
// the boundaries measured back from the signals (5 % envelope rule, the
// truth used only to choose the search windows), within 4 ms; and QT
// follows each beat's preceding RR by Fridericia's cube root.
func TestFiducialsIrregular(t *testing.T) {
	p := Default()
	p.DurationS, p.HRVStdMS, p.EctopicRate, p.SampleRate = 30, 60, 0.1, 1000
	rec := gen(t, p, 17)
	fs := p.SampleRate
	n := len(rec.Signals[0].Samples)
	env := leadEnvelope(rec)
	// bounds finds the envelope peak within [a, b] s and walks out to 5 %.
	bounds := func(a, b float64) (float64, float64) {
		ia, ib := int(math.Ceil(a*fs)), int(math.Floor(b*fs))
		ip, pk := ia, 0.0
		for i := ia; i <= ib; i++ {
			if e := env(i); e > pk {
				ip, pk = i, e
			}
		}
		lo, hi := ip, ip
		for lo > 0 && env(lo-1) >= onsetFrac*pk {
			lo--
		}
		for hi < n-1 && env(hi+1) >= onsetFrac*pk {
			hi++
		}
		return float64(lo) / fs, float64(hi) / fs
	}
	checked := 0
	for k, b := range rec.Beats {
		if k == 0 || k == len(rec.Beats)-1 || math.IsNaN(b.TEnd) || math.IsNaN(b.QRSOn) {
			continue
		}
		on, off := bounds(b.QRSOn, b.QRSOff)
		if math.Abs(on-b.QRSOn) > 0.004 || math.Abs(off-b.QRSOff) > 0.004 {
			t.Errorf("beat %d (%c): QRS %.3f–%.3f s measured, truth %.3f–%.3f", k, b.Class, on, off, b.QRSOn, b.QRSOff)
		}
		prev, next := rec.Beats[k-1], rec.Beats[k+1]
		if b.Class != ecg.BeatNormal || prev.Class != ecg.BeatNormal || next.Class != ecg.BeatNormal {
			continue // P-on-T overlap around premature beats
		}
		_, tEnd := bounds(b.TPeak-0.02, b.TPeak+0.02)
		pOn, _ := bounds(b.PPeak-0.01, b.PPeak+0.01)
		if math.Abs(tEnd-b.TEnd) > 0.004 || math.Abs(pOn-b.POn) > 0.004 {
			t.Errorf("beat %d: T end %.3f (truth %.3f), P on %.3f (truth %.3f)", k, tEnd, b.TEnd, pOn, b.POn)
		}
		rr := b.R - prev.R
		want := 0.4 * math.Cbrt(rr) // default QT = QTc 400 ms · RR^(1/3) at the mean rate, scaled per beat
		if d := math.Abs(b.TEnd - b.QRSOn - want); d > 0.001 {
			t.Errorf("beat %d: QT %.4f s after RR %.3f s, want %.4f", k, b.TEnd-b.QRSOn, rr, want)
		}
		checked++
	}
	if checked < 20 {
		t.Errorf("only %d beats checked", checked)
	}
}

// Random parameters across the accepted ranges either generate a
// well-formed record or return ErrParams; never a panic. Beats come in
// time order with fiducials in physiological order.
func TestRandomParamsRobust(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	u := func(a, b float64) float64 { return a + (b-a)*rng.Float64() }
	ok := 0
	for i := range 60 {
		p := Params{
			DurationS: u(0.5, 12), SampleRate: u(50, 1000), HeartRateBPM: u(20, 220),
			HRVStdMS: u(0, 60), PRMS: u(0, 300), QRSMS: u(0, 200), QTMS: u(0, 600) * float64(rng.IntN(2)),
			AxisDeg: u(-180, 180), AmplitudeScale: u(0.1, 5), EctopicRate: u(0, 0.3), RespirationPct: u(0, 30),
			BaselineWanderMV: u(0, 1), NoiseMV: u(0, 0.1), PowerlineMV: u(0, 0.1), PowerlineHz: 50,
		}
		rec, err := Generate(p, uint64(i))
		if err != nil {
			if !errors.Is(err, ErrParams) {
				t.Fatalf("case %d: %v is not ErrParams", i, err)
			}
			continue
		}
		ok++
		n := int(math.Round(p.DurationS * p.SampleRate))
		for _, s := range rec.Signals {
			if len(s.Samples) != n {
				t.Fatalf("case %d: %v has %d samples, want %d", i, s.Lead, len(s.Samples), n)
			}
			for _, v := range s.Samples {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("case %d: %v has non-finite samples", i, s.Lead)
				}
			}
		}
		for k, b := range rec.Beats {
			if k > 0 && b.R <= rec.Beats[k-1].R {
				t.Errorf("case %d: beats out of order", i)
			}
			seq := []float64{b.POn, b.PPeak, b.POff, b.QRSOn, b.R, b.QRSOff, b.TPeak, b.TEnd}
			last := math.Inf(-1)
			for _, v := range seq {
				if math.IsNaN(v) {
					continue
				}
				if v < last {
					t.Errorf("case %d beat %d (%c): fiducials out of order %v", i, k, b.Class, seq)
					break
				}
				last = v
			}
		}
	}
	if ok < 20 {
		t.Errorf("only %d of 60 random parameter sets were accepted", ok)
	}
}

// The waveform is sampled analytically, so records at different rates
// agree sample for sample at common times, and the band-limited
// ecg.Resample of a 1000 Hz record reproduces the 500 Hz one (a
// synthetic ECG has almost no energy above 240 Hz).
func TestSampleRateConsistency(t *testing.T) {
	p := Default()
	p.HRVStdMS, p.EctopicRate = 30, 0.1
	p.SampleRate = 500
	a := gen(t, p, 31)
	p.SampleRate = 1000
	b := gen(t, p, 31)
	worstExact, worstResampled := 0.0, 0.0
	for i := range a.Signals {
		r := ecg.Resample(b.Signals[i], 500)
		for k, v := range a.Signals[i].Samples {
			worstExact = max(worstExact, math.Abs(v-b.Signals[i].Samples[2*k]))
			if k > 50 && k < len(r.Samples)-50 {
				worstResampled = max(worstResampled, math.Abs(v-r.Samples[k]))
			}
		}
	}
	t.Logf("largest difference: %.2g mV at common times, %.2g mV after resampling", worstExact, worstResampled)
	if worstExact > 1e-9 || worstResampled > 0.002 {
		t.Errorf("500 vs 1000 Hz: %.3g mV at common times, %.3g mV after resampling", worstExact, worstResampled)
	}
}
