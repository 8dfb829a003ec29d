package ecg

import (
	"math"
	"testing"
)

func TestSignalTiming(t *testing.T) {
	nan := math.NaN()
	s := Signal{Lead: LeadV2, SampleRate: 250, Start: 2.5, Samples: []float64{nan, 1, 2, 3, nan}}
	if d := s.Duration(); d != 0.02 {
		t.Errorf("Duration %g, want 0.02 s", d)
	}
	if e := s.End(); math.Abs(e-2.52) > 1e-12 {
		t.Errorf("End %g, want 2.52 s", e)
	}
	if tm := s.Time(2); math.Abs(tm-2.508) > 1e-12 {
		t.Errorf("Time(2) %g, want 2.508 s", tm)
	}
	cases := []struct{ t, want float64 }{{2.504, 1}, {2.5099, 2}, {2.512, 3}, {2.49, nan}, {2.53, nan}, {2.5, nan}}
	for _, c := range cases {
		got := s.At(c.t)
		if got != c.want && !(math.IsNaN(got) && math.IsNaN(c.want)) {
			t.Errorf("At(%g) = %g, want %g", c.t, got, c.want)
		}
	}
	if f, l, ok := s.ValidSpan(); !ok || f != 1 || l != 3 {
		t.Errorf("ValidSpan = %d, %d, %v; want 1, 3, true", f, l, ok)
	}
	blank := Signal{SampleRate: 500, Samples: []float64{nan, nan}}
	if _, _, ok := blank.ValidSpan(); ok {
		t.Error("all-NaN signal has a valid span")
	}
	if (&Signal{}).Duration() != 0 {
		t.Error("zero-rate signal has a duration")
	}
}

func TestRecordSetAndClone(t *testing.T) {
	var r Record
	r.Set(Signal{Lead: LeadV1, SampleRate: 500, Start: 5, Samples: []float64{1, 2}})
	r.Set(Signal{Lead: LeadI, SampleRate: 500, Start: 0, Samples: []float64{3}})
	r.Set(Signal{Lead: LeadV1, SampleRate: 500, Start: 5, Samples: []float64{9, 9, 9}}) // replaces
	if len(r.Signals) != 2 || r.Signals[0].Lead != LeadI || len(r.Signal(LeadV1).Samples) != 3 {
		t.Fatalf("after Set: %+v", r.Signals)
	}
	if r.Signal(LeadAVF) != nil {
		t.Error("missing lead returned non-nil")
	}
	if s, e := r.Span(); s != 0 || math.Abs(e-5.006) > 1e-12 {
		t.Errorf("Span = %g, %g; want 0, 5.006", s, e)
	}
	if s, e := (&Record{}).Span(); s != 0 || e != 0 {
		t.Errorf("empty Span = %g, %g", s, e)
	}
	r.Meta.Notes = []string{"a"}
	r.Beats = []Beat{NewBeat(BeatNormal, 0.4)}
	c := r.Clone()
	c.Signals[0].Samples[0] = -1
	c.Meta.Notes[0] = "b"
	c.Beats[0].R = 9
	if r.Signals[0].Samples[0] != 3 || r.Meta.Notes[0] != "a" || r.Beats[0].R != 0.4 {
		t.Error("Clone shares memory with the original")
	}
	b := NewBeat(BeatVentricular, 1.5)
	if b.Class != 'V' || b.R != 1.5 || !math.IsNaN(b.POn) || !math.IsNaN(b.TEnd) || !math.IsNaN(b.QRSOn) {
		t.Errorf("NewBeat = %+v", b)
	}
}
