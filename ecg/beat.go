package ecg

import "math"

// BeatClass is a beat's label, using the single-letter WFDB beat codes
// where they exist (N normal/dominant, V premature ventricular, A atrial
// premature, Q unclassifiable).
type BeatClass byte

// Beat classes.
const (
	BeatNormal      BeatClass = 'N'
	BeatVentricular BeatClass = 'V'
	BeatAtrial      BeatClass = 'A'
	BeatUnknown     BeatClass = 'Q'
)

// Beat holds one beat's fiducial points in seconds on the record's time
// base; NaN where a point is absent or unknown (for example no P wave).
// Records carry beats either as ground truth (synthetic records) or as
// annotations read from a file or produced by measurement.
type Beat struct {
	Class  BeatClass
	R      float64 // QRS fiducial (R peak or main deflection)
	POn    float64
	PPeak  float64
	POff   float64
	QRSOn  float64
	QRSOff float64
	TPeak  float64
	TEnd   float64
}

// NewBeat returns a beat of class c at time r with every other point NaN.
func NewBeat(c BeatClass, r float64) Beat {
	n := math.NaN()
	return Beat{Class: c, R: r, POn: n, PPeak: n, POff: n, QRSOn: n, QRSOff: n, TPeak: n, TEnd: n}
}
