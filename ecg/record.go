package ecg

import (
	"math"
	"sort"
	"time"
)

// Signal is one lead's samples in millivolts at a uniform rate.
//
// Samples[i] was taken at Start + i/SampleRate seconds on the record's time
// base. A NaN sample means the lead was not recorded or not printed at that
// moment (on a 3 × 4 page, for instance, each short lead covers only 2.5 s
// of the 10 s record and is NaN elsewhere).
type Signal struct {
	Lead       Lead
	SampleRate float64   // Hz, > 0
	Start      float64   // s, time of Samples[0] on the record's time base
	Samples    []float64 // mV; NaN = not recorded
}

// Duration returns the time span covered by the samples, in seconds.
func (s *Signal) Duration() float64 {
	if s.SampleRate <= 0 {
		return 0
	}
	return float64(len(s.Samples)) / s.SampleRate
}

// End returns the time just after the last sample, in seconds.
func (s *Signal) End() float64 { return s.Start + s.Duration() }

// Time returns the time of sample i in seconds.
func (s *Signal) Time(i int) float64 { return s.Start + float64(i)/s.SampleRate }

// At returns the sample nearest to time t (s), or NaN outside the signal.
func (s *Signal) At(t float64) float64 {
	i := int(math.Round((t - s.Start) * s.SampleRate))
	if i < 0 || i >= len(s.Samples) {
		return math.NaN()
	}
	return s.Samples[i]
}

// ValidSpan returns the indices [first, last] of the first and last
// non-NaN samples, and ok=false when every sample is NaN.
func (s *Signal) ValidSpan() (first, last int, ok bool) {
	first, last = -1, -1
	for i, v := range s.Samples {
		if !math.IsNaN(v) {
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	return first, last, first >= 0
}

// Clone returns a deep copy of s.
func (s *Signal) Clone() Signal {
	c := *s
	c.Samples = append([]float64(nil), s.Samples...)
	return c
}

// Metadata describes where a record came from and how it was printed or
// acquired. Zero values mean unknown.
type Metadata struct {
	Source      string    // file name, or "synthetic"
	Page        int       // 1-based page of a multi-page source; 0 if not paged
	PatientID   string    // free text; empty when anonymous
	PatientName string    // free text; empty when anonymous
	Sex         string    // "F", "M" or empty
	BirthDate   time.Time // zero when unknown
	Acquired    time.Time // start of the recording; zero when unknown
	Institution string
	Device      string
	SpeedMMPerS float64 // paper speed, mm/s
	GainMMPerMV float64 // chest and limb gain, mm/mV
	Filter      string  // filter setting as printed, e.g. "0.05–150 Hz"
	Notes       []string
}

// Record is a set of lead signals on one time base plus metadata.
// Leads appear at most once.
type Record struct {
	Meta    Metadata
	Signals []Signal
	// Beats are optional beat annotations (ground truth for synthetic
	// records, reference annotations read from a file, or detected beats),
	// in time order.
	Beats []Beat
}

// Signal returns a pointer to the record's signal for lead l, or nil.
func (r *Record) Signal(l Lead) *Signal {
	for i := range r.Signals {
		if r.Signals[i].Lead == l {
			return &r.Signals[i]
		}
	}
	return nil
}

// Leads returns the record's leads in conventional order.
func (r *Record) Leads() []Lead {
	out := make([]Lead, 0, len(r.Signals))
	for _, s := range r.Signals {
		out = append(out, s.Lead)
	}
	sort.Slice(out, func(i, j int) bool { return out[i] < out[j] })
	return out
}

// Set stores s, replacing any signal of the same lead.
func (r *Record) Set(s Signal) {
	if p := r.Signal(s.Lead); p != nil {
		*p = s
		return
	}
	r.Signals = append(r.Signals, s)
	sort.SliceStable(r.Signals, func(i, j int) bool { return r.Signals[i].Lead < r.Signals[j].Lead })
}

// Span returns the earliest start and latest end over all signals, in
// seconds. It returns 0, 0 for an empty record.
func (r *Record) Span() (start, end float64) {
	if len(r.Signals) == 0 {
		return 0, 0
	}
	start, end = math.Inf(1), math.Inf(-1)
	for i := range r.Signals {
		s := &r.Signals[i]
		start = math.Min(start, s.Start)
		end = math.Max(end, s.End())
	}
	return start, end
}

// Clone returns a deep copy of r.
func (r *Record) Clone() Record {
	c := Record{Meta: r.Meta}
	c.Meta.Notes = append([]string(nil), r.Meta.Notes...)
	c.Beats = append([]Beat(nil), r.Beats...)
	for i := range r.Signals {
		c.Signals = append(c.Signals, r.Signals[i].Clone())
	}
	return c
}
