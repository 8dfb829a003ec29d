package trace

import (
	"math"

	"tracelift/ecg"
	"tracelift/grid"
)

// breakAt reports whether row r shows a column separator near x: a printed
// tick within 1.5 mm.
func breakAt(r rowInfo, x, pxX float64) bool {
	for _, t := range r.ticks {
		if math.Abs(t-x) <= 2.5*pxX {
			return true
		}
	}
	return false
}

// breakFraction is the share of rows[lo:hi] that show a separator at the
// fraction f of their width.
func breakFraction(rows []rowInfo, lo, hi int, f, pxX float64) float64 {
	if hi > len(rows) {
		hi = len(rows)
	}
	if hi <= lo {
		return 0
	}
	n := 0
	for _, r := range rows[lo:hi] {
		x := r.traceX0 + f*(float64(r.x1)-r.traceX0)
		if breakAt(r, x, pxX) {
			n++
		}
	}
	return float64(n) / float64(hi-lo)
}

// detectLayout chooses a layout from the number of trace rows and the
// column separators found in them.
func detectLayout(rows []rowInfo, cal grid.Calibration) *Layout {
	pxX := cal.PxPerMMX.V
	n := len(rows)
	quarter := func(lo, hi int) float64 {
		return (breakFraction(rows, lo, hi, 0.25, pxX) + breakFraction(rows, lo, hi, 0.5, pxX) + breakFraction(rows, lo, hi, 0.75, pxX)) / 3
	}
	half := func(lo, hi int) float64 {
		return breakFraction(rows, lo, hi, 0.5, pxX)
	}
	named := func(s string) *Layout {
		l, _ := StandardLayout(s)
		return l
	}
	switch {
	case n == 12:
		return named("12x1")
	case n == 6:
		// 6 × 2: separators at 1/2 in every row; 3 × 4 + 3: at 1/4, 1/2,
		// 3/4 in the first three rows and none in the rhythm strips.
		s3x4 := (breakFraction(rows, 0, 3, 0.25, pxX) + breakFraction(rows, 0, 3, 0.75, pxX)) / 2
		if half(3, 6) > s3x4 {
			return named("6x2")
		}
		return named("3x4+3")
	case n == 3:
		return named("3x4")
	case n == 4:
		// Four rows of one lead need a 40 s record; 3 × 4 + 1 is the
		// common page, so any separator in the first three rows decides.
		if quarter(0, 3) > 0 || quarter(3, 4) < quarter(0, 3) {
			return named("3x4+1")
		}
	}
	if quarter(0, n) > 0.4 && n >= 3 {
		// Unusual row count with column separators: treat the first three
		// rows as a 3 × 4 grid and the rest as rhythm strips of lead II.
		l := named("3x4")
		l.Rows = l.Rows[:min(3, n)]
		for i := 3; i < n; i++ {
			l.Rows = append(l.Rows, Row{Rhythm: true, Cells: []Cell{{Lead: ecg.LeadII, T0S: 0, T1S: 10}}})
		}
		l.Name = "custom"
		return l
	}
	// No separators: one lead printed as consecutive rows of rhythm.
	sec := 10.0
	if n > 0 {
		w := float64(rows[0].x1) - rows[0].traceX0
		sec = math.Round(w/pxX/cal.SpeedMMPerS.V*10) / 10
		if sec <= 0 {
			sec = 10
		}
	}
	if n == 1 {
		return RhythmLayout(ecg.LeadII, 1, sec)
	}
	return RhythmLayout(ecg.LeadII, n, sec)
}
