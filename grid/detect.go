package grid

import (
	"fmt"
	"image"
	"math"
	"slices"

	"tracelift/ecg"
	"tracelift/imageproc"
)

// ErrNoGrid reports a page on which neither a grid nor a calibration pulse
// could be found (and no resolution was given). It wraps ecg.ErrNoECG.
var ErrNoGrid = fmt.Errorf("grid: no grid and no calibration pulse found: %w", ecg.ErrNoECG)

// Options tune Detect. A nil *Options means the defaults.
type Options struct {
	// DPIX, DPIY are a resolution given by the user (--dpi), dots per inch;
	// 0 means none. Resolution metadata travels in imageproc.Page.DPIX/DPIY.
	DPIX, DPIY float64
	// SpeedMMPerS and GainMMPerMV are the user's paper speed (mm/s) and
	// gain (mm/mV); 0 means automatic.
	SpeedMMPerS, GainMMPerMV float64
}

// Result is what Detect found on an upright page.
type Result struct {
	Calibration Calibration
	Pulses      []Pulse // 1 mV calibration pulses, upright px
	// MinorPitchX, MinorPitchY are the 1 mm line spacings, px (equal to the
	// calibration's px/mm when measured from the grid).
	MinorPitchX, MinorPitchY float64
	// XLines, YLines are the positions of the major (5 mm) lines found:
	// x of vertical lines and y of horizontal lines, px.
	XLines, YLines []float64
	// GridFound reports that the printed grid was measured on both axes.
	GridFound bool
	Warnings  []string
}

// Detect measures the grid of an upright page (imageproc.Prepare's
// output) and calibrates it: px/mm along x and y from the grid's period,
// gain from the calibration pulses, speed from options or 25 mm/s. Without
// a grid it falls back to the user's resolution, the pulses (assuming
// 10 mm/mV) and the image's metadata, with a warning. With none of these it
// returns ErrNoGrid.
func Detect(p *imageproc.Page, opt *Options) (*Result, error) {
	var o Options
	if opt != nil {
		o = *opt
	}
	if p == nil || p.Grid == nil || p.Ink == nil {
		return nil, fmt.Errorf("grid: detect: no page")
	}
	r := &Result{}
	gm := p.Grid
	if p.GridColor == imageproc.GridGrey || p.GridColor == imageproc.GridNone {
		// Grey and 1-bit pages: the period is measured on the darkness
		// itself; traces add no periodic component, faint or broken grid
		// lines missed by the structure split still count.
		gm = darkness(p.Gray, p.Ink)
	}
	px, okx := measureAxis(gm, true)
	py, oky := measureAxis(gm, false)
	if okx && oky {
		okx, oky = trustTags(p, o, px, py, &r.Warnings)
	}
	if okx && oky {
		// Both axes of one page: unresolved minor lines on one axis only
		// show up as a 5:1 disagreement.
		px, py = reconcile(px, py)
	}
	// A resolution prior (the user's, else metadata) settles a 5:1
	// mix-up of minor and major lines on each axis.
	if okx {
		px.pitch = settle5(px.pitch, orOther(o.DPIX, p.DPIX), &r.Warnings, "x")
	}
	if oky {
		py.pitch = settle5(py.pitch, orOther(o.DPIY, p.DPIY), &r.Warnings, "y")
	}
	if okx {
		r.Calibration.PxPerMMX = Value{px.pitch, FromGrid}
		r.MinorPitchX = px.pitch
		r.XLines = px.major
	}
	if oky {
		r.Calibration.PxPerMMY = Value{py.pitch, FromGrid}
		r.MinorPitchY = py.pitch
		r.YLines = py.major
	}
	r.GridFound = okx && oky
	// Only one axis measured: the other from the option, else assume
	// square pixels. A lone axis that disagrees with a resolution known for
	// both axes is more likely a misread of a faint or broken grid (a fax
	// in standard mode) than a page printed at a scale, which would show on
	// both axes: then the resolution is used for both.
	fromResolution := false
	if okx != oky {
		ux, uy := orOther(o.DPIX, p.DPIX), orOther(o.DPIY, p.DPIY)
		measured, prior, axis := px.pitch, ux/25.4, "x"
		if oky {
			measured, prior, axis = py.pitch, uy/25.4, "y"
		}
		if ux > 0 && uy > 0 && math.Abs(measured/prior-1) > 0.015 {
			origin := FromMetadata
			if o.DPIX > 0 || o.DPIY > 0 {
				origin = FromOption
			}
			r.Calibration.PxPerMMX = Value{ux / 25.4, origin}
			r.Calibration.PxPerMMY = Value{uy / 25.4, origin}
			r.Warnings = append(r.Warnings, fmt.Sprintf("grid: only the %s axis of the grid was measured (%.4g px/mm), %.1f %% off the resolution (%s); px/mm taken from the resolution",
				axis, measured, 100*(measured/prior-1), origin))
			fromResolution = true
		}
	}
	switch {
	case okx && oky, fromResolution:
	case okx && !oky:
		r.Calibration.PxPerMMY = fallbackAxis(o.DPIY, p.DPIY, px.pitch)
		r.Warnings = append(r.Warnings, "grid: horizontal grid lines not found; px/mm along y taken as "+r.Calibration.PxPerMMY.String())
	case oky && !okx:
		r.Calibration.PxPerMMX = fallbackAxis(o.DPIX, p.DPIX, py.pitch)
		r.Warnings = append(r.Warnings, "grid: vertical grid lines not found; px/mm along x taken as "+r.Calibration.PxPerMMX.String())
	case !okx && !oky:
		switch {
		case o.DPIX > 0 || o.DPIY > 0:
			dx, dy := orOther(o.DPIX, o.DPIY), orOther(o.DPIY, o.DPIX)
			r.Calibration.PxPerMMX = Value{dx / 25.4, FromOption}
			r.Calibration.PxPerMMY = Value{dy / 25.4, FromOption}
			r.Warnings = append(r.Warnings, "grid: no grid found; px/mm from the given resolution")
		case p.Mesh != nil && p.Mesh.LatticePeriod > 0:
			// A photo registered to its grid lattice: the registration
			// measured the lattice's period over the whole page (its
			// major lines, five minor periods), and the registered page
			// is square to it.
			v := p.Mesh.LatticePeriod / 5
			r.Calibration.PxPerMMX = Value{v, FromGrid}
			r.Calibration.PxPerMMY = Value{v, FromGrid}
			r.Warnings = append(r.Warnings, fmt.Sprintf("grid: grid lines not measured on the registered photo; px/mm (%.4g) from the lattice registration's period, taken as 5 mm", v))
		case p.DPIX > 0 || p.DPIY > 0:
			dx, dy := orOther(p.DPIX, p.DPIY), orOther(p.DPIY, p.DPIX)
			r.Calibration.PxPerMMX = Value{dx / 25.4, FromMetadata}
			r.Calibration.PxPerMMY = Value{dy / 25.4, FromMetadata}
			r.Warnings = append(r.Warnings, "grid: no grid found; px/mm from the image's resolution metadata")
		}
	}
	// Pulses: with a scale, search in millimetres; without one, a
	// rectangular pulse of any size gives the scale (1 mV = gain mm).
	scaleY := r.Calibration.PxPerMMY.V
	scaleX := r.Calibration.PxPerMMX.V
	// The luminance backs up the ink map only where the separation was
	// structural (grey and 1-bit pages, whose split removes a trace lying
	// on a grid line). On colour pages the ink map is complete, and dark
	// red major lines in the luminance made flat 'tops' and 'feet' for
	// consecutive R waves (a 125 bpm rhythm strip read at 4.2 mm/mV).
	gray := p.Gray
	if p.GridColor != imageproc.GridGrey && p.GridColor != imageproc.GridNone {
		gray = nil
	}
	// A pulse edge lost with a grid line is completed from the luminance
	// only where it has shades of grey (not on a 1-bit page).
	r.Pulses = findPulses(p.Ink, gray, scaleX, scaleY, gray != nil && !p.Bilevel)
	if scaleY == 0 {
		if len(r.Pulses) == 0 {
			return nil, ErrNoGrid
		}
		gain := o.GainMMPerMV
		if gain == 0 {
			gain = 10
		}
		hpx := medianPulse(r.Pulses, func(q Pulse) float64 { return q.BaseY - q.TopY })
		v := hpx / gain
		r.Calibration.PxPerMMY = Value{v, FromPulse}
		r.Calibration.PxPerMMX = Value{v, FromPulse}
		r.Warnings = append(r.Warnings, fmt.Sprintf("grid: no grid and no resolution; px/mm (%.3g) from the calibration pulse's height assuming %g mm/mV and square pixels", v, gain))
		for i := range r.Pulses {
			r.Pulses[i].HeightMM = (r.Pulses[i].BaseY - r.Pulses[i].TopY) / v
		}
	}
	r.calibrateGainSpeed(o)
	return r, nil
}

func orOther(a, b float64) float64 {
	if a > 0 {
		return a
	}
	return b
}

// fallbackAxis picks px/mm for an axis without grid lines: the user's dpi,
// else metadata, else the other axis's value (square pixels).
func fallbackAxis(user, meta, other float64) Value {
	switch {
	case user > 0:
		return Value{user / 25.4, FromOption}
	case meta > 0:
		return Value{meta / 25.4, FromMetadata}
	}
	return Value{other, FromGrid}
}

// standardGains are the usual gains, mm/mV (standards.md §1.1, M).
var standardGains = []float64{5, 10, 20}

// calibrateGainSpeed fills gain and speed.
func (r *Result) calibrateGainSpeed(o Options) {
	c := &r.Calibration
	switch {
	case o.GainMMPerMV > 0:
		c.GainMMPerMV = Value{o.GainMMPerMV, FromOption}
		if len(r.Pulses) > 0 && c.PxPerMMY.Origin != FromPulse {
			h := medianPulse(r.Pulses, func(q Pulse) float64 { return q.HeightMM })
			if math.Abs(h-o.GainMMPerMV) > 0.1*o.GainMMPerMV {
				r.Warnings = append(r.Warnings, fmt.Sprintf("grid: calibration pulses are %.1f mm tall but the gain was given as %g mm/mV", h, o.GainMMPerMV))
			}
		}
	case len(r.Pulses) > 0 && c.PxPerMMY.Origin != FromPulse:
		h := medianPulse(levelsRead(r.Pulses), func(q Pulse) float64 { return q.HeightMM })
		g, snapped := snapGain(h)
		c.GainMMPerMV = Value{g, FromPulse}
		if !snapped {
			r.Warnings = append(r.Warnings, fmt.Sprintf("grid: calibration pulse height %.2f mm is not a standard gain (5, 10, 20 mm/mV); using the measured value", h))
		}
	case c.PxPerMMY.Origin == FromPulse:
		c.GainMMPerMV = Value{10, FromDefault}
		if o.GainMMPerMV > 0 {
			c.GainMMPerMV = Value{o.GainMMPerMV, FromOption}
		}
	default:
		c.GainMMPerMV = Value{10, FromDefault}
		r.Warnings = append(r.Warnings, "grid: no calibration pulse found; assuming the standard 10 mm/mV")
	}
	if o.SpeedMMPerS > 0 {
		c.SpeedMMPerS = Value{o.SpeedMMPerS, FromOption}
	} else {
		c.SpeedMMPerS = Value{25, FromDefault}
	}
	// Cross-check: the printed pulse is usually about 0.2 s wide (common
	// practice): at 50 mm/s it would be about 10 mm.
	if len(r.Pulses) > 0 && c.PxPerMMX.V > 0 {
		wmm := medianPulse(r.Pulses, func(q Pulse) float64 { return (q.X1 - q.X0) / c.PxPerMMX.V })
		if s := wmm / c.SpeedMMPerS.V; s < 0.06 || s > 0.5 {
			r.Warnings = append(r.Warnings, fmt.Sprintf("grid: calibration pulse is %.1f mm wide (%.2f s at %g mm/s): check the paper speed", wmm, s, c.SpeedMMPerS.V))
		}
	}
}

// snapGain rounds a measured pulse height (mm for 1 mV) to a standard
// gain when within 4 %.
func snapGain(h float64) (float64, bool) {
	for _, g := range standardGains {
		if math.Abs(h-g) <= 0.04*g {
			return g, true
		}
	}
	return h, false
}

// levelsRead returns the pulses whose top and foot were located on their
// lines, or all of ps when none was. Where a fax broke a pulse's foot
// line, its height from the strokes' ends ran 2.7 px (0.3 mm) long, and
// with two pulses the median took it: 10.5 mm, off the standard gain
// (fax seed 6, 3x4 and Cabrera pages).
func levelsRead(ps []Pulse) []Pulse {
	var out []Pulse
	for _, p := range ps {
		if p.levelsRead {
			out = append(out, p)
		}
	}
	if len(out) == 0 {
		return ps
	}
	return out
}

func medianPulse(ps []Pulse, f func(Pulse) float64) float64 {
	v := make([]float64, len(ps))
	for i, q := range ps {
		v[i] = f(q)
	}
	slices.Sort(v)
	return v[len(v)/2]
}

// axisFit is one axis's grid measurement.
type axisFit struct {
	pitch  float64   // px per 1 mm
	major  []float64 // major line positions, px
	minorR bool      // minor lines resolved
	period float64   // autocorrelation period used, px
	lines  float64   // lattice periods spanned by the fitted lines
}

// reconcile fixes a 5:1 mix-up between the axes (pixels are square
// after Prepare unless the page is a photo): if one axis reads 5× the
// other, the axis whose fit spanned more lattice periods decides.
func reconcile(x, y axisFit) (axisFit, axisFit) {
	ratio := x.pitch / y.pitch
	switch {
	case math.Abs(ratio/5-1) < 0.15: // x looks 5× y
		if x.lines >= y.lines {
			y.pitch *= 5
		} else {
			x.pitch /= 5
		}
	case math.Abs(ratio*5-1) < 0.15: // y looks 5× x
		if y.lines >= x.lines {
			x.pitch *= 5
		} else {
			y.pitch /= 5
		}
	}
	return x, y
}

// darkness returns 255 − g where the ink map is weak and 0 on ink (and
// next to it), so that traces — whose QRS complexes line up across rows at
// the heart rate — do not dominate the profiles.
func darkness(g, ink *image.Gray) *image.Gray {
	d := image.NewGray(g.Rect)
	w, h := g.Rect.Dx(), g.Rect.Dy()
	for y := 0; y < h; y++ {
		gr := g.Pix[y*g.Stride : y*g.Stride+w]
		ir := ink.Pix[y*ink.Stride : y*ink.Stride+w]
		dr := d.Pix[y*d.Stride : y*d.Stride+w]
		for x, v := range gr {
			if ir[x] > 40 || (x > 0 && ir[x-1] > 40) || (x < w-1 && ir[x+1] > 40) {
				continue
			}
			dr[x] = 255 - v
		}
	}
	return d
}

// settle5 compares a grid pitch (px/mm) with a resolution prior (dpi, 0
// for none): a ratio near 5 or 1/5 means major lines were taken for minor
// ones or the reverse, and is corrected; any other large disagreement is
// reported (the page may have been printed or scanned at another scale).
func settle5(pitch, dpi float64, warn *[]string, axis string) float64 {
	// 72 and 96 dpi are software defaults (JPEG/JFIF, screenshots, phone
	// photos), not measurements: they settle nothing (common practice).
	if dpi <= 0 || math.Abs(dpi-72) < 0.5 || math.Abs(dpi-96) < 0.5 {
		return pitch
	}
	prior := dpi / 25.4
	switch ratio := pitch / prior; {
	case math.Abs(ratio/5-1) < 0.12:
		*warn = append(*warn, fmt.Sprintf("grid: %s pitch %.3g px looked like 1 mm but the resolution says 5 mm; using %.4g px/mm", axis, pitch, pitch/5))
		return pitch / 5
	case math.Abs(ratio*5-1) < 0.12:
		*warn = append(*warn, fmt.Sprintf("grid: %s pitch %.3g px looked like 5 mm but the resolution says 1 mm; using %.4g px/mm", axis, pitch, pitch*5))
		return pitch * 5
	case math.Abs(ratio-1) > 0.15:
		*warn = append(*warn, fmt.Sprintf("grid: %s grid gives %.4g px/mm but the resolution says %.4g; trusting the grid", axis, pitch, prior))
	}
	return pitch
}

// trustTags settles a disagreement between the two axes of a grey or 1-bit
// page (a fax) whose resolution tags are known for both axes: when one
// axis agrees with its tag within 0.5 % and the other is more than 1 %
// off both its tag and the first axis, the second is taken as not
// measured (it then comes from the tags, with a warning). Binarisation
// leaves the grid's horizontal lines the most fragile part of a fax in
// standard mode (98 lines per inch), and what the row profile then holds
// is not a grid: the steps of the deskewed vertical lines (a one-pixel
// line at a tilt θ moves a column every 1/tan θ rows; at 1.49° that read
// as a 5 mm period 4.9 % short), or the rhythm of the resampling to
// square pixels (17 % off on an unskewed page). A fax's resolution is fixed
// by its mode (ITU-T T.4: 204 dpi across, 3.85 or 7.7 lines/mm down;
// standards.md §6.1); a colour page is left alone, as is a page where
// neither axis agrees with its tags.
func trustTags(p *imageproc.Page, o Options, px, py axisFit, warn *[]string) (okx, oky bool) {
	if p.GridColor != imageproc.GridGrey && p.GridColor != imageproc.GridNone {
		return true, true
	}
	ux, uy := orOther(o.DPIX, p.DPIX)/25.4, orOther(o.DPIY, p.DPIY)/25.4
	if ux <= 0 || uy <= 0 {
		return true, true
	}
	off := func(v, ref float64) float64 { return math.Abs(v/ref - 1) }
	switch {
	case off(px.pitch, ux) <= 0.005 && off(py.pitch, uy) > 0.01 && off(py.pitch, px.pitch*uy/ux) > 0.01:
		*warn = append(*warn, fmt.Sprintf("grid: the y axis read %.4g px/mm, %.1f %% off the resolution while x agrees with it; y not measured", py.pitch, 100*(py.pitch/uy-1)))
		return true, false
	case off(py.pitch, uy) <= 0.005 && off(px.pitch, ux) > 0.01 && off(px.pitch, py.pitch*ux/uy) > 0.01:
		*warn = append(*warn, fmt.Sprintf("grid: the x axis read %.4g px/mm, %.1f %% off the resolution while y agrees with it; x not measured", px.pitch, 100*(px.pitch/ux-1)))
		return false, true
	}
	return true, true
}
