package grid

import "fmt"

// Origin says where a calibration value came from.
type Origin string

// Origins of calibration values, from most to least trustworthy.
const (
	FromGrid     Origin = "grid"     // measured from the printed grid's periodicity
	FromPulse    Origin = "pulse"    // measured from the 1 mV calibration pulses
	FromOption   Origin = "option"   // given by the user (--speed, --gain, --dpi)
	FromMetadata Origin = "metadata" // image resolution metadata (PNG pHYs, JPEG density, TIFF tags)
	FromDefault  Origin = "default"  // the standard value (25 mm/s, 10 mm/mV)
)

// Value is a calibration number with its origin.
type Value struct {
	V      float64 `json:"value"`
	Origin Origin  `json:"origin"`
}

func (v Value) String() string { return fmt.Sprintf("%.4g (%s)", v.V, v.Origin) }

// Calibration maps pixels of an upright page image to physical units.
// x grows to the right (time), y grows downwards (voltage falls).
type Calibration struct {
	PxPerMMX    Value // pixels per millimetre along x
	PxPerMMY    Value // pixels per millimetre along y
	SpeedMMPerS Value // paper speed, mm/s
	GainMMPerMV Value // gain, mm/mV
}

// Seconds converts a horizontal distance in pixels to seconds.
func (c Calibration) Seconds(dxPx float64) float64 {
	return dxPx / c.PxPerMMX.V / c.SpeedMMPerS.V
}

// Millivolts converts a vertical distance in pixels, measured downwards
// from the 0 mV baseline, to millivolts (positive upwards).
func (c Calibration) Millivolts(dyPx float64) float64 {
	return -dyPx / c.PxPerMMY.V / c.GainMMPerMV.V
}

// Pulse is a 1 mV calibration pulse found on an upright page, in pixels.
type Pulse struct {
	X0, X1   float64 // left and right edges of the pulse's top, px
	BaseY    float64 // y of the pulse's foot: the row's 0 mV level, px
	TopY     float64 // y of the pulse's top, px
	HeightMM float64 // (BaseY − TopY) / px per mm along y
	// levelsRead: the top and the foot were located on their lines
	// (refinePulse), not from the strokes' ends.
	levelsRead bool
}
