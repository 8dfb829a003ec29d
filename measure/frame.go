package measure

import (
	"fmt"
	"math"
	"slices"

	"tracelift/ecg"
)

// frame holds a record's selected leads on one uniform sample grid:
// x[k][i] is lead leads[k] at time t0 + i/fs, NaN where not recorded.
type frame struct {
	fs    float64
	t0    float64
	n     int
	leads []ecg.Lead
	x     [][]float64
}

// time returns the record time (s) of sample i.
func (f *frame) time(i int) float64 { return f.t0 + float64(i)/f.fs }

// newFrame places the record's signals (those in keep, or all when keep is
// empty) on a common grid. Signals that already share one sample rate and
// whose starts fall on a common sample grid are used as they are (without
// copying when a signal spans the whole grid); otherwise every signal is
// resampled to the highest rate with ecg.ResampleOnGrid.
func newFrame(rec *ecg.Record, keep []ecg.Lead) (*frame, error) {
	var sig []*ecg.Signal
	for i := range rec.Signals {
		s := &rec.Signals[i]
		if len(keep) > 0 && !slices.Contains(keep, s.Lead) {
			continue
		}
		if s.SampleRate <= 0 || math.IsNaN(s.SampleRate) || math.IsInf(s.SampleRate, 0) {
			return nil, fmt.Errorf("lead %v: invalid sample rate %g Hz", s.Lead, s.SampleRate)
		}
		if len(s.Samples) == 0 {
			continue
		}
		sig = append(sig, s)
	}
	if len(sig) == 0 {
		if len(keep) > 0 {
			return nil, fmt.Errorf("none of the requested leads %v has samples: %w", keep, ecg.ErrNoECG)
		}
		return nil, fmt.Errorf("record has no samples: %w", ecg.ErrNoECG)
	}
	fs := 0.0
	same := true
	for _, s := range sig {
		if fs != 0 && s.SampleRate != fs {
			same = false
		}
		fs = math.Max(fs, s.SampleRate)
	}
	t0 := math.Inf(1)
	for _, s := range sig {
		t0 = math.Min(t0, s.Start)
	}
	if same {
		for _, s := range sig {
			off := (s.Start - t0) * fs
			if math.Abs(off-math.Round(off)) > 1e-3 {
				same = false
			}
		}
	}
	if !same {
		rs := make([]ecg.Signal, len(sig))
		for i, s := range sig {
			rs[i] = ecg.ResampleOnGrid(*s, fs)
			sig[i] = &rs[i]
		}
		t0 = math.Inf(1)
		for _, s := range sig {
			t0 = math.Min(t0, s.Start)
		}
	}
	f := &frame{fs: fs, t0: t0}
	for _, s := range sig {
		off := int(math.Round((s.Start - t0) * fs))
		f.n = max(f.n, off+len(s.Samples))
	}
	for _, s := range sig {
		off := int(math.Round((s.Start - t0) * fs))
		var x []float64
		if off == 0 && len(s.Samples) == f.n {
			x = s.Samples
		} else {
			x = make([]float64, f.n)
			for i := range x {
				x[i] = math.NaN()
			}
			copy(x[off:], s.Samples)
		}
		f.leads = append(f.leads, s.Lead)
		f.x = append(f.x, x)
	}
	return f, nil
}

// sub returns a view of samples [lo, hi) of every lead.
func (f *frame) sub(lo, hi int) *frame {
	g := &frame{fs: f.fs, t0: f.time(lo), n: hi - lo, leads: f.leads}
	g.x = make([][]float64, len(f.x))
	for k := range f.x {
		g.x[k] = f.x[k][lo:hi]
	}
	return g
}
