package trace

import (
	"math"
	"sort"

	"tracelift/ecg"
)

// SNROptions chooses between the strict and the lenient SNR. The zero
// value is the strict PhysioNet/CinC Challenge 2024 definition: no time
// shift, no offset removal.
type SNROptions struct {
	MaxShiftS  float64 // search one time shift per page within ±MaxShiftS, s (0 = none)
	RemoveMean bool    // remove each lead's mean over its printed span (truth and estimate separately)
}

// Lenient is the tolerant comparison: one page-wide shift within ±60 ms
// and each lead's mean removed.
var Lenient = SNROptions{MaxShiftS: 0.060, RemoveMean: true}

// SNRScore is the outcome of SNR.
type SNRScore struct {
	PerLead map[ecg.Lead]float64 // dB
	Median  float64              // median over leads, dB
	Mean    float64              // mean over leads, dB
	ShiftS  float64              // the shift applied to the estimate, s
}

// SNR compares an estimate with the truth lead by lead:
// SNR = 10·log10(Σ x² / Σ (x − y)²) over the samples where the truth is
// not NaN (the time the lead was printed), x = truth, y = estimate (PhysioNet/CinC
// Challenge 2024 evaluation, standards.md §7). A lead or span missing from
// the estimate counts as zero. The estimate is read at the truth's sample
// times (linear interpolation), so the two may differ in rate. With
// opt.MaxShiftS > 0 the single shift that maximises the mean SNR is used.
func SNR(truth, est ecg.Record, opt SNROptions) SNRScore {
	type pair struct {
		lead ecg.Lead
		x    []float64 // truth, NaN where not printed
		t0   float64
		fs   float64
		y    *ecg.Signal
	}
	var pairs []pair
	for i := range truth.Signals {
		s := &truth.Signals[i]
		if s.SampleRate <= 0 || len(s.Samples) == 0 {
			continue
		}
		pairs = append(pairs, pair{lead: s.Lead, x: s.Samples, t0: s.Start, fs: s.SampleRate, y: est.Signal(s.Lead)})
	}
	score := func(shift float64) map[ecg.Lead]float64 {
		out := make(map[ecg.Lead]float64, len(pairs))
		for _, p := range pairs {
			var mx, my float64
			var nx, ny int
			if opt.RemoveMean {
				for i, v := range p.x {
					if math.IsNaN(v) {
						continue
					}
					mx += v
					nx++
					if w := interpAt(p.y, p.t0+float64(i)/p.fs+shift); !math.IsNaN(w) {
						my += w
						ny++
					}
				}
				if nx > 0 {
					mx /= float64(nx)
				}
				if ny > 0 {
					my /= float64(ny)
				}
			}
			var sig, noise float64
			for i, v := range p.x {
				if math.IsNaN(v) {
					continue
				}
				x := v - mx
				y := interpAt(p.y, p.t0+float64(i)/p.fs+shift)
				if math.IsNaN(y) {
					y = 0
				} else {
					y -= my
				}
				sig += x * x
				noise += (x - y) * (x - y)
			}
			switch {
			case sig == 0 && noise == 0:
				continue
			case noise == 0:
				out[p.lead] = math.Inf(1)
			default:
				out[p.lead] = 10 * math.Log10(sig/noise)
			}
		}
		return out
	}
	best := SNRScore{}
	bestMean := math.Inf(-1)
	step := 0.002
	if len(pairs) > 0 {
		step = 1 / pairs[0].fs
	}
	nsteps := int(math.Floor(opt.MaxShiftS/step + 1e-9))
	for k := -nsteps; k <= nsteps; k++ {
		sh := float64(k) * step
		per := score(sh)
		m := meanFinite(per)
		if m > bestMean || best.PerLead == nil {
			bestMean = m
			best = SNRScore{PerLead: per, ShiftS: sh}
		}
	}
	best.Mean = meanFinite(best.PerLead)
	var v []float64
	for _, x := range best.PerLead {
		v = append(v, x)
	}
	sort.Float64s(v)
	if len(v) > 0 {
		best.Median = quantile(v, 0.5)
	}
	return best
}

func meanFinite(m map[ecg.Lead]float64) float64 {
	s, n := 0.0, 0
	for _, v := range m {
		if math.IsInf(v, 1) {
			v = 100
		}
		s += v
		n++
	}
	if n == 0 {
		return math.Inf(-1)
	}
	return s / float64(n)
}

// quantile of sorted values, linear between order statistics.
func quantile(sorted []float64, q float64) float64 {
	if len(sorted) == 0 {
		return math.NaN()
	}
	p := q * float64(len(sorted)-1)
	i := int(math.Floor(p))
	if i+1 >= len(sorted) {
		return sorted[len(sorted)-1]
	}
	f := p - float64(i)
	return sorted[i]*(1-f) + sorted[i+1]*f
}

// interpAt reads s at time t by linear interpolation; NaN outside s or
// next to a NaN sample.
func interpAt(s *ecg.Signal, t float64) float64 {
	if s == nil || s.SampleRate <= 0 {
		return math.NaN()
	}
	x := (t - s.Start) * s.SampleRate
	i := int(math.Floor(x + 1e-9))
	if i < 0 || i >= len(s.Samples) {
		return math.NaN()
	}
	f := x - float64(i)
	if f < 1e-9 || i+1 >= len(s.Samples) {
		return s.Samples[i]
	}
	return s.Samples[i]*(1-f) + s.Samples[i+1]*f
}
