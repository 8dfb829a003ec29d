package measure

import (
	"errors"
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
	if _, err := Measure(ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 0, Samples: noise}}}, nil); err == nil {
		t.Error("zero sample rate: want an error")
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
	t.Run("200 bpm", func(t *testing.T) {
		rep, err := Measure(gen(200, 1), nil)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(float64(rep.HeartRateBPM)-200) > 3 {
			t.Errorf("HR %v, want 200", rep.HeartRateBPM)
		}
	})
	t.Run("30 bpm", func(t *testing.T) {
		rep, err := Measure(gen(30, 2), nil)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(float64(rep.HeartRateBPM)-30) > 2 {
			t.Errorf("HR %v, want 30", rep.HeartRateBPM)
		}
	})
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
	f.Add([]byte{0, 10, 200, 255, 3, 4}, uint16(500))
	f.Fuzz(func(t *testing.T, data []byte, rate uint16) {
		if len(data) == 0 || rate == 0 {
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
		_, _ = Measure(ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: float64(rate%1000 + 50), Samples: x}}}, nil)
	})
}
