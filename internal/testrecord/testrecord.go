package testrecord

import (
	"math"
	"math/rand/v2"

	"tracelift/ecg"
)

// Spec describes an invented, seeded record: lead number j (its position
// in Leads) carries
//
//	Amp·sin(Omega·t + j) + Noise·n + Offset   (mV, t in s)
//
// where n is a standard normal draw from a PCG generator seeded with
// (Seed, Seed), one draw per sample, lead after lead, drawn also where
// Gap blanks the sample, so a record does not depend on its gap pattern.
type Spec struct {
	Seed    uint64
	Seconds float64 // record length, s
	// Rate is the sampling rate, Hz; 0 means 500.
	Rate float64
	// Leads in order; nil means ecg.Standard12.
	Leads []ecg.Lead
	// Amp (mV), Omega (angular frequency, rad/s: 2π·f for f in Hz),
	// Noise (mV, standard deviation) and Offset (mV). Written as a
	// constant expression such as 2 * math.Pi * 1.1, Omega is rounded
	// once, as a hand-written loop with that constant would round it.
	Amp, Omega, Noise, Offset float64
	// Gap reports whether the sample of lead l at time t (s) is absent
	// (NaN); nil keeps every sample.
	Gap func(l ecg.Lead, t float64) bool
	// Meta is copied into the record.
	Meta ecg.Metadata
}

// Build returns the record Spec describes, without beats.
func Build(s Spec) ecg.Record {
	fs := s.Rate
	if fs == 0 {
		fs = 500
	}
	leads := s.Leads
	if leads == nil {
		leads = ecg.Standard12
	}
	r := rand.New(rand.NewPCG(s.Seed, s.Seed))
	n := int(s.Seconds * fs)
	rec := ecg.Record{Meta: s.Meta}
	for j, l := range leads {
		sig := ecg.Signal{Lead: l, SampleRate: fs, Samples: make([]float64, n)}
		for k := range sig.Samples {
			t := float64(k) / fs
			sig.Samples[k] = s.Amp*math.Sin(s.Omega*t+float64(j)) + s.Noise*r.NormFloat64() + s.Offset
			if s.Gap != nil && s.Gap(l, t) {
				sig.Samples[k] = math.NaN()
			}
		}
		rec.Set(sig)
	}
	return rec
}

// ChestWindow is a Gap for a 3 × 4-style page with one window for all
// chest leads: V1–V6 are recorded only from 2.5 s to 5 s; every other
// lead over the whole span.
func ChestWindow(l ecg.Lead, t float64) bool {
	return l >= ecg.LeadV1 && l <= ecg.LeadV6 && (t < 2.5 || t >= 5)
}

// Columns3x4 is a Gap for a 3 × 4 + rhythm-strip page: the leads of
// column c (I, III | aVR, aVL, aVF | V1–V3 | V4–V6) are recorded from
// 2.5·c s to 2.5·(c+1) s; lead II (the rhythm strip) and any other lead
// over the whole span.
func Columns3x4(l ecg.Lead, t float64) bool {
	c := -1
	switch l {
	case ecg.LeadI, ecg.LeadIII:
		c = 0
	case ecg.LeadAVR, ecg.LeadAVL, ecg.LeadAVF:
		c = 1
	case ecg.LeadV1, ecg.LeadV2, ecg.LeadV3:
		c = 2
	case ecg.LeadV4, ecg.LeadV5, ecg.LeadV6:
		c = 3
	}
	return c >= 0 && (t < 2.5*float64(c) || t >= 2.5*float64(c+1))
}
