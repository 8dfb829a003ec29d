package trace

import (
	"image"
	"math"
	"sort"

	"tracelift/grid"
)

// A page without calibration pulses gives no sign of which way up it
// is, and the front end's guess (imageproc: the ink lies mostly above the
// baselines) turns over records whose complexes point mostly down: 13 of
// 87 LUDB pages printed without pulses (3 × 4, 6 × 2, 12 × 1 at
// 10 mm/mV) were traced upside down, every lead reversed in time and
// sign. Turning a page over reverses time as well as sign, and time has
// a direction the sign does not: in every beat the T wave, broad and
// usually the largest wave after the QRS complex, follows the QRS within
// 0.1–0.4 s, while the small P wave precedes it (common practice: PR
// 0.12–0.20 s, QT 0.35–0.45 s; standards.md §3). beatAsymmetry measures
// that: how far the trace strays from its level in the 0.10–0.35 s after
// each QRS complex against the 0.35–0.10 s before it.

// asymmetryTurn is the mean asymmetry per complex beyond which a page
// without pulses is taken to be turned over. Measured without pulses (the
// pulses painted out): upright LUDB pages 0.00–0.64 (73 pages), upright
// synthetic pages −0.03–0.61 (119 pages, records 1–40 in 3 × 4, 6 × 2
// and 12 × 1); LUDB pages the front end turned over −0.71 to −0.01 (13
// pages; 10 beyond −0.1, the three nearer zero being records 35 and 38,
// whose T waves are small).
const asymmetryTurn = 0.1

// asymmetryMinBeats is the number of QRS complexes, over all rows, below
// which beatAsymmetry does not vote.
const asymmetryMinBeats = 4

// beatAsymmetry returns (after − before)/(after + before) summed over the
// QRS complexes of the rows, where after and before are the mean distance
// of the trace from its level (the row's median) in the windows after and
// before each complex, and the number of complexes. It is positive on an
// upright page and negative on one turned over. A row's trace is the
// centre of the ink nearest its baseline in each column, within 0.45 of
// the distance to the neighbouring rows (10 mm for a single row); its
// QRS complexes are the peaks of the trace's total variation over 40 ms,
// at least 0.3 s apart and at least 40 % of the row's largest, which
// must reach 3 mm.
func beatAsymmetry(ink *image.Gray, rows []rowInfo, cal grid.Calibration) (float64, int) {
	pxX, pxY := cal.PxPerMMX.V, cal.PxPerMMY.V
	pxS := cal.SpeedMMPerS.V * pxX // px per second
	if !(pxS > 0) || !(pxY > 0) {
		return 0, 0
	}
	score, beats := 0.0, 0
	for i, r := range rows {
		band := 10 * pxY
		if i > 0 {
			band = math.Min(band, 0.45*(r.baseY-rows[i-1].baseY))
		}
		if i+1 < len(rows) {
			band = math.Min(band, 0.45*(rows[i+1].baseY-r.baseY))
		}
		n := r.x1 - r.x0
		if n < int(2*pxS) || band < 2 {
			continue
		}
		d := make([]float64, n)
		inkCentres(d, ink, r.x0, int(r.baseY-band), int(r.baseY+band), r.baseY)
		// Fill short gaps with the last value, so that differences see
		// strokes and not holes.
		last := math.NaN()
		var lv []float64
		for k, v := range d {
			if math.IsNaN(v) {
				d[k] = last
				continue
			}
			last = v
			lv = append(lv, v)
		}
		if len(lv) < n/2 {
			continue
		}
		sort.Float64s(lv)
		level := lv[len(lv)/2]
		// Total variation over ±20 ms.
		h := max(1, int(0.02*pxS))
		tv := make([]float64, n)
		step := make([]float64, n)
		for k := 1; k < n; k++ {
			if !math.IsNaN(d[k]) && !math.IsNaN(d[k-1]) {
				step[k] = math.Abs(d[k] - d[k-1])
			}
		}
		mx := 0.0
		for k := range tv {
			for j := max(1, k-h); j <= min(n-1, k+h); j++ {
				tv[k] += step[j]
			}
			mx = math.Max(mx, tv[k])
		}
		if mx < 3*pxY {
			// No stroke of a QRS complex (3 mm of travel in 40 ms): a
			// flat or noisy line, or P waves alone.
			continue
		}
		sep := int(0.3 * pxS)
		w0, w1 := int(0.10*pxS), int(0.35*pxS)
		mean := func(a, b int) (float64, bool) {
			if a < 0 || b > n {
				return 0, false
			}
			s, m := 0.0, 0
			for k := a; k < b; k++ {
				if !math.IsNaN(d[k]) {
					s += math.Abs(d[k] - level)
					m++
				}
			}
			if 2*m < b-a {
				return 0, false
			}
			return s / float64(m), true
		}
		for k := range tv {
			if tv[k] < 0.4*mx || !isPeak(tv, k, sep) {
				continue
			}
			after, okA := mean(k+w0, k+w1)
			before, okB := mean(k-w1, k-w0)
			if !okA || !okB || after+before == 0 {
				continue
			}
			score += (after - before) / (after + before)
			beats++
		}
	}
	return score, beats
}

// isPeak reports whether v[k] is the largest value within sep of k (the
// first of equal values).
func isPeak(v []float64, k, sep int) bool {
	for j := max(0, k-sep); j <= min(len(v)-1, k+sep); j++ {
		if v[j] > v[k] || v[j] == v[k] && j < k {
			return false
		}
	}
	return true
}
