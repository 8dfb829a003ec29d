package ecg

import (
	"math"
	"math/rand/v2"
	"testing"
)

func sig(l Lead, fs, start float64, v ...float64) Signal {
	return Signal{Lead: l, SampleRate: fs, Start: start, Samples: v}
}

// Einthoven: III = II − I; Goldberger: aVR = −(I+II)/2, aVL = I − II/2,
// aVF = II − I/2 (common practice; standards.md §1.3). Expected values are
// worked by hand.
func TestDeriveLimb(t *testing.T) {
	cases := []struct {
		name               string
		i, ii              []float64
		iii, avr, avl, avf []float64
	}{
		{"axis +60 (I=0.5, II=1)", []float64{0.5}, []float64{1}, []float64{0.5}, []float64{-0.75}, []float64{0}, []float64{0.75}},
		{"axis 0 (I=1, II=0.5)", []float64{1}, []float64{0.5}, []float64{-0.5}, []float64{-0.75}, []float64{0.75}, []float64{0}},
		{"negative", []float64{-0.2, 0}, []float64{0.4, 0}, []float64{0.6, 0}, []float64{-0.1, 0}, []float64{-0.4, 0}, []float64{0.5, 0}},
		{"shorter II", []float64{1, 2, 3}, []float64{1, 1}, []float64{0, -1}, []float64{-1, -1.5}, []float64{0.5, 1.5}, []float64{0.5, 0}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			out, err := DeriveLimb(sig(LeadI, 500, 0.2, c.i...), sig(LeadII, 500, 0.2, c.ii...))
			if err != nil {
				t.Fatal(err)
			}
			want := map[Lead][]float64{LeadIII: c.iii, LeadAVR: c.avr, LeadAVL: c.avl, LeadAVF: c.avf}
			if len(out) != 4 {
				t.Fatalf("got %d leads", len(out))
			}
			for _, s := range out {
				if s.SampleRate != 500 || s.Start != 0.2 {
					t.Errorf("%v: rate %g start %g", s.Lead, s.SampleRate, s.Start)
				}
				w := want[s.Lead]
				if len(s.Samples) != len(w) {
					t.Fatalf("%v: %d samples, want %d", s.Lead, len(s.Samples), len(w))
				}
				for k := range w {
					if math.Abs(s.Samples[k]-w[k]) > 1e-12 {
						t.Errorf("%v[%d] = %g, want %g", s.Lead, k, s.Samples[k], w[k])
					}
				}
			}
		})
	}
}

func TestDeriveLimbNaNAndErrors(t *testing.T) {
	out, err := DeriveLimb(sig(LeadI, 250, 0, 1, math.NaN()), sig(LeadII, 250, 0, 2, 2))
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range out {
		if math.IsNaN(s.Samples[0]) || !math.IsNaN(s.Samples[1]) {
			t.Errorf("%v: %v, want finite then NaN", s.Lead, s.Samples)
		}
	}
	bad := []struct {
		name string
		a, b Signal
	}{
		{"wrong leads", sig(LeadII, 500, 0, 1), sig(LeadI, 500, 0, 1)},
		{"rates differ", sig(LeadI, 500, 0, 1), sig(LeadII, 250, 0, 1)},
		{"starts differ", sig(LeadI, 500, 0, 1), sig(LeadII, 500, 0.01, 1)},
	}
	for _, c := range bad {
		if _, err := DeriveLimb(c.a, c.b); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
}

func TestFrontalCoefficients(t *testing.T) {
	// aVR + aVL + aVF = 0 (standards.md §1.3): the coefficients sum to zero.
	var sa, sb float64
	for _, l := range []Lead{LeadAVR, LeadAVL, LeadAVF} {
		a, b, ok := FrontalCoefficients(l)
		if !ok {
			t.Fatalf("%v not frontal", l)
		}
		sa, sb = sa+a, sb+b
	}
	if sa != 0 || sb != 0 {
		t.Errorf("augmented coefficients sum to (%g, %g)", sa, sb)
	}
	if _, _, ok := FrontalCoefficients(LeadV1); ok {
		t.Error("V1 reported as a frontal lead")
	}
}

func TestFillLimb(t *testing.T) {
	r := Record{}
	r.Set(sig(LeadI, 500, 0, 1, 2))
	r.Set(sig(LeadII, 500, 0, 3, 4))
	r.Set(sig(LeadIII, 500, 0, 9, 9)) // a recorded III is kept as is
	added := FillLimb(&r)
	if len(added) != 3 || added[0] != LeadAVR || added[1] != LeadAVL || added[2] != LeadAVF {
		t.Errorf("added %v, want [aVR aVL aVF]", added)
	}
	if r.Signal(LeadIII).Samples[0] != 9 {
		t.Error("FillLimb replaced a recorded lead")
	}
	if got := r.Signal(LeadAVF).Samples[1]; got != 3 { // 4 − 2/2
		t.Errorf("aVF[1] = %g, want 3", got)
	}
	if got := r.Leads(); len(got) != 6 || got[0] != LeadI || got[5] != LeadAVF {
		t.Errorf("leads %v", got)
	}
	noII := Record{Signals: []Signal{sig(LeadI, 500, 0, 1)}}
	if added := FillLimb(&noII); added != nil || len(noII.Signals) != 1 {
		t.Errorf("without II: added %v", added)
	}
	grids := Record{Signals: []Signal{sig(LeadI, 500, 0, 1), sig(LeadII, 250, 0, 1)}}
	if added := FillLimb(&grids); added != nil {
		t.Errorf("different grids: added %v", added)
	}
}

// limbRecord returns the six limb leads of a 10 s, 500 Hz record whose
// I and II are sums of sines, each lead with independent white noise of SD
// sigma (mV), and lead bad (if valid) with extra noise of SD extra.
func limbRecord(sigma float64, bad Lead, extra float64, seed uint64) Record {
	const fs, n = 500.0, 5000
	rng := rand.New(rand.NewPCG(seed, seed))
	i, ii := make([]float64, n), make([]float64, n)
	for k := range i {
		t := float64(k) / fs
		i[k] = 0.6*math.Sin(2*math.Pi*1.1*t) + 0.2*math.Sin(2*math.Pi*7*t)
		ii[k] = 1.1*math.Sin(2*math.Pi*1.1*t+0.4) + 0.3*math.Cos(2*math.Pi*13*t)
	}
	var r Record
	for _, l := range LimbLeads {
		a, b, _ := FrontalCoefficients(l)
		s := Signal{Lead: l, SampleRate: fs, Samples: make([]float64, n)}
		for k := range s.Samples {
			s.Samples[k] = a*i[k] + b*ii[k] + sigma*rng.NormFloat64()
			if l == bad {
				s.Samples[k] += extra * rng.NormFloat64()
			}
		}
		r.Set(s)
	}
	return r
}

func TestCheckLimb(t *testing.T) {
	exact := limbRecord(0, LeadUnknown, 0, 1)
	c, ok := CheckLimb(&exact)
	if !ok || c.ResidualUV > 1e-9 || c.Samples != 5000 || math.Abs(c.Seconds-10) > 1e-9 {
		t.Errorf("exact record: %+v ok=%v, want zero residual over 5000 samples", c, ok)
	}
	// With independent noise of SD σ in every lead the residual estimates
	// σ (least-squares residual variance with k − 2 degrees of freedom).
	for _, sigma := range []float64{0.01, 0.05} {
		r := limbRecord(sigma, LeadUnknown, 0, 2)
		c, ok := CheckLimb(&r)
		t.Logf("σ = %g mV: residual %.2f µV", sigma, c.ResidualUV)
		if !ok || math.Abs(c.ResidualUV-1000*sigma) > 0.1*1000*sigma {
			t.Errorf("σ = %g mV: residual %.2f µV, want %.0f ± 10 %%", sigma, c.ResidualUV, 1000*sigma)
		}
	}
	// One corrupted lead stands out in the per-lead residuals.
	for _, bad := range LimbLeads {
		r := limbRecord(0.005, bad, 0.1, 3)
		c, _ := CheckLimb(&r)
		worst := LeadUnknown
		for l, v := range c.PerLeadUV {
			if worst == LeadUnknown || v > c.PerLeadUV[worst] {
				worst = l
			}
		}
		if worst != bad {
			t.Errorf("corrupted %v: largest per-lead residual is %v (%v)", bad, worst, c.PerLeadUV)
		}
	}
}

// On a 3 × 4 page each column holds three limb leads for 2.5 s: I, II and
// III share a window, so the check runs on that window only.
func TestCheckLimbPartialWindows(t *testing.T) {
	full := limbRecord(0, LeadUnknown, 0, 4)
	var r Record
	for _, s := range full.Signals {
		c := s.Clone()
		lo, hi := 0, 1250 // I, II, III at 0–2.5 s
		if !(s.Lead == LeadI || s.Lead == LeadII || s.Lead == LeadIII) {
			lo, hi = 1250, 2500 // aVR, aVL, aVF at 2.5–5 s
		}
		for k := range c.Samples {
			if k < lo || k >= hi {
				c.Samples[k] = math.NaN()
			}
		}
		r.Set(c)
	}
	c, ok := CheckLimb(&r)
	if !ok || c.Samples != 2500 || c.ResidualUV > 1e-9 {
		t.Errorf("partial windows: %+v ok=%v, want 2500 exact moments", c, ok)
	}
	two := Record{Signals: []Signal{full.Signals[0], full.Signals[1]}}
	if _, ok := CheckLimb(&two); ok {
		t.Error("two limb leads reported as checkable")
	}
}

// The check runs on the highest-rate limb lead's own sample grid, even
// when another lead of the record starts off that grid (interpolating
// between samples would average the noise away and under-estimate σ).
func TestCheckLimbOffGridRecord(t *testing.T) {
	r := limbRecord(0.02, LeadUnknown, 0, 5)
	r.Set(Signal{Lead: LeadV1, SampleRate: 500, Start: -0.0013, Samples: make([]float64, 5000)})
	c, ok := CheckLimb(&r)
	if !ok || math.Abs(c.ResidualUV-20) > 2 {
		t.Errorf("residual %.2f µV (ok=%v), want 20 ± 10 %%", c.ResidualUV, ok)
	}
}
