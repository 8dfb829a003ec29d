package measure

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"tracelift/ecg"
	"tracelift/synth"
)

// TestMeasureBadInput: records without usable samples give ecg.ErrNoECG,
// never a panic; odd but valid records give a report.
func TestMeasureBadInput(t *testing.T) {
	nan := func(n int) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = math.NaN()
		}
		return x
	}
	rng := rand.New(rand.NewPCG(9, 9))
	noise := make([]float64, 5000)
	for i := range noise {
		noise[i] = 0.05 * rng.NormFloat64()
	}
	for _, c := range []struct {
		name string
		rec  ecg.Record
	}{
		{"empty", ecg.Record{}},
		{"no samples", ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 500}}}},
		{"all NaN", ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 500, Samples: nan(5000)}}}},
		{"flat", ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 500, Samples: make([]float64, 5000)}}}},
		{"one second", ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 500, Samples: make([]float64, 500)}}}},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := Measure(c.rec, nil)
			if !errors.Is(err, ecg.ErrNoECG) {
				t.Errorf("err = %v, want ecg.ErrNoECG", err)
			}
			if _, err := DetectBeats(c.rec, nil); err != nil && !errors.Is(err, ecg.ErrNoECG) {
				t.Errorf("DetectBeats err = %v", err)
			}
		})
	}
	// Implausible sample rates (a corrupt header, a time column in the
	// wrong unit) and start times are refused as unreadable, never looped
	// on: a rate of 1e-9 Hz once made the chunk length 0 and hung detect.
	for _, fs := range []float64{0, -500, 1e-9, 0.04, 49, 20001, 1e9, math.NaN(), math.Inf(1)} {
		rec := ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: fs, Samples: noise}}}
		if _, err := Measure(rec, nil); !errors.Is(err, ecg.ErrUnreadable) {
			t.Errorf("sample rate %g Hz: Measure err = %v, want ecg.ErrUnreadable", fs, err)
		}
		if _, err := DetectBeats(rec, nil); !errors.Is(err, ecg.ErrUnreadable) {
			t.Errorf("sample rate %g Hz: DetectBeats err = %v, want ecg.ErrUnreadable", fs, err)
		}
	}
	if _, err := Measure(ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 500, Start: math.NaN(), Samples: noise}}}, nil); !errors.Is(err, ecg.ErrUnreadable) {
		t.Errorf("NaN start: err = %v, want ecg.ErrUnreadable", err)
	}
	// Two 10 s leads starting 1e6 s apart would need a grid of 5e8 samples
	// per lead: refused before anything is allocated.
	far := ecg.Record{Signals: []ecg.Signal{
		{Lead: ecg.LeadII, SampleRate: 500, Samples: noise},
		{Lead: ecg.LeadV1, SampleRate: 500, Start: 1e6, Samples: noise},
	}}
	if _, err := Measure(far, nil); !errors.Is(err, ecg.ErrUnreadable) {
		t.Errorf("leads 1e6 s apart: err = %v, want ecg.ErrUnreadable", err)
	}
	// A 2 h lead at 50 Hz beside a 1 s lead at 20 kHz would be resampled
	// to 20 kHz (1.4e8 samples per lead): refused too.
	long := make([]float64, 2*3600*50)
	mixed := ecg.Record{Signals: []ecg.Signal{
		{Lead: ecg.LeadII, SampleRate: 50, Samples: long},
		{Lead: ecg.LeadV1, SampleRate: 20000, Samples: make([]float64, 20000)},
	}}
	if _, err := Measure(mixed, nil); !errors.Is(err, ecg.ErrUnreadable) {
		t.Errorf("50 Hz and 20 kHz leads: err = %v, want ecg.ErrUnreadable", err)
	}
	// Options with NaN or infinite durations fall back to the defaults.
	odd := &Options{ChunkS: math.NaN(), RefractoryS: math.Inf(1), LowPassHz: math.NaN()}
	if _, err := DetectBeats(ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 500, Samples: noise}}}, odd); err != nil {
		t.Errorf("NaN options: %v", err)
	}
	// Noise alone must not panic; it may or may not yield "beats".
	if _, err := Measure(ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 500, Samples: noise}}}, nil); err != nil && !errors.Is(err, ecg.ErrNoECG) {
		t.Errorf("noise: %v", err)
	}
}

// TestMeasureOddRecords: extreme rates, a single 2.5 s lead, leads at
// different sample rates and start times, and a lead restriction.
func TestMeasureOddRecords(t *testing.T) {
	gen := func(hr float64, seed uint64) ecg.Record {
		p := synth.Default()
		p.HeartRateBPM = hr
		rec, err := synth.Generate(p, seed)
		if err != nil {
			t.Fatal(err)
		}
		rec.Beats = nil
		return rec
	}
	for _, c := range []struct {
		hr, tol float64 // bpm
		seed    uint64
	}{{200, 3, 1}, {30, 2, 2}} {
		t.Run(fmt.Sprintf("%g bpm", c.hr), func(t *testing.T) {
			rep, err := Measure(gen(c.hr, c.seed), nil)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(float64(rep.HeartRateBPM)-c.hr) > c.tol {
				t.Errorf("HR %v, want %g", rep.HeartRateBPM, c.hr)
			}
		})
	}
	t.Run("one 2.5 s lead", func(t *testing.T) {
		rec := gen(80, 3)
		s := rec.Signal(ecg.LeadV2).Clone()
		s.Samples = s.Samples[:1250]
		rep, err := Measure(ecg.Record{Signals: []ecg.Signal{s}}, nil)
		if err != nil {
			t.Fatal(err)
		}
		if !rep.QRSMS.Valid() || len(rep.Leads) != 1 {
			t.Errorf("QRS %v, leads %d", rep.QRSMS, len(rep.Leads))
		}
	})
	t.Run("mixed rates and starts", func(t *testing.T) {
		rec := gen(70, 4)
		full, _ := Measure(rec, nil)
		var mixed ecg.Record
		for i, s := range rec.Signals {
			if i%2 == 1 {
				s = ecg.Resample(s, 250)
			}
			if i%3 == 2 {
				k := 37
				s.Samples = s.Samples[k:]
				s.Start += float64(k) / s.SampleRate
			}
			mixed.Signals = append(mixed.Signals, s)
		}
		rep, err := Measure(mixed, nil)
		if err != nil {
			t.Fatal(err)
		}
		if d := math.Abs(float64(rep.QRSMS - full.QRSMS)); !(d <= 8) {
			t.Errorf("QRS %v, full-rate record %v", rep.QRSMS, full.QRSMS)
		}
		if d := math.Abs(float64(rep.QTMS - full.QTMS)); !(d <= 12) {
			t.Errorf("QT %v, full-rate record %v", rep.QTMS, full.QTMS)
		}
	})
	t.Run("low and high sample rates", func(t *testing.T) {
		// A record at 100–200 Hz (old exports, coarse digitisation) is
		// measured on a 500 Hz interpolation and must read like the
		// original (measured 2026-12-01 at 100 Hz: QRS +2, QT 0 ms; before
		// the interpolation +16 and +8 ms). At 50 Hz the QRS detail is
		// gone (QRS +30 ms) but rate and QT (+6 ms) remain usable.
		rec := gen(70, 6)
		full, err := Measure(rec, nil)
		if err != nil {
			t.Fatal(err)
		}
		// Above 2 kHz the record is measured on a 1 kHz version (5 and
		// 20 kHz: QRS −1, QT −1 ms).
		for _, c := range []struct{ fs, qrs, qt float64 }{{100, 6, 8}, {125, 6, 8}, {200, 6, 8}, {50, 40, 20}, {5000, 4, 6}, {20000, 4, 6}} {
			var low ecg.Record
			for _, s := range rec.Signals {
				low.Signals = append(low.Signals, ecg.Resample(s, c.fs))
			}
			rep, err := Measure(low, nil)
			if err != nil {
				t.Fatalf("%v Hz: %v", c.fs, err)
			}
			t.Logf("%v Hz: HR %v QRS %v QT %v (500 Hz: %v, %v, %v)", c.fs, rep.HeartRateBPM, rep.QRSMS, rep.QTMS, full.HeartRateBPM, full.QRSMS, full.QTMS)
			if d := math.Abs(float64(rep.HeartRateBPM - full.HeartRateBPM)); !(d <= 1) {
				t.Errorf("%v Hz: HR %v, at 500 Hz %v", c.fs, rep.HeartRateBPM, full.HeartRateBPM)
			}
			if d := math.Abs(float64(rep.QRSMS - full.QRSMS)); !(d <= c.qrs) {
				t.Errorf("%v Hz: QRS %v, at 500 Hz %v (limit ±%.0f)", c.fs, rep.QRSMS, full.QRSMS, c.qrs)
			}
			if d := math.Abs(float64(rep.QTMS - full.QTMS)); !(d <= c.qt) {
				t.Errorf("%v Hz: QT %v, at 500 Hz %v (limit ±%.0f)", c.fs, rep.QTMS, full.QTMS, c.qt)
			}
		}
	})
	t.Run("lead restriction", func(t *testing.T) {
		rep, err := Measure(gen(70, 5), &Options{Leads: []ecg.Lead{ecg.LeadV5, ecg.LeadII}})
		if err != nil {
			t.Fatal(err)
		}
		if len(rep.Leads) != 2 || rep.Leads[0].Lead != "II" || rep.Leads[1].Lead != "V5" {
			t.Errorf("leads %+v", rep.Leads)
		}
		if _, err := Measure(gen(70, 5), &Options{Leads: []ecg.Lead{ecg.LeadV7}}); !errors.Is(err, ecg.ErrNoECG) {
			t.Errorf("absent lead: err %v, want ErrNoECG", err)
		}
	})
}

// FuzzMeasure feeds arbitrary samples through Measure: no panics.
func FuzzMeasure(f *testing.F) {
	f.Add([]byte{0, 10, 200, 255, 3, 4}, uint16(47507))          // ≈ 500 Hz
	f.Add([]byte{0, 10, 200, 255, 3, 4}, uint16(42046))          // 50 Hz
	f.Add([]byte{0, 10, 200, 255, 3, 4}, uint16(56257))          // 20 kHz
	f.Add([]byte{0, 10, 200, 255, 3, 4}, uint16(0))              // 1e-6 Hz
	f.Add([]byte{0, 10, 200, 255, 3, 4}, uint16(math.MaxUint16)) // 1e6 Hz
	f.Add([]byte{9, 200, 7, 128, 250, 1, 60}, uint16(45334))     // ≈ 200 Hz, NaN gaps
	f.Add([]byte{9, 200, 7, 128, 250, 1, 60}, uint16(55235))     // ≈ 13 kHz
	f.Fuzz(func(t *testing.T, data []byte, rate uint16) {
		if len(data) == 0 {
			return
		}
		x := make([]float64, 0, 4*len(data))
		for len(x) < 3000 {
			for _, b := range data {
				v := float64(int(b)-128) / 64
				if b == 7 {
					v = math.NaN()
				}
				x = append(x, v)
			}
		}
		// Rates from 1e-6 Hz to 1e6 Hz, log-spaced: most of them outside
		// the accepted range, which must give an error, not a hang.
		fs := math.Pow(10, -6+12*float64(rate)/math.MaxUint16)
		rec := ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: fs, Samples: x}}}
		_, err := Measure(rec, nil)
		if (fs < MinSampleRate || fs > MaxSampleRate) && !errors.Is(err, ecg.ErrUnreadable) {
			t.Errorf("rate %g Hz: err = %v, want ecg.ErrUnreadable", fs, err)
		}
		if err != nil && !errors.Is(err, ecg.ErrUnreadable) && !errors.Is(err, ecg.ErrNoECG) {
			t.Errorf("rate %g Hz: err = %v wraps no ecg error class", fs, err)
		}
	})
}

// TestPacingSpikes: a narrow pacing artefact (two samples, +3 / −1 mV in
// every lead, invented for this test) 30 ms before each QRS (ventricular
// pacing) or 160 ms before it (atrial pacing) must not count as a beat of
// its own: spike and QRS fall within the 200 ms refractory period and the
// larger detection peak is kept.
func TestPacingSpikes(t *testing.T) {
	for _, lead := range []float64{0.030, 0.160} {
		p := synth.Default()
		p.DurationS = 20
		rec, err := synth.Generate(p, 3)
		if err != nil {
			t.Fatal(err)
		}
		truth := rec.Beats
		for i := range rec.Signals {
			s := &rec.Signals[i]
			for _, b := range truth {
				k := int(math.Round((b.QRSOn - lead) * s.SampleRate))
				if k >= 0 && k+1 < len(s.Samples) {
					s.Samples[k] += 3
					s.Samples[k+1] -= 1
				}
			}
		}
		rec.Beats = nil
		got, err := DetectBeats(rec, nil)
		if err != nil {
			t.Fatal(err)
		}
		tp, fn, fp := score(beatTimes(truth), beatTimes(got), 0, math.Inf(1))
		t.Logf("spike %.0f ms before the QRS: TP %d FN %d FP %d", 1000*lead, tp, fn, fp)
		if fn > 0 || fp > 0 {
			t.Errorf("spike %.0f ms before the QRS: FN %d FP %d, want 0", 1000*lead, fn, fp)
		}
	}
}
