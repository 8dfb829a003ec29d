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
	// ImageToPaper, when set, is the full true map from input image px to
	// paper mm (for a photo: the lens warp as well as the homography, e.g.
	// render.Truth.PxToPaper); nil means the inverse of PaperToImage.
	ImageToPaper func(u, v float64) (xMM, yMM float64, ok bool)
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
	// ResidualMM is the largest distance, mm, between the paper position
	// of an upright pixel and the best axis-aligned scale-and-shift fit
	// (the distortion left after rectification), over a 21×21 lattice of
	// upright pixels covering the grid area. The upright pixel is taken to
	// the input through the page's full mapping (Page.SourcePoint) and to
	// paper through the reference's full mapping, so a lens warp left on
	// the page counts.
	ResidualMM float64
}

// Evaluate compares a prepared page and its detection with the truth.
func Evaluate(p *imageproc.Page, r *Result, ref Reference) Score {
	var s Score
	toPaper := ref.ImageToPaper
	if toPaper == nil {
		inv, ok := imageproc.Invert(ref.PaperToImage)
		if !ok {
			return s
		}
		toPaper = func(u, v float64) (float64, float64, bool) {
			x, y := imageproc.Apply(inv, u, v)
			return x, y, true
		}
	}
	// upright px → paper mm through both full mappings.
	up := func(x, y float64) (float64, float64, bool) {
		u, v := p.SourcePoint(x, y)
		return toPaper(u, v)
	}
	g := ref.GridRectMM
	// The grid area's box on the upright page, from the best homography
	// (only to place the lattice; scoring uses the full mappings).
	inv, ok := imageproc.Invert(p.ToSource)
	if !ok {
		return s
	}
	toUp := imageproc.Mul(inv, ref.PaperToImage)
	lo := [2]float64{math.Inf(1), math.Inf(1)}
	hi := [2]float64{math.Inf(-1), math.Inf(-1)}
	for _, c := range [4][2]float64{{g[0], g[1]}, {g[2], g[1]}, {g[0], g[3]}, {g[2], g[3]}} {
		u, v := imageproc.Apply(toUp, c[0], c[1])
		lo[0], lo[1] = min(lo[0], u), min(lo[1], v)
		hi[0], hi[1] = max(hi[0], u), max(hi[1], v)
	}
	W, H := float64(p.Ink.Rect.Dx()-1), float64(p.Ink.Rect.Dy()-1)
	lo[0], lo[1] = max(lo[0], 0), max(lo[1], 0)
	hi[0], hi[1] = min(hi[0], W), min(hi[1], H)
	// Least squares X = a·u + c and Y = b·v + e over the lattice points
	// that fall inside the grid area.
	const n = 21
	var us, vs, xs, ys []float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			u := lo[0] + (hi[0]-lo[0])*float64(i)/(n-1)
			v := lo[1] + (hi[1]-lo[1])*float64(j)/(n-1)
			X, Y, ok := up(u, v)
			if !ok || X < g[0] || X > g[2] || Y < g[1] || Y > g[3] {
				continue
			}
			us, vs, xs, ys = append(us, u), append(vs, v), append(xs, X), append(ys, Y)
		}
	}
	// Orientation and skew from the Jacobian at the grid's centre: the
	// paper's axes as seen on the upright page (the inverse of
	// d(paper)/d(upright)).
	cu, cv := (lo[0]+hi[0])/2, (lo[1]+hi[1])/2
	X0, Y0, ok0 := up(cu, cv)
	X1, Y1, ok1 := up(cu+1, cv)
	X2, Y2, ok2 := up(cu, cv+1)
	if !ok0 || !ok1 || !ok2 || len(us) < 10 {
		s.PxPerMMErrX, s.PxPerMMErrY, s.ResidualMM = math.NaN(), math.NaN(), math.NaN()
		return s
	}
	j00, j01, j10, j11 := X1-X0, X2-X0, Y1-Y0, Y2-Y0
	det := j00*j11 - j01*j10
	// Paper x axis (1, 0) and y axis (0, 1) in upright px.
	u1, v1 := j11/det, -j10/det
	u2, v2 := -j01/det, j00/det
	d := math.Mod(math.Atan2(v1, u1)*180/math.Pi+45, 90)
	if d < 0 {
		d += 90
	}
	s.SkewErrDeg = math.Abs(d - 45)
	s.OrientationOK = u1 > 0 && v2 > 0 && math.Abs(v1) < 0.3*u1 && math.Abs(u2) < 0.3*v2
	if s.OrientationOK {
		a, c := linfit(us, xs) // mm per px
		b, e := linfit(vs, ys)
		s.PxPerMMErrX = math.Abs(r.Calibration.PxPerMMX.V*a - 1)
		s.PxPerMMErrY = math.Abs(r.Calibration.PxPerMMY.V*b - 1)
		for k := range us {
			s.ResidualMM = max(s.ResidualMM, math.Hypot(xs[k]-(a*us[k]+c), ys[k]-(b*vs[k]+e)))
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
