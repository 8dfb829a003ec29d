package trace

import (
	"encoding/binary"
	"image"
	"math"
	"slices"
	"sort"
)

// Point is a position on the page image, px (x right, y down).
type Point struct{ X, Y float64 }

// inkThreshold is the ink-map value from which a pixel counts as ink.
const inkThreshold = 96

// run is a vertical run of ink pixels in one image column.
type run struct {
	top, bot int32   // first and last ink row, inclusive
	w, wy    float32 // sum of ink values and of ink·y, for the sub-pixel centre
	cut      uint8   // cutTop, cutBot: the ink went on past the band's edge there
}

// Flags of run.cut: the run's top or bottom is where the scanned band
// (or a clip) ends, not where the ink does.
const (
	cutTop uint8 = 1 << iota
	cutBot
)

func (r run) centre() float64 {
	if r.w <= 0 {
		return float64(r.top+r.bot) / 2
	}
	return float64(r.wy / r.w)
}

// columnRuns holds the runs of a rectangle of an ink map, column by column.
type columnRuns struct {
	x0   int
	runs []run
	off  []int32 // runs of column c are runs[off[c]:off[c+1]]
	// scratch
	open   []int32
	openIn []int32 // open runs per eight columns
	acc    []run
	count  []int32
}

// inkBits returns the word of the eight bytes of b (len ≥ 8) with the
// top bit of each byte set exactly where that byte is at least
// inkThreshold (≤ 128) and every other bit clear. The low seven bits of a
// byte plus 128 − inkThreshold reach 128 exactly when they are at least
// inkThreshold and never carry into the next byte; bytes of 128 and more
// keep their own top bit (after "Bit Twiddling Hacks", S. E. Anderson,
// Stanford, "determine if a word has a byte greater than n"; from
// memory).
func inkBits(b []uint8) uint64 {
	const lo7 = 0x0101010101010101 * (128 - inkThreshold)
	const hi = 0x8080808080808080
	v := binary.LittleEndian.Uint64(b)
	return ((v &^ hi) + lo7 | v) & hi
}

// inkWord reports whether any of the eight bytes of b is ink.
func inkWord(b []uint8) bool { return inkBits(b) != 0 }

// scan collects the ink runs of ink inside r, reusing buffers. Most of
// an ink map is empty: eight columns are skipped at once where none of
// them holds an open run and no pixel of theirs is ink (inkWord).
func (cr *columnRuns) scan(ink *image.Gray, r image.Rectangle) {
	r = r.Intersect(ink.Rect)
	w := r.Dx()
	cr.x0 = r.Min.X
	cr.runs = cr.runs[:0]
	cr.open = grow(cr.open, w)
	cr.acc = growRuns(cr.acc, w)
	for i := range cr.open[:w] {
		cr.open[i] = -1
	}
	cr.openIn = grow(cr.openIn, (w+7)/8)
	clear(cr.openIn[:(w+7)/8])
	cols := make([]int32, 0, 256)
	for y := r.Min.Y; y < r.Max.Y; y++ {
		o := (y-ink.Rect.Min.Y)*ink.Stride + (r.Min.X - ink.Rect.Min.X)
		row := ink.Pix[o : o+w]
		for i0 := 0; i0 < w; i0 += 8 {
			i1 := min(w, i0+8)
			if i1-i0 == 8 && cr.openIn[i0>>3] == 0 {
				if !inkWord(row[i0:i1]) {
					continue
				}
			}
			for i := i0; i < i1; i++ {
				v := row[i]
				if v >= inkThreshold {
					if cr.open[i] < 0 {
						cr.open[i] = int32(y)
						cr.openIn[i>>3]++
						cr.acc[i] = run{top: int32(y)}
						if y == r.Min.Y {
							cr.acc[i].cut = cutTop
						}
					}
					a := &cr.acc[i]
					a.bot = int32(y)
					a.w += float32(v)
					a.wy += float32(v) * float32(y)
				} else if cr.open[i] >= 0 {
					cr.open[i] = -1
					cr.openIn[i>>3]--
					cr.runs = append(cr.runs, cr.acc[i])
					cols = append(cols, int32(i))
				}
			}
		}
	}
	for i := 0; i < w; i++ {
		if cr.open[i] >= 0 {
			cr.acc[i].cut |= cutBot
			cr.runs = append(cr.runs, cr.acc[i])
			cols = append(cols, int32(i))
		}
	}
	// Bucket the runs by column (counting sort, stable: top to bottom).
	cr.count = grow(cr.count, w+1)
	for i := range cr.count[:w+1] {
		cr.count[i] = 0
	}
	for _, c := range cols {
		cr.count[c+1]++
	}
	for i := 1; i <= w; i++ {
		cr.count[i] += cr.count[i-1]
	}
	cr.off = append(cr.off[:0], cr.count[:w+1]...)
	sorted := make([]run, len(cr.runs))
	pos := append([]int32(nil), cr.count[:w]...)
	for k, c := range cols {
		sorted[pos[c]] = cr.runs[k]
		pos[c]++
	}
	cr.runs = sorted
}

func (cr *columnRuns) width() int { return len(cr.off) - 1 }

func (cr *columnRuns) col(c int) []run { return cr.runs[cr.off[c]:cr.off[c+1]] }

func grow(s []int32, n int) []int32 {
	if cap(s) < n {
		return make([]int32, n)
	}
	return s[:n]
}

func growRuns(s []run, n int) []run {
	if cap(s) < n {
		return make([]run, n)
	}
	return s[:n]
}

// followParams tunes the path finder. Costs are in units of "one
// millimetre of vertical jump".
type followParams struct {
	pxPerMM   float64 // vertical px per mm
	baseline  float64 // y of the panel's baseline, px
	gapCost   float64 // cost of a column without ink on the path
	basePerMM float64 // cost per mm of distance from the baseline, per column
	maxStates int     // runs kept per column (nearest the baseline)
	carries   int     // gap states carried from one column to the next
	inkReward float64 // reward per px of ink on the path, in mm of jump per px
	// travelReward is the reward per px the pen travels inside an ink run
	// (from where it enters it to where it leaves it) in the direction it
	// was already going, in mm of jump per px (strokeTravel).
	travelReward float64
	// A thin run (a flat stretch of trace) lying more than farUp px above
	// or farDown px below the baseline costs farCost more per column: it is
	// a neighbouring row's trace (0 or +Inf: no limit).
	farUp, farDown, farCost float64
	// penY0 and penY1 bound the rows, px, whose runs give the pen width
	// (runs cut to [penY0, penY1)); penY1 ≤ penY0: all rows.
	penY0, penY1 int
	// pulsePen is the pen's width measured on the row's calibration
	// pulse, px (0 if unknown): drawn without noise, its flat top is the
	// pen's own width where the trace's runs are made tall by noise.
	pulsePen float64
}

// defaultFollow gives the path finder's parameters. The gap cost is
// what a column without ink on the path costs: binarised fax traces lose
// whole flats and strokes, and at 0.6 the path took lead labels and text
// rather than bridge them (fax corpus, 15 pages: 11.7 → 12.5 dB median
// SNR at 0.4; 0.3 and 0.5 scored lower; the other conditions unchanged).
// The ink reward helps the path up tall strokes merged with a
// neighbouring row's (overlap corpus 14.2 → 14.5 dB and 7 → 6 swaps at
// 0.05 instead of 0.03; 0.09 scored lower; the other conditions within
// 0.1 dB).
func defaultFollow(pxPerMM, baseline float64) followParams {
	return followParams{pxPerMM: pxPerMM, baseline: baseline, gapCost: 0.4, basePerMM: 0.01, maxStates: 24, carries: 3, inkReward: 0.05, travelReward: 0.035, farUp: math.Inf(1), farDown: math.Inf(1), farCost: farThinCost}
}

// strokeTravel is the reward, in cost units, for the pen leaving the run of
// state q at y = out: travW per px it travelled inside the run from where
// it entered it (q.yIn), when it kept the direction it came in with (from
// the previous state's entry to q's). Gap states earn nothing.
//
// Where a deep S wave goes down through the next row's tall R wave (an aVR
// over an aVL at 20 mm/mV), both strokes merge into single runs from the S
// wave's flanks down to the R wave's foot. The path, keeping to the point
// of each run nearest the previous one, turned back at the R wave's apex
// and left half of the S wave unread (overlap 3x4+1 seed 3: aVR's trough
// read at −0.8 of −2.1 mV). A pen going down keeps going down: rewarding
// the travel that keeps the pen's direction carries the path through the
// merged runs to its own trough. Overlap corpus (21 pages): median SNR
// 12.5 → 12.9 dB, p10 1.8 → 2.1 dB, swaps 8 → 7, 17 leads up and 4 down
// by ≥ 0.5 dB (3x4+1 seed 3 aVR 8.2 → 13.4 dB, 3x4+3 seed 3 aVR 1.0 → 8.6
// dB, 12x1 seed 2 I 3.9 → 14.3 dB; 6x2 seed 3 V4 6.8 → 3.1 dB); the other
// conditions' medians unchanged. 0.02–0.05 scored alike (0.035: fewest
// leads down); 0.07 and above lost as many leads as they gained. Travel
// rewarded in either direction also paid for running up a neighbour's
// apex and back (clean 12x1 seed 2 aVR 29.0 → 16.5 dB).
func strokeTravel(states []state, q *state, out, travW float32) float32 {
	if q.run < 0 || q.back < 0 || travW == 0 {
		return 0
	}
	d, pd := out-q.yIn, q.yIn-states[q.back].yIn
	if d*pd <= 0 {
		return 0
	}
	return travW * absf(d)
}

// maxInkRewardMM is the tallest run, mm, whose height the ink reward of
// follow pays for. Where the QRS complexes of two or three rows fall in the
// same columns (20 mm/mV, R waves of 3–4 mV) their strokes merge into runs
// reaching across the rows, up to 90 mm tall; a path passing through them
// at its baseline earned more than one climbing its own R wave, whose
// apex stands above them in separate, shorter runs, and the apex went
// unread (overlap 3x4+3 seed 1 V2: −1.9 dB). One spike's reward is not
// cut: a stroke's column run is tall only over the columns where it is
// steep. Overlap corpus (21 pages): median 12.9 dB either way, p10 2.1 →
// 2.7 dB, 13 leads up and 3 down by ≥ 0.5 dB (3x4+3 seed 1 V2 −1.9 →
// 11.8 dB, aVF −1.5 → 3.0 dB, 6x2 seed 3 V4 3.3 → 6.9 dB; 3x4+3 seed 3 V3
// 5.2 → 3.3 dB); the other conditions lead for lead unchanged. Caps of 5,
// 10 and 15 mm scored lower (12.5, 12.2, 12.8 dB), 25–40 mm gained less.
const maxInkRewardMM = 20

// Where the overlap pages' QRS error comes from, and what did not help
// (overlap corpus, 21 pages, trace following on cached front-end maps;
// medians before each change 12.9 dB). Of the squared amplitude the paths
// missed at QRS apexes, 85 % was at apexes beyond the Pass-1 band (12 × 1:
// 1.5 row pitches ≈ 1.3 mV; 3 × 4 column 4: the 3 mV reach, R waves of
// 3.7–4 mV), 9 % where the ink between path and apex is broken and 6 %
// where a run reaches the apex but the path stopped inside it.
//   - Reach 3.5–4.5 mV instead of 3 everywhere (the pen width still
//     measured on the 3 mV band; measured on the wider one, the bounds of
//     pathPoints moved and 3x4 seed 3 II, V3, V6 lost 5–7 dB): 3x4 seed 1
//     V4 3.4 → 13.5 dB, V5 13.5 → 15.3, but 3x4+1 V4–V6 lost 1.5–5 dB
//     (their bands already pass the row above's baseline); median
//     12.7–12.2 dB. Kept: reachPast, up to 0.6 mV past the neighbour.
//   - Re-following a panel whose path runs along its band's reach-capped
//     edge in a band 0.5–1 mV taller, spliced in around those columns:
//     6 up, 6 down, median 12.7 dB, one more swap.
//   - No ink reward for a run the path enters more than 0.5–2 mm from both
//     ends (a stroke passed through): 3x4 seed 3 V4 3.0 → 13.2 dB, but the
//     row below then ran through its neighbour's strokes (6x2 V3 −6 dB);
//     54 up, 28 down, median 12.9 dB.
//   - basePerMM 0.006 or 0.015 and inkReward 0.04–0.07 with the travel
//     reward: 0.1–0.7 dB lower; the pen width from the runs within half a
//     row pitch of the baseline: 11.9 dB.
//   - Following neighbouring rows jointly where their paths meet (a
//     Viterbi search over pairs of runs, one per row, scored as follow
//     scores each plus 0.1 per mm of ink in the column that neither path
//     nor any other row's path draws, between the two paths' levels
//     before and after; a window kept when it lowered that joint cost by
//     1.0 and neither path went further towards the other row). On
//     10 mm/mV pages (seeds 4–6, 147 pages) it freed record 5's 12 × 1
//     V3 on its clean, scan and pen-mark pages (−1.6 → 7.2 dB, no more
//     swapped), 16 leads up and 2 down; on the overlap corpus 9 up and
//     29 down, median 12.6 → 12.5 dB and nine new swaps on 3x4+3 pages.
//     There the R wave of one rhythm row and the S wave of the next
//     cross in an X, and the ink is explained equally well by both
//     traces crossing and by both turning back; the pair search chose
//     the turn. The stroke drawn by an apex inside a merged run is not
//     known either (the pen turns inside the column), so a path going
//     deeper into a merged run "explains" more of it. Gates tried on top
//     (no run of the window taller than 1.5–2.5 row pitches; no stroke
//     of it past either baseline by 0.7–1 pitch; fewer places where a
//     path turns back while the ink goes on 1 mm past the turn: 10 up,
//     28 down) either kept the overlap losses or removed every window.
//     Not kept.
//   - Reading the apexes of a V over a Λ from where the gap between one
//     stroke's arms closes (the other stroke filling it): overlap median
//     12.6 → 13.5 dB, but a steep stroke's arms also merge by themselves
//     short of their turn, and 17 leads of the 10 mm/mV pages of records
//     1–9 lost 0.5–7 dB; telling the two closings apart by how abruptly
//     they happen kept 2 of the 8 overlap gains. Kept instead:
//     apexesInBlocks (strokes_block.go), where the arms' centre lines
//     meet.
//   - Predicting a tangled precordial lead from the other leads printed
//     at the same time (the heart as one dipole: V1–V6 near linear in
//     three signals). The synthetic corpus is exactly dipolar (synth:
//     Dower's transform), so it would score such a repair far too well;
//     on 24 real LUDB records in the shared data (1–60) a least-squares fit
//     over the same 10 s predicted V2 from V1, V3 and II at a median
//     16.7 dB (V4 from V5, V6 and II 10.4 dB), and a fit on the samples
//     outside the QRS, applied to the QRS, 11.9 and 2.3 dB. Not used.
//   - A lead printed twice taking each sample from a copy clear of other
//     rows' strokes (contestedSamples) rather than from the better copy:
//     overlap records 1–9, 1 lead up and 1 down by 0.3–0.6 dB. Not kept.
//   - reReadFromClear trusting a clear lead only where no loose ink (a
//     stroke its path did not read) lies beside it, at every sample
//     rather than only with two clear leads among five or six: 42 up
//     instead of 45, median 14.8 instead of 15.1 dB (a steep stroke's own
//     apex ink reaches past its path's extent).

// farThinCost is followParams.farCost.
const farThinCost = 0.2

// state is one node of the trellis: a run of column c or a gap state
// carrying the last interval across a column without ink on the path.
type state struct {
	top, bot float32
	yIn      float32 // where the path enters the run: the point nearest the previous column's exit
	cost     float32
	back     int32 // index of the predecessor state, -1 at the first column
	run      int32 // index into columnRuns.runs, -1 for a gap state
}

// pathResult is the outcome of following one panel.
type pathResult struct {
	points   []Point
	onInk    int     // columns whose path state is an ink run
	cols     int     // columns in the panel
	meanJump float64 // mean vertical jump between consecutive ink states, mm
	penPx    float64 // estimated pen width, px
	// runTop and runBot are, per column, the first and last row of the
	// ink run on the path, px (NaN where the path bridges a gap).
	runTop, runBot []float32
	// fine maps each point of points to its fine reading's y (nil when
	// there is none; follow_fine.go).
	fine map[[2]float64]float64
}

// follow finds the globally cheapest path through the runs of cr, column
// by column (Viterbi 1967; Forney 1973), and turns it into a polyline that
// keeps the extent of steep strokes: per column the run on the path is
// represented by its centre when it is as thin as the pen, and by its ends
// when it is tall (the pen went to the top or bottom of the run and back,
// or passed through it).
func follow(cr *columnRuns, p followParams) pathResult {
	W := cr.width()
	res := pathResult{cols: W}
	if W <= 0 {
		return res
	}
	pen := penWidth(cr)
	if p.penY1 > p.penY0 {
		pen = penWidthIn(cr, p.penY0, p.penY1)
	}
	res.penPx = pen
	jumpW := 1 / p.pxPerMM // cost per px of jump
	thinFar := 1.6*pen + 1
	baseW := p.basePerMM / p.pxPerMM
	inkW := p.inkReward / p.pxPerMM
	travW := float32(p.travelReward / p.pxPerMM)
	capPx := maxInkRewardMM * p.pxPerMM
	states := make([]state, 0, W*6)
	off := make([]int32, W+1)
	prevLo, prevHi := 0, 0
	idx := make([]int, 0, 64)
	taken := make([]int, 0, 8)
	for c := 0; c < W; c++ {
		off[c] = int32(len(states))
		runs := cr.col(c)
		idx = idx[:0]
		for k := range runs {
			idx = append(idx, k)
		}
		if len(idx) > p.maxStates {
			sort.Slice(idx, func(a, b int) bool {
				return distToBase(runs[idx[a]], p.baseline) < distToBase(runs[idx[b]], p.baseline)
			})
			idx = idx[:p.maxStates]
		}
		for _, k := range idx {
			r := runs[k]
			s := state{top: float32(r.top), bot: float32(r.bot), back: -1, run: cr.off[c] + int32(k)}
			// A small reward per ink pixel covered (beyond twice the pen
			// width, so thick straight lines earn nothing, and at most
			// maxInkRewardMM) makes the path climb to the apex of a spike
			// whose two strokes are separate runs lower down, instead of
			// crossing from one to the other.
			unary := float32(baseW*distToBase(r, p.baseline) - inkW*math.Min(math.Max(0, float64(r.bot-r.top+1)-2*pen), capPx))
			if float64(r.bot-r.top+1) <= thinFar && (float64(r.bot) < p.baseline-p.farUp || float64(r.top) > p.baseline+p.farDown) {
				unary += float32(p.farCost)
			}
			if c == 0 {
				s.cost = unary
				s.yIn = clampf(float32(p.baseline), s.top, s.bot)
			} else {
				best := float32(math.Inf(1))
				for j := prevLo; j < prevHi; j++ {
					q := &states[j]
					gap := float32(0)
					if s.top > q.bot+1 {
						gap = s.top - q.bot - 1
					} else if q.top > s.bot+1 {
						gap = q.top - s.bot - 1
					}
					// The pen leaves q's run at the point nearest this
					// run, having entered it at q.yIn, and enters this
					// run at the point nearest that.
					out := clampf(clampf(q.yIn, s.top, s.bot), q.top, q.bot)
					v := q.cost + gap*float32(jumpW) - strokeTravel(states, q, out, travW)
					if v < best {
						best, s.back, s.yIn = v, int32(j), clampf(out, s.top, s.bot)
					}
				}
				s.cost = best + unary
			}
			states = append(states, s)
		}
		// Gap states: carry the cheapest previous states across this column.
		if c > 0 {
			taken = taken[:0]
			for nc := 0; nc < p.carries; nc++ {
				bj := -1
				for j := prevLo; j < prevHi; j++ {
					if !slices.Contains(taken, j) && (bj < 0 || states[j].cost < states[bj].cost) {
						bj = j
					}
				}
				if bj < 0 {
					break
				}
				taken = append(taken, bj)
				q := states[bj]
				states = append(states, state{top: q.top, bot: q.bot, yIn: q.yIn, cost: q.cost + float32(p.gapCost), back: int32(bj), run: -1})
			}
		} else if len(states) == 0 {
			states = append(states, state{top: float32(p.baseline), bot: float32(p.baseline), yIn: float32(p.baseline), cost: float32(p.gapCost), back: -1, run: -1})
		}
		prevLo, prevHi = int(off[c]), len(states)
	}
	off[W] = int32(len(states))
	// Backtrack.
	bj := -1
	for j := prevLo; j < prevHi; j++ {
		if bj < 0 || states[j].cost < states[bj].cost {
			bj = j
		}
	}
	path := make([]int32, W)
	res.runTop, res.runBot = make([]float32, W), make([]float32, W)
	for c := W - 1; c >= 0; c-- {
		path[c] = int32(bj)
		res.runTop[c], res.runBot[c] = float32(math.NaN()), float32(math.NaN())
		if bj >= 0 {
			if k := states[bj].run; k >= 0 {
				res.runTop[c], res.runBot[c] = float32(cr.runs[k].top), float32(cr.runs[k].bot)
			}
			bj = int(states[bj].back)
		}
	}
	// The pen-radius bounds of pathPoints need the pen's own width: the
	// median run height of a noisy trace overstates it by up to 2× (noise
	// and slopes only make runs taller) and the bounds then cut narrow R
	// peaks by millimetres (a noisy clean page went from 9.8 to 19.6 dB
	// median SNR with the smaller radius).
	pl := pathPen(cr, states, path)
	res.points = pathPoints(cr, states, path, pen, pl, 0, p.pxPerMM, &res)
	if finePen(p.pulsePen, pen, pl, p.pxPerMM) {
		// The fine reading beside it (follow_fine.go).
		var tmp pathResult
		fine := pathPoints(cr, states, path, pen, pl, p.pulsePen, p.pxPerMM, &tmp)
		if len(fine) == len(res.points) {
			res.fine = make(map[[2]float64]float64, len(fine))
			for i, q := range res.points {
				res.fine[[2]float64{q.X, q.Y}] = fine[i].Y
			}
		}
	}
	return res
}

func distToBase(r run, b float64) float64 {
	switch {
	case float64(r.bot) < b:
		return b - float64(r.bot)
	case float64(r.top) > b:
		return float64(r.top) - b
	}
	return 0
}

// penWidth estimates the trace's pen width as the median run height, px.
func penWidth(cr *columnRuns) float64 { return runHeightQuantile(cr, 0.5) }

// pathPen estimates the pen's own width from the runs on the path, px: the
// lowest twentieth of their heights, which on a trace are the flat stretches
// (slopes and noise only make runs taller; specks and text off the path do
// not count). 0 when the path has no ink.
func pathPen(cr *columnRuns, states []state, path []int32) float64 {
	var hist [64]int
	n := 0
	for _, j := range path {
		if j < 0 || states[j].run < 0 {
			continue
		}
		r := cr.runs[states[j].run]
		hist[min(int(r.bot-r.top+1), len(hist)-1)]++
		n++
	}
	k, acc := n/20, 0
	for h, c := range hist {
		acc += c
		if acc > k {
			return float64(max(h, 1))
		}
	}
	return 0
}

// runHeightQuantile is the q-quantile of the run heights, px (at least 1).
func runHeightQuantile(cr *columnRuns, q float64) float64 {
	if len(cr.runs) == 0 {
		return 1
	}
	var hist [64]int
	for _, r := range cr.runs {
		h := int(r.bot - r.top + 1)
		if h >= len(hist) {
			h = len(hist) - 1
		}
		hist[h]++
	}
	k, acc := int(q*float64(len(cr.runs))), 0
	for h, n := range hist {
		acc += n
		if acc > k {
			return float64(max(h, 1))
		}
	}
	return 1
}

// pathPoints turns the state path into a polyline in image coordinates.
//
// The printed stroke is the centre line swept by a round pen of radius r
// (px), so the run of column c reaches from min(y(x) − √(r²−(x−c)²)) to
// max(y(x) + √(r²−(x−c)²)) over |x − c| ≤ r. Turned around, the runs of the
// neighbouring columns bound the centre line at c:
//
//	L = max_k top(c+k) + √(r²−k²) ≤ y(c) ≤ min_k bot(c+k) − √(r²−k²) = U,
//
// which pins y(c) on steep strokes (L ≈ U) where a run's own middle would
// be biased near an apex. A thin run takes its ink-weighted centre clipped
// to [L, U]; a tall run whose top is at or above both neighbours' tops is
// a peak and takes L, one whose bottom is at or below theirs a trough and
// takes U, any other the middle of [L, U].
//
// pen is the median run height and penLo the pen's own width from the path
// (pathPen), px; pxPerMMHint is the vertical scale, px/mm. With pulsePen >
// 0 (the pen's width from the row's calibration pulse, px) the reading is
// the fine one (follow_fine.go): on a noisy trace the radius for the
// bounds is the pulse's, the runs' edges are interpolated between columns
// (fracBounds), and a run's end where the band cut it bounds nothing.
func pathPoints(cr *columnRuns, states []state, path []int32, pen, penLo, pulsePen, pxPerMMHint float64, res *pathResult) []Point {
	W := len(path)
	pts := make([]Point, 0, W+W/8)
	r := math.Max((pen-1)/2, 0)
	if penLo <= 0 {
		penLo = pen
	}
	// Radius for the bounds. A median run taller than 0.5 mm (thicker
	// than printer pens, 0.2–0.4 mm: common practice, from memory) is
	// inflated by noise, and bounds built from it cut narrow R peaks by
	// millimetres; then the pen's own width (pathPen) is used, not below
	// 0.65 of the median (grey scans break faint runs into short pieces),
	// and columns the disk only grazes do not bound the centre. On quiet
	// traces the median is the pen and gives the tighter bounds. Corpus:
	// noisy clean pages 9.8 → 19.6 dB, grey and round-trip pages as before.
	rb := r
	noisy := pen > 0.5*pxPerMMHint
	if noisy {
		rb = math.Max((min(math.Max(penLo, 0.65*pen), pen)-1)/2, 0)
		if pulsePen > 0 {
			rb = math.Max((min(pulsePen, pen)-1)/2, 0)
		}
	}
	// No printer pen is wider than 2·maxPenRadiusMM; a wider radius comes
	// from runs made tall by noise or by steep strokes, and its bounds
	// hold the apex of a steep QRS down to the level of the flat trace a
	// few columns before it (20 mm/mV pages lost most of their QRS
	// amplitude: overlap corpus 8.2 → 14.8 dB median SNR over ten pages,
	// the other conditions unchanged).
	rb = math.Min(rb, maxPenRadiusMM*pxPerMMHint)
	kr := int(math.Floor(rb)) // columns the pen at c reaches
	if noisy && kr > 0 && float64(kr) >= rb-0.25 {
		kr--
	}
	sk := make([]float64, 2*kr+1)
	for k := -kr; k <= kr; k++ {
		sk[k+kr] = math.Sqrt(math.Max(rb*rb-float64(k*k), 0))
	}
	thin := pen*1.6 + 1
	iv := func(c int) (float32, float32, bool) {
		if c < 0 || c >= W || path[c] < 0 || states[path[c]].run < 0 {
			return 0, 0, false
		}
		s := states[path[c]]
		return s.top, s.bot, true
	}
	cross := crossings(cr, states, path, thin, pen, 2.5*pxPerMMHint, 2*pxPerMMHint)
	// edge returns the top and bottom of the path's run at column c, each
	// with whether it is where the ink ends (not cut by the band).
	edge := func(c int) (t, b float64, okT, okB bool) {
		tt, bb, ok := iv(c)
		if !ok {
			return 0, 0, false, false
		}
		cut := cr.runs[states[path[c]].run].cut
		return float64(tt), float64(bb), cut&cutTop == 0, cut&cutBot == 0
	}
	// fracBounds bounds the centre line at column c by the runs' edges
	// linearly interpolated between columns, the pen's disk of radius rr
	// placed at every quarter pixel within its reach: tight on steep
	// strokes, where the edge at c ± rr is the centre line at c.
	fracBounds := func(c int, rr float64) (lo, hi float64) {
		lo, hi = math.Inf(-1), math.Inf(1)
		for u := -rr; u <= rr+1e-9; u += 0.25 {
			xf := float64(c) + u
			c0 := int(math.Floor(xf))
			f := xf - float64(c0)
			t0, b0, okT0, okB0 := edge(c0)
			t1, b1, okT1, okB1 := t0, b0, okT0, okB0
			if f > 1e-9 {
				t1, b1, okT1, okB1 = edge(c0 + 1)
			}
			d := math.Sqrt(math.Max(rr*rr-u*u, 0))
			if okT0 && okT1 {
				lo = math.Max(lo, t0+(t1-t0)*f+d)
			}
			if okB0 && okB1 {
				hi = math.Min(hi, b0+(b1-b0)*f-d)
			}
		}
		return lo, hi
	}
	var jumpSum float64
	var jumpN int
	// Extent of the previous column's point on the path: the run, or the
	// path's own level where a crossing stroke was passed through.
	var effT, effB float32
	effC := -2
	for c := 0; c < W; c++ {
		if path[c] < 0 {
			continue
		}
		s := states[path[c]]
		if s.run < 0 {
			continue
		}
		res.onInk++
		prevT, prevB, prevOK := effT, effB, effC == c-1
		effT, effB, effC = s.top, s.bot, c
		if pt, pb, ok := iv(c - 1); ok {
			gap := 0.0
			if s.top > pb+1 {
				gap = float64(s.top - pb - 1)
			} else if pt > s.bot+1 {
				gap = float64(pt - s.bot - 1)
			}
			jumpSum += gap
			jumpN++
		}
		ru := cr.runs[s.run]
		x := float64(cr.x0 + c)
		lo, hi := math.Inf(-1), math.Inf(1)
		if pulsePen > 0 {
			lo, hi = fracBounds(c, rb)
		} else {
			for k := -kr; k <= kr; k++ {
				if t, b, ok := iv(c + k); ok {
					lo = math.Max(lo, float64(t)+sk[k+kr])
					hi = math.Min(hi, float64(b)-sk[k+kr])
				}
			}
		}
		if !math.IsNaN(cross[c]) {
			pts = append(pts, Point{x, cross[c]})
			continue
		}
		h := float64(ru.bot - ru.top + 1)
		if h <= thin {
			y := ru.centre()
			if lo <= hi {
				y = math.Min(math.Max(y, lo), hi)
			}
			pts = append(pts, Point{x, y})
			continue
		}
		// A run reaching well past both where the path enters it and
		// where it leaves it is another trace's stroke crossing this one
		// (tall complexes of a neighbouring row): keep the path's level.
		yin, yout := s.yIn, s.yIn
		if c+1 < W && path[c+1] >= 0 {
			yout = clampf(states[path[c+1]].yIn, s.top, s.bot)
		}
		if m := float32(math.Max(thin, 2*pxPerMMHint)); s.top < min(yin, yout)-m && s.bot > max(yin, yout)+m &&
			prevOK && prevT > s.top+m && prevB < s.bot-m {
			effT, effB = min(yin, yout), max(yin, yout)
			if absf(yout-yin) <= 1 {
				pts = append(pts, Point{x, float64(yin+yout) / 2})
			} else {
				pts = append(pts, Point{x - 0.25, float64(yin)}, Point{x + 0.25, float64(yout)})
			}
			continue
		}
		pt, pb, okp := iv(c - 1)
		nt, nb, okn := iv(c + 1)
		if !okp && !okn {
			pts = append(pts, Point{x, ru.centre()})
			continue
		}
		if !okp {
			pt, pb = nt, nb
		}
		if !okn {
			nt, nb = pt, pb
		}
		up := s.top <= min(pt, nt)
		down := s.bot >= max(pb, nb)
		pc, nc := (pt+pb)/2, (nt+nb)/2
		top, bot := float64(ru.top)+r, float64(ru.bot)-r
		switch {
		case up && down:
			if pb-pt <= float32(thin) && nb-nt <= float32(thin) && absf(pc-nc) <= float32(pen)*2 {
				// A thin trace on both sides: something crossed the trace
				// here (a mark, a tick); keep the trace's level.
				pts = append(pts, Point{x, float64(pc+nc) / 2})
				continue
			}
			// A spike a pen's width can draw spreads over the columns
			// beside it; one only a column or two wide, standing on the
			// trace, is a ruled line left in the ink map (the major grid
			// lines of grey scans) merged with the trace: keep the
			// trace's level. (Bounding the spike by the runs beside it
			// instead scored lower on the gray corpus: 21.6 against
			// 21.7 dB median.)
			if lineNotStroke(cr, c, ru, pen) {
				pts = append(pts, Point{x, float64(pc+nc) / 2})
				continue
			}
			// A whole spike inside one column: both ends, nearer first.
			if absf(pc-s.top) < absf(pc-s.bot) {
				pts = append(pts, Point{x - 0.25, top}, Point{x + 0.25, bot})
			} else {
				pts = append(pts, Point{x - 0.25, bot}, Point{x + 0.25, top})
			}
		case up:
			pts = append(pts, Point{x, math.Max(lo, top)})
		case down:
			pts = append(pts, Point{x, math.Min(hi, bot)})
		default:
			if lo <= hi || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
				if pulsePen > 0 && math.IsInf(lo, 0) != math.IsInf(hi, 0) {
					// One end of the stroke is cut off by the band's edge:
					// the other end's bound is the estimate.
					if math.IsInf(lo, 0) {
						pts = append(pts, Point{x, hi})
					} else {
						pts = append(pts, Point{x, lo})
					}
				} else if math.IsInf(lo, 0) || math.IsInf(hi, 0) {
					pts = append(pts, Point{x, float64(ru.top+ru.bot) / 2})
				} else {
					pts = append(pts, Point{x, (lo + hi) / 2})
				}
			} else {
				pts = append(pts, Point{x, (lo + hi) / 2})
			}
		}
	}
	if jumpN > 0 {
		res.meanJump = jumpSum / float64(jumpN)
	}
	return pts
}

// crossings finds the stretches of the path where another trace's stroke
// crosses it: at most maxW columns whose runs are all taller than thin,
// between two columns with thin runs, where every run contains the line
// joining the two thin runs' centres (within pen px) and the runs reach
// more than reach px beyond it both above and below, the two thin runs
// being less than reach px apart. Own peaks leave that
// line (their apex columns hold no ink at the baseline); a stroke of a
// neighbouring row passing through the trace does not. The returned slice
// holds, per column, the trace's level there, px, or NaN.
func crossings(cr *columnRuns, states []state, path []int32, thin, pen, maxW, reach float64) []float64 {
	W := len(path)
	out := make([]float64, W)
	for i := range out {
		out[i] = math.NaN()
	}
	h := func(c int) (run, bool) {
		if c < 0 || c >= W || path[c] < 0 || states[path[c]].run < 0 {
			return run{}, false
		}
		return cr.runs[states[path[c]].run], true
	}
	for c := 0; c < W; {
		r, ok := h(c)
		if !ok || float64(r.bot-r.top+1) <= thin {
			c++
			continue
		}
		a := c
		for c < W {
			r, ok := h(c)
			if !ok || float64(r.bot-r.top+1) <= thin {
				break
			}
			c++
		}
		b := c // tall stretch is [a, b)
		pr, okp := h(a - 1)
		nr, okn := h(b)
		if !okp || !okn || float64(b-a) > maxW || float64(nr.bot-nr.top+1) > thin {
			continue
		}
		y0, y1 := pr.centre(), nr.centre()
		if math.Abs(y1-y0) > reach {
			continue
		}
		inside := true
		lo, hi := math.Inf(1), math.Inf(-1)
		for k := a; k < b && inside; k++ {
			r, _ := h(k)
			y := y0 + (y1-y0)*float64(k-a+1)/float64(b-a+1)
			inside = float64(r.top) <= y+pen && float64(r.bot) >= y-pen
			lo, hi = math.Min(lo, float64(r.top)-y), math.Max(hi, float64(r.bot)-y)
		}
		if !inside || lo > -reach || hi < reach {
			continue
		}
		for k := a; k < b; k++ {
			out[k] = y0 + (y1-y0)*float64(k-a+1)/float64(b-a+1)
		}
	}
	return out
}

// maxPenRadiusMM is the largest pen radius the centre-line bounds of
// pathPoints use, mm: half of 0.6 mm, above the 0.2–0.4 mm of printer
// pens (common practice, from memory). Tried 0.2–0.5 mm on the overlap
// corpus: 13.9, 14.8 (0.3), 14.7 (0.35), 11.1, 8.4 dB.
const maxPenRadiusMM = 0.3

func clampf(v, lo, hi float32) float32 {
	return min(max(v, lo), hi)
}

func absf(v float32) float32 {
	if v < 0 {
		return -v
	}
	return v
}

// lineNotStroke reports whether the run ru of column c is a thin ruled
// line rather than a pen stroke: taller than 3 mm-equivalents of pen
// (15 pen widths), on a page whose pen is at least 3 px wide, while
// neither neighbouring column 2 px away holds ink over half of its
// height. A stroke drawn by a pen w px wide covers the columns within
// w/2 of its centre over nearly the same height (a steep QRS stroke
// only slants, it does not thin).
func lineNotStroke(cr *columnRuns, c int, ru run, pen float64) bool {
	h := float64(ru.bot - ru.top + 1)
	if pen < 3 || h < 15*pen {
		return false
	}
	cover := func(k int) float64 {
		if k < 0 || k >= cr.width() {
			return 0
		}
		n := 0
		for _, o := range cr.col(k) {
			lo, hi := max(o.top, ru.top), min(o.bot, ru.bot)
			if hi >= lo {
				n += int(hi - lo + 1)
			}
		}
		return float64(n)
	}
	return cover(c-2) < 0.5*h && cover(c+2) < 0.5*h
}

// penWidthIn is penWidth over the runs of cr cut to the rows [y0, y1), as
// scanning only those rows would give them.
func penWidthIn(cr *columnRuns, y0, y1 int) float64 {
	var hist [64]int
	n := 0
	for _, r := range cr.runs {
		t, b := max(int(r.top), y0), min(int(r.bot), y1-1)
		if t > b {
			continue
		}
		hist[min(b-t+1, len(hist)-1)]++
		n++
	}
	if n == 0 {
		return 1
	}
	k, acc := n/2, 0
	for h, c := range hist {
		acc += c
		if acc > k {
			return float64(max(h, 1))
		}
	}
	return 1
}
