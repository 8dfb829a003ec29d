package measure

import (
	"fmt"
	"math"
	"slices"

	"tracelift/ecg"
)

// Sample rates Measure and DetectBeats accept (Hz); others are refused
// with an error wrapping ecg.ErrUnreadable. Full diagnostic bandwidth
// needs ≥ 300 Hz (high cut-off ≥ 150 Hz, standards.md §1.4), and QRS
// detail degrades below about 100 Hz, but 50 Hz is the lowest rate at
// which the 5–15 Hz detection band still lies well below the Nyquist
// frequency, so coarse exports are measured (less precisely) rather than
// refused; it is also the floor of the digitize command's --rate. The
// ceiling, 20 kHz, is above the rates of ECG hardware that samples fast
// to capture pacemaker spikes (common practice, from memory) and keeps
// the fixed-duration windows (median filters, search windows) to a
// bounded number of samples. A rate outside these bounds is nearly always
// a corrupt header or a time column in the wrong unit.
const (
	MinSampleRate = 50
	MaxSampleRate = 20000
)

// Records whose highest rate is under lowRate (Hz) are resampled to
// workRate (Hz) before measurement, those above highRate to highWorkRate
// (see newFrame).
const (
	lowRate      = 250
	workRate     = 500
	highRate     = 2000
	highWorkRate = 1000
)

// A frame's grid (span × leads at the highest rate) may be at most
// maxGridFactor times the samples the record holds (a 3 × 4 page's 2.5 s
// columns fill a quarter of it; 250 and 500 Hz leads mixed need 1.5
// times), unless it holds under maxGridFloorS seconds of samples in all
// (12 leads × 1 min: at most 115 MB at 20 kHz).
const (
	maxGridFactor = 16
	maxGridFloorS = 12 * 60
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
// resampled to the highest rate with ecg.ResampleOnGrid — or to workRate
// when the highest rate is under lowRate, to highWorkRate when it is over
// highRate. It refuses (ecg.ErrUnreadable)
// sample rates outside MinSampleRate–MaxSampleRate, non-finite start
// times, and grids far larger than the samples given.
func newFrame(rec *ecg.Record, keep []ecg.Lead) (*frame, error) {
	var sig []*ecg.Signal
	for i := range rec.Signals {
		s := &rec.Signals[i]
		if len(keep) > 0 && !slices.Contains(keep, s.Lead) {
			continue
		}
		if !(s.SampleRate >= MinSampleRate && s.SampleRate <= MaxSampleRate) {
			return nil, fmt.Errorf("lead %v: sample rate %g Hz outside %g–%g Hz: %w",
				s.Lead, s.SampleRate, float64(MinSampleRate), float64(MaxSampleRate), ecg.ErrUnreadable)
		}
		if math.IsNaN(s.Start) || math.IsInf(s.Start, 0) {
			return nil, fmt.Errorf("lead %v: invalid start time %g s: %w", s.Lead, s.Start, ecg.ErrUnreadable)
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
	if fs < lowRate {
		// Coarse records are measured on a band-limited interpolation at
		// workRate: the delineation's smoothing scales (4–24 ms) are then
		// whole numbers of samples. On the default synthetic record this
		// takes the QRS read at 100 Hz from 130 to 116 ms and the QT from
		// 430 to 422 ms (500 Hz original: 114 and 422 ms); at 50 Hz the
		// QRS from 180 to 146 ms.
		fs, same = workRate, false
	} else if fs > highRate {
		// Fast-sampled records (pacemaker-spike capture) carry nothing
		// the measurements need above a few hundred hertz; measuring them
		// on an anti-aliased 1 kHz version keeps the cost of the
		// fixed-duration windows and kernels bounded (a 10 s 12-lead record
		// at 20 kHz took 11 s at its own rate).
		fs, same = highWorkRate, false
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
	// The grid spans from the earliest start to the latest end at the
	// highest rate. Refuse a grid far larger than the samples given —
	// leads whose start times lie hours apart, or a long lead at a low
	// rate beside one at a high rate — before anything is resampled or
	// allocated: it would take memory without bound.
	span, given := 0.0, 0.0
	for _, s := range sig {
		span = math.Max(span, (s.Start-t0)*fs+float64(len(s.Samples))*fs/s.SampleRate)
		given += float64(len(s.Samples))
	}
	if cells := span * float64(len(sig)); cells > maxGridFactor*given && cells > maxGridFloorS*fs {
		return nil, fmt.Errorf("leads span %.0f s at %g Hz, a grid of %.3g samples for %.3g samples given: %w",
			span/fs, fs, cells, given, ecg.ErrUnreadable)
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
