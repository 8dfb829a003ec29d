package measure

import (
	"math"

	"tracelift/ecg"
)

// Options tune measurement. A nil *Options, and any zero field, means the
// default given in the field's comment.
type Options struct {
	// Leads restricts measurement to these leads (nil: every lead).
	Leads []ecg.Lead
	// HighPassHz, when > 0, removes baseline wander from the measurement
	// signals with a zero-phase Butterworth high-pass at this cut-off
	// instead of the default median-filter baseline estimate (which
	// leaves ST and T levels undistorted; see medianBaseline).
	HighPassHz float64
	// LowPassHz is the measurement low-pass cut-off (default 40 Hz,
	// clamped below 0.45 × the sample rate).
	LowPassHz float64
	// RefractoryS is the shortest RR accepted by beat detection
	// (default 0.2 s, Pan & Tompkins 1985).
	RefractoryS float64
	// ChunkS is the length of the stretches long records are processed
	// in (default 300 s).
	ChunkS float64
	// MaxTemplateBeats caps the dominant beats that enter each median
	// beat; longer records use beats spread evenly over the record
	// (default 400).
	MaxTemplateBeats int
	// Sex ("F" or "M") selects the sex-specific QTc and Cornell
	// thresholds; empty uses the lower (male) QTc threshold 450 ms and the
	// female Cornell threshold 2.0 mV, and says so in the flag.
	Sex string
	// NoBeatTable leaves Report.Beats empty (per-beat delineation is the
	// slowest part on very long records).
	NoBeatTable bool

	delin *delinParams // tests: delineation parameters (nil: defaults)
}

func (o *Options) withDefaults() Options {
	var r Options
	if o != nil {
		r = *o
	}
	if !(r.LowPassHz > 0) || math.IsInf(r.LowPassHz, 0) { // also NaN and ±Inf
		r.LowPassHz = 40
	}
	if !(r.RefractoryS > 0) || math.IsInf(r.RefractoryS, 0) { // also NaN and ±Inf
		r.RefractoryS = 0.2
	}
	if !(r.ChunkS > 0) || math.IsInf(r.ChunkS, 0) { // also NaN and ±Inf
		r.ChunkS = 300
	}
	if r.MaxTemplateBeats <= 0 {
		r.MaxTemplateBeats = 400
	}
	return r
}

func (o *Options) delinParams() delinParams {
	if o.delin != nil {
		return *o.delin
	}
	return defaultDelin
}
