package trace

import (
	"fmt"
	"image"
	"math"

	"tracelift/grid"
)

// The check for levels read inside merged strokes: where the QRS strokes
// of several rows cross one another (20 mm/mV pages, 12 × 1 on A4) the
// columns hold one solid mass of ink, millimetres above and below the
// row's trace. pathPoints keeps the path's own level through a run that
// reaches well past where the path enters and leaves it (another row's
// stroke crossing a flat trace), so a lead whose own R wave is lost in
// the mass comes out flat at 0 mV through its QRS: 1.5 mV of R wave read
// as nothing, and the lead correlates better with another lead's truth
// than with its own (a lead swap in the eval: overlap 12x1 seeds 1 and 3,
// aVL and V4). The level there is a guess, so it is withheld (NaN): the
// path stays level, within a pixel, inside an ink run reaching more than
// reachMM above and below it over at least minMM of paper, at most
// levelMV from the row's 0 mV line. A stroke of another row crossing a
// flat trace is narrower than minMM (a pen's width plus its slant), and a lead's own
// apex inside the mass is away from 0 mV and left alone: withholding
// every point buried in a run, level or not, took overlap 3x4 seed 1 V5
// from 13.4 to 3.0 dB (most buried points on own steep strokes are right:
// 0.02–0.04 mV RMS error on clean pages), and withholding level stretches
// at any height cost the overlap corpus more than it gained.

// buriedParams tunes withholdBuried.
type buriedParams struct {
	reachMM float64 // the run must reach this far above and below the path, mm
	flatPx  float64 // the path stays within this of its level over the stretch, px
	levelMV float64 // the level lies within this of the row's 0 mV line, mV
	minMM   float64 // narrower stretches (columns × mm per column) are kept, mm
	padS    float64 // withheld stretches widened by this on each side, s
	gapS    float64 // stretches closer than this in time are joined, s
}

// defaultBuried: a run reaching 2 mm both ways is the test crossings
// (follow.go) applies to another row's stroke; 0.6 mm is two pen widths
// (a printed trace is 0.2–0.4 mm wide, common practice, from memory), so
// one stroke crossing the trace, a pen's width and its slant, is kept; 0.2 mV is the level band in which withheld
// stretches lowered the overlap corpus' error (the stretches at 0.2–0.5
// mV were mostly right); the level must hold to a pixel.
var defaultBuried = buriedParams{reachMM: 2, flatPx: 1, levelMV: 0.2, minMM: 0.6, padS: 0.002, gapS: 0.006}

// withholdBuried sets to NaN the samples of vals[k] (panel k's samples on
// the record grid, fs Hz; xStart[k] the x of its time T0, px) where panel
// k's path holds one level, near the row's 0 mV line, inside a mass of
// ink reaching more than reachMM above and below it within the panel's
// band, over minMM of paper or more. Samples that differ from keep[k] (when keep is
// not nil: re-read by the limb check) are left alone. It returns one
// warning per lead withheld from.
func withholdBuried(ink *image.Gray, cal grid.Calibration, fs float64, panels []*Panel, vals, keep [][]float64, xStart []float64, p buriedParams) []string {
	if fs <= 0 || len(panels) == 0 || ink == nil {
		return nil
	}
	pxPerS := cal.SpeedMMPerS.V * cal.PxPerMMX.V
	pxPerMV := cal.GainMMPerMV.V * cal.PxPerMMY.V
	reach := p.reachMM * cal.PxPerMMY.V
	gap := int(math.Round(p.gapS * fs))
	pad := int(math.Round(p.padS * fs))
	b := ink.Rect
	var warns []string
	for k, pn := range panels {
		v := vals[k]
		if v == nil || len(pn.Path) < 2 {
			continue
		}
		lo, hi := max(b.Min.Y, pn.Bounds.Min.Y), min(b.Max.Y, pn.Bounds.Max.Y)
		// buried reports whether q lies on ink whose run in q's column
		// reaches reach px above and below q inside the band.
		buried := func(q Point) bool {
			x, y := int(math.Round(q.X)), int(math.Round(q.Y))
			if x < b.Min.X || x >= b.Max.X || y < lo || y >= hi {
				return false
			}
			col := ink.Pix[x-b.Min.X:]
			at := func(y int) bool { return col[(y-b.Min.Y)*ink.Stride] >= inkThreshold }
			if !at(y) {
				return false
			}
			for d := 1; float64(d) <= reach+0.5; d++ {
				if y-d < lo || y+d >= hi || !at(y-d) || !at(y+d) {
					return false
				}
			}
			return true
		}
		idx := func(q Point) int { return int(math.Round((pn.T0 + (q.X-xStart[k])/pxPerS) * fs)) }
		n := len(v)
		var mark []bool
		for a := 0; a < len(pn.Path); {
			if !buried(pn.Path[a]) {
				a++
				continue
			}
			y0 := pn.Path[a].Y
			e := a
			for e+1 < len(pn.Path) && math.Abs(pn.Path[e+1].Y-y0) <= p.flatPx && buried(pn.Path[e+1]) {
				e++
			}
			if (pn.Path[e].X-pn.Path[a].X+1)/cal.PxPerMMX.V >= p.minMM && math.Abs(pn.ZeroY-y0) <= p.levelMV*pxPerMV {
				if mark == nil {
					mark = make([]bool, n)
				}
				for j := max(0, idx(pn.Path[a])); j <= min(n-1, idx(pn.Path[e])); j++ {
					mark[j] = true
				}
			}
			a = e + 1
		}
		if mark == nil {
			continue
		}
		var kept []float64
		if keep != nil {
			kept = keep[k]
		}
		wh, first := 0, -1
		for _, sp := range markedSpans(mark, gap, pad) {
			c, f := withholdSpan(v, kept, sp.s0, sp.s1)
			if first < 0 {
				first = f
			}
			wh += c
		}
		if wh > 0 {
			warns = append(warns, fmt.Sprintf("lead %v: %.0f ms withheld (from %.2f s) where its trace runs level through strokes of other rows merged into one mass of ink", pn.Lead, 1000*float64(wh)/fs, float64(first)/fs))
		}
	}
	return warns
}
