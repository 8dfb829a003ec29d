package trace

import (
	"image"
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

// detectLayout chooses a layout from the number of trace rows, the
// column separators found in them and the leads printed twice (rowEcho),
// and names the rhythm strips below a 3 × 4 grid by the grid cell they
// repeat (nameRhythmStrips). It returns the rows the layout was chosen
// for: rows with placeholders for rows lost in between when that makes a
// standard page (fillPitchGaps).
func detectLayout(ink *image.Gray, rows []rowInfo, cal grid.Calibration) (*Layout, []rowInfo) {
	l, rows := chooseLayout(ink, rows, cal)
	// Only strips whose lead is a guess (an unusual number of rows) are
	// renamed: on a standard page a strip that does not repeat its cell
	// says rather that the layout is wrong (a fax 6 × 2 page read as
	// 3 × 4 + 3 had its "strips" renamed into three swaps).
	if l.Name == "custom" {
		nameRhythmStrips(ink, rows, l, cal.PxPerMMX.V, cal.PxPerMMY.V)
	}
	return l, rows
}

// chooseLayout is detectLayout without the naming of rhythm strips.
func chooseLayout(ink *image.Gray, rows []rowInfo, cal grid.Calibration) (*Layout, []rowInfo) {
	pxX, pxY := cal.PxPerMMX.V, cal.PxPerMMY.V
	n := len(rows)
	quarter := func(lo, hi int) float64 {
		return (breakFraction(rows, lo, hi, 0.25, pxX) + breakFraction(rows, lo, hi, 0.5, pxX) + breakFraction(rows, lo, hi, 0.75, pxX)) / 3
	}
	half := func(lo, hi int) float64 {
		return breakFraction(rows, lo, hi, 0.5, pxX)
	}
	// A row lost in between (a fax dropped most of its ink) leaves a gap
	// of two row pitches: fill it when that makes a standard number of
	// rows.
	if std := map[int]bool{3: true, 4: true, 6: true, 12: true}; !std[n] {
		if f := fillPitchGaps(rows); std[len(f)] {
			rows, n = f, len(f)
		}
	}
	named := func(s string) *Layout {
		l, _ := StandardLayout(s)
		return l
	}
	ticks := 0
	for _, r := range rows {
		ticks += len(r.ticks)
	}
	if n >= 2 && ticks == 0 && oneLeadRows(ink, rows, pxY) {
		// No separator anywhere and one lead's shape in every column:
		// a single lead printed as consecutive rows.
		return RhythmLayout(ecg.LeadII, n, rowSeconds(rows[0], cal)), rows
	}
	switch {
	case n == 12:
		return named("12x1"), rows
	case n == 6:
		// 3 × 4 + 3 prints II, V1 and V5 twice: in the grid and in the
		// rhythm strips below it, over the same time windows; 6 × 2
		// prints no lead twice. On this project's corpus the mean echo
		// of those three windows is 0.92–1.0 on clean, scanned and grey
		// 3 × 4 + 3 pages and −0.1–0.01 on 6 × 2 pages; faxes, whose
		// broken traces keep mostly the complexes, give 0.49–0.91
		// (3 × 4 + 3) and 0.0–0.35 (6 × 2) (a project measurement,
		// seeds 1–2, two fax front ends). A clear echo decides; in
		// between, or without one, the separators do: 6 × 2 at 1/2 in
		// every row, 3 × 4 + 3 at 1/4, 1/2, 3/4 in the first three rows
		// only.
		e := meanEcho(
			rowEcho(ink, rows, 3, 1, 0, 0.25, pxX, pxY),
			rowEcho(ink, rows, 4, 0, 0.5, 0.75, pxX, pxY),
			rowEcho(ink, rows, 5, 1, 0.75, 1, pxX, pxY))
		switch {
		case e >= 0.6:
			return named("3x4+3"), rows
		case e <= 0.25:
			return named("6x2"), rows
		}
		s3x4 := (breakFraction(rows, 0, 3, 0.25, pxX) + breakFraction(rows, 0, 3, 0.75, pxX)) / 2
		switch h := half(3, 6); {
		case h > s3x4:
			return named("6x2"), rows
		case h < s3x4 || math.IsNaN(e) || e >= 0.45:
			return named("3x4+3"), rows
		}
		// No separator either way: the echo's midpoint (fax 6 × 2
		// pages 0.27–0.35, fax 3 × 4 + 3 pages 0.49–0.91).
		return named("6x2"), rows
	case n == 3:
		return named("3x4"), rows
	case n == 4:
		// Four rows of one lead need a 40 s record; 3 × 4 + 1 is the
		// common page, so any separator in the first three rows decides,
		// or the rhythm strip repeating a lead of the grid's first
		// column.
		if quarter(0, 3) > 0 || quarter(3, 4) < quarter(0, 3) {
			return named("3x4+1"), rows
		}
		for k := 0; k < 3; k++ {
			if rowEcho(ink, rows, 3, k, 0, 0.25, pxX, pxY) >= 0.8 {
				return named("3x4+1"), rows
			}
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
		return l, rows
	}
	// No separators: one lead printed as consecutive rows of rhythm.
	sec := 10.0
	if n > 0 {
		sec = rowSeconds(rows[0], cal)
	}
	return RhythmLayout(ecg.LeadII, max(n, 1), sec), rows
}

// rowSeconds is the time a row's trace covers at the page's speed, s,
// rounded to 0.1 s (10 s if unknown).
func rowSeconds(r rowInfo, cal grid.Calibration) float64 {
	w := float64(r.x1) - r.traceX0
	sec := math.Round(w/cal.PxPerMMX.V/cal.SpeedMMPerS.V*10) / 10
	if !(sec > 0) {
		return 10
	}
	return sec
}

// meanEcho is the mean of the finite echoes, NaN if there is none.
func meanEcho(es ...float64) float64 {
	s, n := 0.0, 0
	for _, e := range es {
		if !math.IsNaN(e) {
			s += e
			n++
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return s / float64(n)
}
