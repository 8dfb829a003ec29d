package grid

import (
	"math"

	"tracelift/imageproc"
)

// Reference is the true geometry of a page, for example from a rendered
// page's truth sidecar, against which Evaluate scores the front end.
type Reference struct {
	// PaperToImage maps paper mm to input image px (row-major homography).
	PaperToImage [9]float64
	// GridRectMM is the gridded area [x0, y0, x1, y1], mm.
	GridRectMM  [4]float64
	RotationDeg float64 // skew applied to the page, counter-clockwise as seen (informative)
	GainMMPerMV float64
	SpeedMMPerS float64
}

// Score is the front end's error on one page.
type Score struct {
	// SkewErrDeg is the skew left on the upright page, degrees: the angle
	// of the paper's x axis at the grid's centre, modulo 90°.
	SkewErrDeg float64
	// PxPerMMErrX, PxPerMMErrY are relative errors of the calibration
	// against the true px/mm of the upright page (0.01 = 1 %).
	PxPerMMErrX, PxPerMMErrY float64
	// GainOK reports the calibration's gain equal to the truth (within
	// 2 %), whatever its origin; GainRead additionally requires that it
	// was read from the page's pulses (not defaulted).
	GainOK, GainRead bool
	// Pulses is the number of calibration pulses found.
	Pulses int
	// OrientationOK reports that paper x runs right and paper y down on
	// the upright page.
	OrientationOK bool
	// ResidualMM is the largest distance, mm, between a paper point's
	// upright position and the best axis-aligned scale-and-shift fit
	// (the distortion left after rectification), over a 21×21 lattice of
	// the grid area.
	ResidualMM float64
}

// Evaluate compares a prepared page and its detection with the truth.
func Evaluate(p *imageproc.Page, r *Result, ref Reference) Score {
	var s Score
	inv, ok := imageproc.Invert(p.ToSource)
	if !ok {
		return s
	}
	toUp := imageproc.Mul(inv, ref.PaperToImage) // paper mm → upright px
	g := ref.GridRectMM
	// Least squares u = a·X + c and v = b·Y + e over a lattice.
	const n = 21
	var xs, ys, us, vs []float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			X := g[0] + (g[2]-g[0])*float64(i)/(n-1)
			Y := g[1] + (g[3]-g[1])*float64(j)/(n-1)
			u, v := imageproc.Apply(toUp, X, Y)
			xs, ys, us, vs = append(xs, X), append(ys, Y), append(us, u), append(vs, v)
		}
	}
	a, c := linfit(xs, us)
	b, e := linfit(ys, vs)
	// Orientation: the Jacobian at the centre must be close to diagonal
	// with positive entries.
	cx, cy := (g[0]+g[2])/2, (g[1]+g[3])/2
	u0, v0 := imageproc.Apply(toUp, cx, cy)
	u1, v1 := imageproc.Apply(toUp, cx+1, cy)
	u2, v2 := imageproc.Apply(toUp, cx, cy+1)
	// Skew left on the upright page: the angle of the paper's x axis at
	// the centre (modulo 90°, so a wrong quarter turn does not count here).
	d := math.Mod(math.Atan2(v1-v0, u1-u0)*180/math.Pi+45, 90)
	if d < 0 {
		d += 90
	}
	s.SkewErrDeg = math.Abs(d - 45)
	s.OrientationOK = u1-u0 > 0 && v2-v0 > 0 && math.Abs(v1-v0) < 0.3*(u1-u0) && math.Abs(u2-u0) < 0.3*(v2-v0)
	if s.OrientationOK {
		s.PxPerMMErrX = math.Abs(r.Calibration.PxPerMMX.V/a - 1)
		s.PxPerMMErrY = math.Abs(r.Calibration.PxPerMMY.V/b - 1)
		for k := range xs {
			du := (us[k] - (a*xs[k] + c)) / a
			dv := (vs[k] - (b*ys[k] + e)) / b
			s.ResidualMM = max(s.ResidualMM, math.Hypot(du, dv))
		}
	} else {
		s.PxPerMMErrX, s.PxPerMMErrY, s.ResidualMM = math.NaN(), math.NaN(), math.NaN()
	}
	s.GainOK = ref.GainMMPerMV > 0 && math.Abs(r.Calibration.GainMMPerMV.V/ref.GainMMPerMV-1) < 0.02
	s.GainRead = s.GainOK && r.Calibration.GainMMPerMV.Origin == FromPulse
	s.Pulses = len(r.Pulses)
	return s
}

// linfit returns slope and intercept of the least-squares line y = a·x + b.
func linfit(x, y []float64) (a, b float64) {
	var sx, sy, sxx, sxy float64
	n := float64(len(x))
	for i := range x {
		sx += x[i]
		sy += y[i]
		sxx += x[i] * x[i]
		sxy += x[i] * y[i]
	}
	d := n*sxx - sx*sx
	if d == 0 {
		return 0, 0
	}
	a = (n*sxy - sx*sy) / d
	return a, (sy - a*sx) / n
}
