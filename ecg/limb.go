package ecg

import (
	"fmt"
	"math"
)

// frontal gives each limb lead as a combination a·I + b·II of leads I and
// II (Einthoven and Goldberger; common practice). Only two limb leads are
// independent.
var frontal = map[Lead][2]float64{
	LeadI:   {1, 0},
	LeadII:  {0, 1},
	LeadIII: {-1, 1},
	LeadAVR: {-0.5, -0.5},
	LeadAVL: {1, -0.5},
	LeadAVF: {-0.5, 1},
}

// FrontalCoefficients returns (a, b) such that lead l = a·I + b·II, and
// ok=false if l is not a limb lead.
func FrontalCoefficients(l Lead) (a, b float64, ok bool) {
	c, ok := frontal[l]
	return c[0], c[1], ok
}

// DeriveLimb returns the limb leads III, aVR, aVL and aVF computed from
// leads I and II sample by sample:
//
//	III = II − I, aVR = −(I+II)/2, aVL = I − II/2, aVF = II − I/2.
//
// i and ii must share sample rate and start time; the result is as long as
// the shorter of the two. NaN in either input gives NaN in the outputs.
func DeriveLimb(i, ii Signal) ([]Signal, error) {
	if i.Lead != LeadI || ii.Lead != LeadII {
		return nil, fmt.Errorf("ecg: derive limb leads: need leads I and II, got %v and %v", i.Lead, ii.Lead)
	}
	if i.SampleRate != ii.SampleRate || math.Abs(i.Start-ii.Start)*i.SampleRate > 1e-6 {
		return nil, fmt.Errorf("ecg: derive limb leads: I and II are on different time grids (%g Hz at %g s, %g Hz at %g s)",
			i.SampleRate, i.Start, ii.SampleRate, ii.Start)
	}
	n := min(len(i.Samples), len(ii.Samples))
	var out []Signal
	for _, l := range []Lead{LeadIII, LeadAVR, LeadAVL, LeadAVF} {
		c := frontal[l]
		s := Signal{Lead: l, SampleRate: i.SampleRate, Start: i.Start, Samples: make([]float64, n)}
		for k := 0; k < n; k++ {
			s.Samples[k] = c[0]*i.Samples[k] + c[1]*ii.Samples[k]
		}
		out = append(out, s)
	}
	return out, nil
}

// FillLimb adds to r any of III, aVR, aVL and aVF that r lacks, derived
// from I and II, and returns the leads it added. It does nothing when I or
// II is missing or they are on different time grids.
func FillLimb(r *Record) []Lead {
	i, ii := r.Signal(LeadI), r.Signal(LeadII)
	if i == nil || ii == nil {
		return nil
	}
	d, err := DeriveLimb(*i, *ii)
	if err != nil {
		return nil
	}
	var added []Lead
	for _, s := range d {
		if r.Signal(s.Lead) == nil {
			r.Set(s)
			added = append(added, s.Lead)
		}
	}
	return added
}

// LimbConsistency reports how far a record's limb leads depart from the
// Einthoven and Goldberger laws wherever three or more of them were
// recorded at the same moment.
type LimbConsistency struct {
	// ResidualUV estimates the per-lead error in µV RMS: at each moment the
	// available limb leads are fitted by least squares with the two-
	// dimensional frontal-plane model (lead = a·I + b·II), and
	// ResidualUV = sqrt(Σ residual² / Σ (k − 2)) over all such moments,
	// k being the number of limb leads present then. With independent
	// errors of standard deviation σ in each lead this estimates σ.
	ResidualUV float64
	// PerLeadUV is each limb lead's RMS fit residual in µV over the
	// moments where it took part.
	PerLeadUV map[Lead]float64
	// Samples is the number of moments with at least three limb leads.
	Samples int
	// Seconds is the total time those moments cover.
	Seconds float64
}

// CheckLimb computes the limb-lead consistency of r on the time grid of
// its highest-rate limb lead. It returns ok=false when at no moment three
// or more limb leads overlap.
func CheckLimb(r *Record) (c LimbConsistency, ok bool) {
	var sig []*Signal
	var ref *Signal
	for _, l := range LimbLeads {
		if s := r.Signal(l); s != nil && s.SampleRate > 0 && len(s.Samples) > 0 {
			sig = append(sig, s)
			if ref == nil || s.SampleRate > ref.SampleRate {
				ref = s
			}
		}
	}
	if len(sig) < 3 {
		return c, false
	}
	start, end := r.Span()
	fs := ref.SampleRate
	// Moments lie on ref's own sample grid (from the first grid time at or
	// after the record's start): interpolating ref between its samples
	// would average its noise and bias the residual low.
	start = ref.Start - math.Floor((ref.Start-start)*fs+1e-9)/fs
	n := int(math.Round((end - start) * fs))
	sumSq := 0.0
	dof := 0
	perSq := make(map[Lead]float64)
	perN := make(map[Lead]int)
	vals := make([]float64, 0, 6)
	coef := make([][2]float64, 0, 6)
	leads := make([]Lead, 0, 6)
	for k := 0; k < n; k++ {
		t := start + float64(k)/fs
		vals, coef, leads = vals[:0], coef[:0], leads[:0]
		for _, s := range sig {
			v := sampleAt(s, t)
			if math.IsNaN(v) {
				continue
			}
			vals = append(vals, v)
			coef = append(coef, frontal[s.Lead])
			leads = append(leads, s.Lead)
		}
		if len(vals) < 3 {
			continue
		}
		// Normal equations of the 2-parameter least-squares fit.
		var s11, s12, s22, b1, b2 float64
		for j, v := range vals {
			a, b := coef[j][0], coef[j][1]
			s11 += a * a
			s12 += a * b
			s22 += b * b
			b1 += a * v
			b2 += b * v
		}
		det := s11*s22 - s12*s12
		if det == 0 {
			continue
		}
		x := (s22*b1 - s12*b2) / det
		y := (s11*b2 - s12*b1) / det
		for j, v := range vals {
			res := v - (coef[j][0]*x + coef[j][1]*y)
			sumSq += res * res
			perSq[leads[j]] += res * res
			perN[leads[j]]++
		}
		dof += len(vals) - 2
		c.Samples++
	}
	if c.Samples == 0 {
		return c, false
	}
	c.ResidualUV = 1000 * math.Sqrt(sumSq/float64(dof))
	c.PerLeadUV = make(map[Lead]float64, len(perN))
	for l, m := range perN {
		c.PerLeadUV[l] = 1000 * math.Sqrt(perSq[l]/float64(m))
	}
	c.Seconds = float64(c.Samples) / fs
	return c, true
}

// sampleAt returns s at time t by linear interpolation between its two
// neighbouring samples, NaN outside s or next to a gap.
func sampleAt(s *Signal, t float64) float64 {
	x := (t - s.Start) * s.SampleRate
	i := int(math.Floor(x))
	if i < 0 || i >= len(s.Samples) {
		return math.NaN()
	}
	f := x - float64(i)
	if f < 1e-9 || i+1 >= len(s.Samples) {
		if f > 1e-6 && i+1 >= len(s.Samples) {
			return math.NaN()
		}
		return s.Samples[i]
	}
	return s.Samples[i]*(1-f) + s.Samples[i+1]*f
}
