package synth

import (
	"errors"
	"fmt"
	"math"
)

// ErrParams is returned (wrapped) for parameters outside the model's range.
var ErrParams = errors.New("synth: invalid parameters")

// Params controls Generate. Zero values select the defaults stated per
// field, except AxisDeg, where 0° is a valid axis (Default sets +60°).
type Params struct {
	DurationS    float64 // record length, s; default 10
	SampleRate   float64 // Hz; default 500
	HeartRateBPM float64 // mean sinus rate, beats/min, 20–220; default 70
	// HRVStdMS is the standard deviation of the RR intervals in ms, drawn
	// from McSharry's bimodal LF/HF spectrum; 0 = perfectly regular.
	HRVStdMS float64
	// PRMS, QRSMS and QTMS are the PR interval, QRS duration and QT
	// interval in ms at the mean rate; 0 = defaults of 160 ms, 90 ms and
	// QT = 400 ms·RR^(1/3) (a Fridericia QTc of 400 ms).
	PRMS, QRSMS, QTMS float64
	// PDurMS is the P-wave duration, ms; 0 = 100 ms, shortened to PR − 40 ms
	// when PR is short.
	PDurMS float64
	// AxisDeg is the frontal QRS axis, degrees on the hexaxial reference
	// (0° = lead I, +90° = aVF). Used as given; Default sets +60.
	AxisDeg float64
	// AmplitudeScale multiplies every amplitude; default 1, which gives an
	// R wave of about 1.2 mV in lead II at an axis of +60°.
	AmplitudeScale float64
	// EctopicRate is the fraction (0–0.3) of beats replaced by premature
	// ectopic beats, about half ventricular and half atrial.
	EctopicRate float64
	// RespirationPct modulates each beat's amplitude by breathing: a sine
	// of this many per cent at a rate drawn from 0.2–0.33 Hz (12–20
	// breaths/min); 0–30, 0 = none.
	RespirationPct float64
	// BaselineWanderMV is the peak amplitude, mV, of slow baseline wander
	// (a sum of sines between 0.05 and 0.5 Hz, independent per recorded lead).
	BaselineWanderMV float64
	// NoiseMV is the RMS, mV, of white noise added to each recorded lead
	// (I, II, V1–V6; the other limb leads inherit it through the lead laws).
	NoiseMV float64
	// PowerlineMV is the amplitude, mV, of mains interference at
	// PowerlineHz (default 50 Hz when PowerlineMV > 0).
	PowerlineMV float64
	PowerlineHz float64
}

// Default returns the default parameters: 10 s at 500 Hz, 70 bpm, regular
// rhythm, axis +60°, no ectopics, no noise.
func Default() Params {
	return Params{DurationS: 10, SampleRate: 500, HeartRateBPM: 70, AxisDeg: 60, AmplitudeScale: 1}
}

// resolved holds Params after defaults are applied, in seconds.
type resolved struct {
	Params
	rr, pr, qrs, qt, pdur float64 // s, at the mean rate
}

func bad(format string, a ...any) error {
	return fmt.Errorf("%w: "+format, append([]any{ErrParams}, a...)...)
}

// resolve applies defaults and validates p.
func resolve(p Params) (resolved, error) {
	finite := []float64{p.DurationS, p.SampleRate, p.HeartRateBPM, p.HRVStdMS, p.PRMS, p.QRSMS, p.QTMS,
		p.PDurMS, p.AxisDeg, p.AmplitudeScale, p.EctopicRate, p.RespirationPct, p.BaselineWanderMV, p.NoiseMV, p.PowerlineMV, p.PowerlineHz}
	for _, v := range finite {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return resolved{}, bad("non-finite value")
		}
	}
	if p.DurationS == 0 {
		p.DurationS = 10
	}
	if p.SampleRate == 0 {
		p.SampleRate = 500
	}
	if p.HeartRateBPM == 0 {
		p.HeartRateBPM = 70
	}
	if p.AmplitudeScale == 0 {
		p.AmplitudeScale = 1
	}
	if p.PowerlineMV > 0 && p.PowerlineHz == 0 {
		p.PowerlineHz = 50
	}
	switch {
	case p.DurationS < 0 || p.DurationS > 3600:
		return resolved{}, bad("duration %g s outside (0, 3600]", p.DurationS)
	case p.SampleRate < 50 || p.SampleRate > 20000:
		return resolved{}, bad("sample rate %g Hz outside [50, 20000]", p.SampleRate)
	case p.DurationS*p.SampleRate < 1:
		return resolved{}, bad("duration %g s holds no sample at %g Hz", p.DurationS, p.SampleRate)
	case p.HeartRateBPM < 20 || p.HeartRateBPM > 220:
		return resolved{}, bad("heart rate %g bpm outside [20, 220]", p.HeartRateBPM)
	case p.AmplitudeScale < 0 || p.AmplitudeScale > 20:
		return resolved{}, bad("amplitude scale %g outside (0, 20]", p.AmplitudeScale)
	case p.RespirationPct < 0 || p.RespirationPct > 30:
		return resolved{}, bad("respiratory modulation %g %% outside [0, 30]", p.RespirationPct)
	case p.EctopicRate < 0 || p.EctopicRate > 0.3:
		return resolved{}, bad("ectopic rate %g outside [0, 0.3]", p.EctopicRate)
	case p.HRVStdMS < 0, p.BaselineWanderMV < 0, p.NoiseMV < 0, p.PowerlineMV < 0, p.PowerlineHz < 0,
		p.PRMS < 0, p.QRSMS < 0, p.QTMS < 0, p.PDurMS < 0:
		return resolved{}, bad("negative interval, variability, noise or frequency")
	case p.AxisDeg < -180 || p.AxisDeg > 360:
		return resolved{}, bad("axis %g° outside [-180, 360]", p.AxisDeg)
	}
	r := resolved{Params: p}
	r.rr = 60 / p.HeartRateBPM
	r.pr, r.qrs, r.qt, r.pdur = p.PRMS/1000, p.QRSMS/1000, p.QTMS/1000, p.PDurMS/1000
	if r.pr == 0 {
		r.pr = 0.160
	}
	if r.qrs == 0 {
		r.qrs = 0.090
	}
	if r.qt == 0 {
		r.qt = 0.400 * math.Cbrt(r.rr)
	}
	if r.pdur == 0 {
		r.pdur = min(0.100, r.pr-0.040)
	}
	switch {
	case p.HRVStdMS/1000 > 0.2*r.rr:
		return resolved{}, bad("RR variability %g ms above 20 %% of the mean RR (%g ms)", p.HRVStdMS, 1000*r.rr)
	case r.pr < 0.07 && p.PDurMS == 0:
		return resolved{}, bad("PR %g ms below 70 ms (the default P wave needs 30 ms plus 40 ms to the QRS)", 1000*r.pr)
	case r.qrs < 0.04 || r.qrs > 0.25:
		return resolved{}, bad("QRS duration %g ms outside [40, 250]", 1000*r.qrs)
	case r.pdur < 0.03 || r.pdur > 0.2:
		return resolved{}, bad("P duration %g ms outside [30, 200]", 1000*r.pdur)
	case r.pr < r.pdur+0.01 || r.pr > 0.5:
		return resolved{}, bad("PR %g ms must exceed the P duration (%g ms) by 10 ms and be ≤ 500 ms", 1000*r.pr, 1000*r.pdur)
	case r.qt < r.qrs+0.08:
		return resolved{}, bad("QT %g ms shorter than QRS + 80 ms", 1000*r.qt)
	case r.qt >= r.rr:
		return resolved{}, bad("QT %g ms not shorter than the RR interval %g ms", 1000*r.qt, 1000*r.rr)
	case p.PowerlineHz >= p.SampleRate/2 && p.PowerlineMV > 0:
		return resolved{}, bad("mains frequency %g Hz at or above Nyquist", p.PowerlineHz)
	}
	return r, nil
}
