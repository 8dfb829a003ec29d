package trace

import "math"

// reachPastMV is the height, mV, up to which a row's search band reaches
// where the neighbouring row allows it (reachPast), and pastNeighbourMV how
// far past the neighbouring row's baseline, mV. R waves of 3–4 mV are
// printed in the left precordial leads of hypertrophied hearts (common
// practice, from memory), and the overlap pages print them at 20 mm/mV.
const (
	reachPastMV     = 4.0
	pastNeighbourMV = 0.6
)

// reachPast widens the search band of row ri (up and down px from its
// baseline, as Pass 1 sets them: 1.5 row pitches at most 3 mV) to
// reachPastMV (pxPerMV px per mV), as far as pastNeighbourMV past a
// neighbouring row's baseline and 1.5 of its pitch; the top and bottom
// rows to reachPastMV on their open side.
//
// A 3 × 4 page at 20 mm/mV has its rows 2.95 mV apart: the 3 mV band ends
// at the row above's baseline, and an R wave of 3.7–4 mV in V4–V6 went
// unread past it; its stroke above the band's edge, merged with the row
// above's trace, was free for that row's path, which took it instead of
// its own apex (overlap 3x4 seed 1: V4 3.4 dB, reading 0.75 of 3.7 mV).
// Past the neighbour's baseline its own QRS strokes fill the ink, so the
// band stops 0.6 mV beyond it: where rows are closer (3x4+1, 2.2 mV), a
// band reaching 3.5 mV cost V4–V6 1.5–5 dB. Overlap corpus (21 pages):
// median 12.9 → 13.0 dB, 8 leads up ≥ 0.5 dB and none down (3x4 and
// Cabrera seed 1 V4 3.4 → 13.5 dB, V5 13.5 → 15.3 dB; seed 3 V4 3.7 →
// 11.1 dB); the other conditions lead for lead unchanged. Past the
// neighbour by 0.4, 0.8 and 1.0 mV: 6 up, 9 up 2 down, 11 up 6 down.
func reachPast(rows []rowInfo, ri int, up, down, pxPerMV float64) (float64, float64) {
	limit := func(pitch float64) float64 {
		return math.Min(math.Min(reachPastMV*pxPerMV, pitch+pastNeighbourMV*pxPerMV), 1.5*pitch)
	}
	if ri > 0 {
		up = math.Max(up, limit(rows[ri].baseY-rows[ri-1].baseY))
	} else {
		up = math.Max(up, reachPastMV*pxPerMV)
	}
	if ri+1 < len(rows) {
		down = math.Max(down, limit(rows[ri+1].baseY-rows[ri].baseY))
	} else {
		down = math.Max(down, reachPastMV*pxPerMV)
	}
	return up, down
}
