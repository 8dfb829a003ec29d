package ecg

import (
	"math"
	"testing"
)

func sine(l Lead, fs, start, dur, f, amp, ph float64) Signal {
	n := int(math.Round(dur * fs))
	s := Signal{Lead: l, SampleRate: fs, Start: start, Samples: make([]float64, n)}
	for k := range s.Samples {
		s.Samples[k] = amp * math.Sin(2*math.Pi*f*(start+float64(k)/fs)+ph)
	}
	return s
}

// maxErr returns the largest |s − amp·sin(2πft + ph)| over samples at
// least edge seconds from both ends, relative to amp.
func maxErr(s Signal, f, amp, ph, edge float64) float64 {
	worst := 0.0
	for k, v := range s.Samples {
		t := s.Time(k)
		if t < s.Start+edge || t > s.End()-edge {
			continue
		}
		worst = max(worst, math.Abs(v-amp*math.Sin(2*math.Pi*f*t+ph))/amp)
	}
	return worst
}

// A sine below the lower Nyquist frequency keeps amplitude and phase
// through band-limited resampling (sampling theorem; Smith, "Digital Audio
// Resampling", common practice): error ≤ 0.5 % of the amplitude away from
// the edges. 500 → 250 → 500 Hz and 360 Hz (MIT-BIH) → 500 Hz.
func TestResampleSine(t *testing.T) {
	for _, f := range []float64{1, 10, 40, 90} {
		s := sine(LeadII, 500, 0, 10, f, 1.3, 0.7)
		down := Resample(s, 250)
		if len(down.Samples) != 2500 || down.SampleRate != 250 || down.Start != 0 {
			t.Fatalf("500→250: %d samples at %g Hz from %g s", len(down.Samples), down.SampleRate, down.Start)
		}
		up := Resample(down, 500)
		if len(up.Samples) != 5000 {
			t.Fatalf("250→500: %d samples", len(up.Samples))
		}
		if e := maxErr(down, f, 1.3, 0.7, 0.2); e > 0.005 {
			t.Errorf("%g Hz 500→250: error %.4f of amplitude", f, e)
		}
		t.Logf("%g Hz: 500→250 %.2e, 500→250→500 %.2e of amplitude", f, maxErr(down, f, 1.3, 0.7, 0.2), maxErr(up, f, 1.3, 0.7, 0.2))
		if e := maxErr(up, f, 1.3, 0.7, 0.2); e > 0.005 {
			t.Errorf("%g Hz 500→250→500: error %.4f of amplitude", f, e)
		}
		m := Resample(sine(LeadV1, 360, 0, 10, f, 0.8, -1), 500)
		if len(m.Samples) != 5000 {
			t.Fatalf("360→500: %d samples", len(m.Samples))
		}
		if e := maxErr(m, f, 0.8, -1, 0.2); e > 0.005 {
			t.Errorf("%g Hz 360→500: error %.4f of amplitude", f, e)
		}
	}
}

// Downsampling removes components above the new Nyquist frequency instead
// of folding them into the band (anti-aliasing).
func TestResampleAntiAlias(t *testing.T) {
	s := sine(LeadI, 500, 0, 10, 200, 1, 0) // 200 Hz would alias to 50 Hz at 250 Hz
	d := Resample(s, 250)
	if e := maxErr(d, 0, 1, 0, 0.2); e > 0.01 {
		t.Errorf("200 Hz tone leaks %.3f of its amplitude after 500→250 Hz", e)
	}
}

func TestResampleGaps(t *testing.T) {
	s := sine(LeadI, 500, 0, 4, 5, 1, 0)
	for k := 500; k < 750; k++ { // NaN over 1.0–1.5 s
		s.Samples[k] = math.NaN()
	}
	for _, rate := range []float64{250, 360, 1000} {
		out := Resample(s, rate)
		for k, v := range out.Samples {
			tt := out.Time(k)
			near := int(math.Round(tt * 500))
			inGap := near >= 500 && near < 750
			if inGap != math.IsNaN(v) {
				t.Fatalf("%g Hz: sample at %.4f s = %g (gap %v)", rate, tt, v, inGap)
			}
			// Renormalised taps keep samples next to the gap unbiased to
			// about 2 %, well away from it to 0.5 %.
			if !inGap && (tt < 0.95 || tt > 1.55) && tt > 0.2 && tt < 3.8 {
				if d := math.Abs(v - math.Sin(2*math.Pi*5*tt)); d > 0.005 {
					t.Fatalf("%g Hz: error %.4f at %.3f s", rate, d, tt)
				}
			}
		}
	}
	// An all-NaN lead (not printed) stays NaN.
	blank := Signal{Lead: LeadV3, SampleRate: 500, Samples: []float64{math.NaN(), math.NaN(), math.NaN(), math.NaN()}}
	for _, v := range Resample(blank, 250).Samples {
		if !math.IsNaN(v) {
			t.Errorf("blank lead resampled to %g", v)
		}
	}
}

// ResampleOnGrid puts the first output sample on t = k/rate at or after the
// signal's start, so leads resampled separately line up.
func TestResampleOnGrid(t *testing.T) {
	cases := []struct {
		start, rate, want float64
	}{
		{0.1234, 500, 0.124},
		{2.5, 500, 2.5},
		{2.5 + 1.0/360, 250, 2.504},
		{0, 250, 0},
	}
	for _, c := range cases {
		s := sine(LeadV2, 360, c.start, 2.5, 3, 1, 0.3)
		out := ResampleOnGrid(s, c.rate)
		if math.Abs(out.Start-c.want) > 1e-12 {
			t.Errorf("start %g at %g Hz: output starts %g, want %g", c.start, c.rate, out.Start, c.want)
		}
		if e := maxErr(out, 3, 1, 0.3, 0.2); e > 0.005 {
			t.Errorf("start %g: error %.4f", c.start, e)
		}
	}
	// Two leads of one record on a 3 × 4 page, different starts, share
	// the grid after ResampleRecord.
	r := Record{Signals: []Signal{sine(LeadI, 360, 0.001, 2.5, 3, 1, 0), sine(LeadAVR, 360, 2.5011, 2.5, 3, 1, 0)}}
	rr := ResampleRecord(r, 500)
	for _, s := range rr.Signals {
		if k := s.Start * 500; math.Abs(k-math.Round(k)) > 1e-9 {
			t.Errorf("%v starts at %g s, off the 500 Hz grid", s.Lead, s.Start)
		}
	}
}

func TestResampleIdentity(t *testing.T) {
	s := sine(LeadI, 500, 0.5, 1, 7, 1, 0)
	out := Resample(s, 500)
	for k := range s.Samples {
		if out.Samples[k] != s.Samples[k] {
			t.Fatal("same-rate resample changed samples")
		}
	}
	out.Samples[0] = 42
	if s.Samples[0] == 42 {
		t.Error("same-rate resample shares memory with its input")
	}
}

// BenchmarkResample12Lead converts a 10 s, 12-lead record from 360 Hz to
// 500 Hz.
func BenchmarkResample12Lead(b *testing.B) {
	var r Record
	for i, l := range Standard12 {
		r.Set(sine(l, 360, 0, 10, 1+float64(i), 1, 0))
	}
	for b.Loop() {
		for _, s := range r.Signals {
			_ = Resample(s, 500)
		}
	}
}
