package grid

import (
	"encoding/binary"
	"image"
	"math"
	"slices"
)

// stroke is a vertical ink stroke: columns x0..x1 whose ink runs span
// y0..y1 (px, inclusive).
type stroke struct {
	x0, x1 int
	y0, y1 int
}

// minPulseMM is the shortest pulse findPulses accepts, mm: half of 1 mV at
// 5 mm/mV, the smallest printed gain (standards.md §1.1), for the pen's
// width and a blurred scan.
const minPulseMM = 2.5

// findPulses finds rectangular calibration pulses in an ink map: two
// vertical strokes of equal extent, 1.5–16 mm apart, joined along their
// top by ink (the flat 1 mV level) and with ink at their foot (the
// baseline). QRS complexes have pointed tops and fail the flat-top test.
// ppmX, ppmY are px/mm (0 when unknown: then strokes of 8–400 px count).
//
// gray (luminance, may be nil) backs up the ink map along the pulse's top
// and foot: on binarised pages a trace drawn exactly along a grid line is
// removed from the ink with the line.
func findPulses(ink, gray *image.Gray, ppmX, ppmY float64, completeEdges bool) []Pulse {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	const on = 110
	// Without a scale, a pulse is at least a 60th of the page's short side
	// (a 10 mm pulse on a 210 mm page is a 21st).
	minRun, maxRun := max(8, min(w, h)/60), max(w, h)/3
	if ppmY > 0 {
		minRun, maxRun = int(2.5*ppmY), int(42*ppmY)
	}
	minRun = max(minRun, 6)
	// Vertical runs per column, merged into strokes across columns.
	colRuns := verticalRuns(ink, on, minRun, maxRun)
	var open, done []stroke
	for x := 0; x < w; x++ {
		runs := colRuns[x]
		var next []stroke
		used := make([]bool, len(runs))
		for _, s := range open {
			ext := false
			for i, r := range runs {
				if !used[i] && abs(r[0]-s.y0) <= 3 && abs(r[1]-s.y1) <= 3 {
					used[i] = true
					s.x1 = x
					s.y0, s.y1 = min(s.y0, r[0]), max(s.y1, r[1])
					next = append(next, s)
					ext = true
					break
				}
			}
			if !ext {
				done = append(done, s)
			}
		}
		for i, r := range runs {
			if !used[i] {
				next = append(next, stroke{x, x, r[0], r[1]})
			}
		}
		open = next
	}
	done = append(done, open...)
	// Strokes are thin (a pen width).
	maxW := 6
	if ppmX > 0 {
		maxW = max(3, int(1.2*ppmX))
	}
	var st []stroke
	for _, s := range done {
		if s.x1-s.x0+1 <= maxW {
			st = append(st, s)
		}
	}
	slices.SortFunc(st, func(a, b stroke) int { return a.x0 - b.x0 })
	minGap, maxGap := 6, 200
	tol := 4
	if ppmX > 0 {
		minGap, maxGap = int(1.5*ppmX), int(16*ppmX)
	}
	if ppmY > 0 {
		tol = max(2, int(0.5*ppmY))
	}
	var out []Pulse
	var ext []bool       // per pulse of out: an edge was extended on the luminance
	var dark *image.Gray // 255 − gray, made on first need
	taken := make([]bool, len(st))
	// Pass 0 pairs strokes as the ink shows them; pass 1 pairs the rest
	// with edges completed from the luminance (matchExtent).
	// Pass 1 runs only on a page where pass 0 found no pulse, and only
	// where completeEdges: not on a 1-bit page (a fax), whose luminance
	// is as black on a grid line as on a stroke, so that pass 1 there
	// paired strokes of the traces into pulses (fax 3x4+1 seed 8: two
	// rows of four, and the rows between them were dropped as too close
	// to pulse rows: every lead lost).
	for pass := 0; pass < 2 && (pass == 0 || len(out) == 0 && completeEdges); pass++ {
		for i := range st {
			if taken[i] {
				continue
			}
			for j := i + 1; j < len(st); j++ {
				a, b := st[i], st[j]
				gap := b.x0 - a.x1
				if gap > maxGap {
					break
				}
				if taken[j] || gap < minGap {
					continue
				}
				extA, extB := false, false
				if (abs(a.y0-b.y0) > tol || abs(a.y1-b.y1) > tol) && gray != nil && pass == 1 {
					// A stroke printed along a grid line lost that stretch
					// with the line (grey pages separate ink from grid by
					// shape alone): the luminance may still show it.
					if dark == nil {
						dark = darkMap(gray)
					}
					a2, b2 := matchExtent(dark, a, b, on), matchExtent(dark, b, a, on)
					extA, extB = a2 != a, b2 != b
					a, b = a2, b2
				}
				if abs(a.y0-b.y0) > tol || abs(a.y1-b.y1) > tol {
					continue
				}
				// Flat top: ink along the top between the strokes.
				top := (a.y0 + b.y0) / 2
				thick, topY := topThickness(ink, a.x1+1, b.x0-1, top, on)
				if thick == 0 && gray != nil {
					if dark == nil {
						dark = darkMap(gray)
					}
					thick, topY = topThickness(dark, a.x1+1, b.x0-1, top, on)
				}
				top = topY
				if thick == 0 || max(coverage(ink, a.x1+1, b.x0-1, top, thick, on), coverageGray(gray, a.x1+1, b.x0-1, top, thick)) < 0.9 {
					continue
				}
				base := (a.y1 + b.y1) / 2
				if base-top < minRun/2 {
					continue
				}
				// Foot: the baseline leaves the pulse on at least one side,
				// and the top does not continue outside (a box or a table).
				left := max(coverage(ink, max(0, a.x0-minGap), a.x0-1, base-thick+1, thick, on),
					coverageGray(gray, max(0, a.x0-minGap), a.x0-1, base-thick+1, thick))
				right := max(coverage(ink, b.x1+1, min(w-1, b.x1+minGap), base-thick+1, thick, on),
					coverageGray(gray, b.x1+1, min(w-1, b.x1+minGap), base-thick+1, thick))
				if max(left, right) < 0.6 {
					continue
				}
				outside := coverage(ink, max(0, a.x0-minGap), a.x0-1, top, thick, on)
				if outside > 0.5 {
					continue
				}
				t := float64(thick)
				p := Pulse{
					X0:    float64(a.x0+a.x1) / 2,
					X1:    float64(b.x0+b.x1) / 2,
					TopY:  float64(top) + (t-1)/2,
					BaseY: float64(a.y1+b.y1)/2 - (t-1)/2,
				}
				// An edge partly lost with a grid line is located on the
				// luminance, where it is whole.
				inkA, inkB := ink, ink
				if extA {
					inkA = dark
				}
				if extB {
					inkB = dark
				}
				refinePulse(ink, inkA, inkB, &p, a, b, top, thick, left >= right)
				if ppmY > 0 {
					p.HeightMM = (p.BaseY - p.TopY) / ppmY
					// 1 mV at the smallest printed gain, 5 mm/mV, is 5 mm
					// (standards.md §1.1); strokes as short as minRun pass
					// the stroke test, and on a 100-dpi page two QRS strokes
					// with a grid dash across their feet made a "pulse" 0.9
					// mm tall, whose edges, once read to a fraction of a
					// pixel, matched another such pair's and outvoted the
					// real pulse in consistent (lowres rhythm seed 3).
					if p.HeightMM < minPulseMM {
						continue
					}
				}
				// A stroke split by a grid line's removal can pair twice
				// with the same partner: one pulse per place, the one read
				// without the luminance's help when there are two.
				dup := -1
				for k, q := range out {
					if math.Abs(q.BaseY-p.BaseY) <= float64(tol) && math.Abs(q.X0-p.X0) < float64(minGap) {
						dup = k
					}
				}
				switch {
				case dup < 0:
					out, ext = append(out, p), append(ext, extA || extB)
				case ext[dup] && !(extA || extB):
					out[dup], ext[dup] = p, false
				}
				taken[i], taken[j] = true, true
				break
			}
		}
	}
	return consistent(atRowEnds(out, ink))
}

// refinePulse moves the pulse's edges from whole pixels to the centre
// lines of its strokes: per image row (for the rising and falling strokes)
// or column (for the top and the foot) the ink-weighted centre of the
// stroke's cross-section, and the median of those over the stroke's
// length, so a crossing stroke or a speck does not pull it. A trace's time
// base starts a fixed distance after the pulse's fall, and an edge read
// to the whole pixel put it up to half a pixel off: at 300 dpi and 25
// mm/s 1.7 ms, which on a steep QRS stroke (2 mV in 20 ms) is a tenth of a
// millivolt. Anti-aliased and blurred strokes carry their position in the
// grey levels of their edges (the centroid of a line's profile, common
// practice in sub-pixel edge location). An edge with too little ink to
// measure keeps its whole-pixel value. footLeft says on which side of the
// pulse the baseline's ink is read; inkA and inkB are the maps the rising
// and falling edges are located on (ink, or the luminance's darkness for
// an edge printed along a grid line).
func refinePulse(ink, inkA, inkB *image.Gray, p *Pulse, a, b stroke, top, thick int, footLeft bool) {
	topOK, footOK := false, false
	y0, y1 := top+thick+1, max(a.y1, b.y1)-thick-1 // the strokes' middles, clear of the corners
	if v, ok := LineCentre(inkA, a.x0-2, a.x1+2, y0, y1, true); ok {
		p.X0 = v
	}
	if v, ok := LineCentre(inkB, b.x0-2, b.x1+2, y0, y1, true); ok {
		p.X1 = v
	}
	// The top between the strokes, clear of the corners.
	pad := max(2, thick)
	if v, ok := LineCentre(ink, int(p.TopY)-thick-1, int(p.TopY)+thick+1, a.x1+pad, b.x0-pad, false); ok {
		p.TopY, topOK = v, true
	}
	// The foot: the baseline beside the pulse, over one gap's width.
	w := b.x0 - a.x1
	fx0, fx1 := b.x1+pad, b.x1+pad+w/2
	if footLeft {
		fx0, fx1 = a.x0-pad-w/2, a.x0-pad
	}
	if v, ok := LineCentre(ink, int(p.BaseY)-thick-1, int(p.BaseY)+thick+1, fx0, fx1, false); ok {
		p.BaseY, footOK = v, true
	}
	p.levelsRead = topOK && footOK
}

// LineCentre locates a straight printed line to a fraction of a pixel:
// the median, over the lines l0..l1 along it, of the ink-weighted centre
// of its cross-section c0..c1 — along x on image rows l (a vertical
// stroke) when vertical, along y on image columns l otherwise; image
// coordinates. ok is false when fewer than half of the lines hold ink or
// the window leaves the map.
func LineCentre(ink *image.Gray, c0, c1, l0, l1 int, vertical bool) (float64, bool) {
	b := ink.Rect
	cMin, cMax, lMin, lMax := b.Min.X, b.Max.X, b.Min.Y, b.Max.Y
	if !vertical {
		cMin, cMax, lMin, lMax = b.Min.Y, b.Max.Y, b.Min.X, b.Max.X
	}
	if c0 < cMin || c1 >= cMax || l0 < lMin || l1 >= lMax || c1 <= c0 || l1 < l0 {
		return 0, false
	}
	centres := make([]float64, 0, l1-l0+1)
	for l := l0; l <= l1; l++ {
		var sw, sx float64
		for c := c0; c <= c1; c++ {
			var v uint8
			if vertical {
				v = ink.Pix[(l-b.Min.Y)*ink.Stride+c-b.Min.X]
			} else {
				v = ink.Pix[(c-b.Min.Y)*ink.Stride+l-b.Min.X]
			}
			sw += float64(v)
			sx += float64(v) * float64(c)
		}
		if sw >= 255 {
			centres = append(centres, sx/sw)
		}
	}
	if 2*len(centres) < l1-l0+1 {
		return 0, false
	}
	slices.Sort(centres)
	return centres[len(centres)/2], true
}

// verticalRuns returns, per column of ink, its runs of pixels ≥ on
// whose length lies in [minRun, maxRun], as [first, last] rows in
// increasing order. The map is read row by row (a column-wise scan of a
// page-sized map missed the cache at every pixel), each column's open run
// kept in start (−1: none).
func verticalRuns(ink *image.Gray, on uint8, minRun, maxRun int) [][][2]int {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	runs := make([][][2]int, w)
	start := make([]int32, w)
	for x := range start {
		start[x] = -1
	}
	// Runs open per group of 8 columns: a group with none open whose 8
	// pixels are all below on (one word test) is passed over.
	open := make([]int32, (w+7)/8)
	end := func(x, y int) {
		if l := y - int(start[x]); l >= minRun && l <= maxRun {
			runs[x] = append(runs[x], [2]int{int(start[x]), y - 1})
		}
		start[x] = -1
		open[x>>3]--
	}
	full := w / 8 // whole groups, passed over when they can be
	if on < 1 || on > 128 {
		full = 0
	}
	k := atLeastAddend(on)
	for y := 0; y < h; y++ {
		row := ink.Pix[y*ink.Stride : y*ink.Stride+w]
		for x0 := 0; x0 < w; x0 += 8 {
			if g := x0 >> 3; g < full && open[g] == 0 {
				if !anyAtLeast(binary.LittleEndian.Uint64(row[x0:]), k) {
					continue
				}
			}
			for x := x0; x < min(w, x0+8); x++ {
				v := row[x]
				switch {
				case v >= on && start[x] < 0:
					start[x] = int32(y)
					open[x>>3]++
				case v < on && start[x] >= 0:
					end(x, y)
				}
			}
		}
	}
	for x := range start {
		if start[x] >= 0 {
			end(x, h)
		}
	}
	return runs
}

// atRowEnds keeps the pulses printed where calibration pulses go: at the
// start of a row (the left fifth of the traced width) or at its end (the
// right tenth) — common practice; flat-topped complexes elsewhere that
// look like a pulse are dropped.
func atRowEnds(ps []Pulse, ink *image.Gray) []Pulse {
	w := ink.Rect.Dx()
	cols := inkColumns(ink)
	lo, hi := 0, w-1
	for lo < w-1 && cols[lo] == 0 {
		lo++
	}
	for hi > 0 && cols[hi] == 0 {
		hi--
	}
	span := float64(hi - lo)
	var out []Pulse
	for _, p := range ps {
		if p.X0 <= float64(lo)+0.2*span || p.X1 >= float64(hi)-0.1*span {
			out = append(out, p)
		}
	}
	return out
}

// inkColumns returns, per column of ink, how many of its even rows hold
// a pixel ≥ 128: the top bits of eight pixels at a time, added in byte
// lanes and emptied every 255 rows counted.
func inkColumns(ink *image.Gray) []int {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	cols := make([]int, w)
	nw := w / 8
	acc := make([]uint64, nw)
	flush := func() {
		for i, a := range acc {
			for k := range 8 {
				cols[8*i+k] += int(a >> (8 * k) & 0xff)
			}
			acc[i] = 0
		}
	}
	n := 0
	for y := 0; y < h; y += 2 {
		row := ink.Pix[y*ink.Stride : y*ink.Stride+w]
		for i := range acc {
			acc[i] += binary.LittleEndian.Uint64(row[8*i:]) >> 7 & bytes1
		}
		for x := 8 * nw; x < w; x++ {
			if row[x] >= 128 {
				cols[x]++
			}
		}
		if n++; n == 255 {
			flush()
			n = 0
		}
	}
	flush()
	return cols
}

// topThickness returns how many rows from y down are inked at the middle
// of [x0, x1] (the pen width of the pulse's top), 0 if none, and the
// first inked row.
func topThickness(ink *image.Gray, x0, x1, y int, on uint8) (int, int) {
	if x1 < x0 {
		return 0, y
	}
	h := ink.Rect.Dy()
	xm := (x0 + x1) / 2
	// Find the ink near the top row first (the strokes' ends may overshoot
	// the top line by a pixel or two).
	found := false
	for d := 0; d <= 4 && !found; d++ {
		for _, yy := range []int{y + d, y - d} {
			if yy >= 0 && yy < h && ink.Pix[yy*ink.Stride+xm] >= on {
				y, found = yy, true
				break
			}
		}
	}
	if !found {
		return 0, y
	}
	for y > 0 && ink.Pix[(y-1)*ink.Stride+xm] >= on {
		y--
	}
	n := 0
	for yy := y; yy < h && ink.Pix[yy*ink.Stride+xm] >= on; yy++ {
		n++
	}
	return n, y
}

// coverage returns the fraction of columns in [x0, x1] with ink in rows
// y..y+t−1 (±1).
func coverage(ink *image.Gray, x0, x1, y, t int, on uint8) float64 {
	h := ink.Rect.Dy()
	if x1 < x0 {
		return 0
	}
	n := 0
	for x := x0; x <= x1; x++ {
		for yy := max(0, y-1); yy <= min(h-1, y+t); yy++ {
			if ink.Pix[yy*ink.Stride+x] >= on {
				n++
				break
			}
		}
	}
	return float64(n) / float64(x1-x0+1)
}

// consistent keeps the pulses whose height and width agree with the
// median (within 12 %): one page has one gain.
func consistent(ps []Pulse) []Pulse {
	if len(ps) < 2 {
		return ps
	}
	// The pulses of one page share height and width: keep the largest
	// group of mutually similar candidates (ties: the taller group).
	// Taking the median instead fails when pairs of QRS complexes whose
	// "tops" run along a grid line outnumber the real pulses.
	similar := func(p, q Pulse) bool {
		hp, hq := p.BaseY-p.TopY, q.BaseY-q.TopY
		wp, wq := p.X1-p.X0, q.X1-q.X0
		return math.Abs(hp-hq) <= 0.12*hq && math.Abs(wp-wq) <= 0.2*wq+2
	}
	best, bestN, bestH := -1, 0, 0.0
	for i, q := range ps {
		n := 0
		for _, p := range ps {
			if similar(p, q) {
				n++
			}
		}
		if h := q.BaseY - q.TopY; n > bestN || (n == bestN && h > bestH) {
			best, bestN, bestH = i, n, h
		}
	}
	var out []Pulse
	for _, p := range ps {
		if similar(p, ps[best]) {
			out = append(out, p)
		}
	}
	return out
}

func abs(a int) int {
	if a < 0 {
		return -a
	}
	return a
}

// matchExtent extends stroke s to the rows of its partner p where the
// column at s's centre is dark in the luminance map over 90 % of the
// missing rows (the stretch of a pulse's edge lost with a grid line it
// was printed on: overlap photo rhythm seed 9, the rising edge on a 5 mm
// line, 3.6 of its 10 mm missing from the ink).
func matchExtent(dark *image.Gray, s, p stroke, on uint8) stroke {
	x := (s.x0 + s.x1) / 2
	if p.y0 < s.y0 && coverageColumn(dark, x, p.y0, s.y0-1, on) >= 0.9 {
		s.y0 = p.y0
	}
	if p.y1 > s.y1 && coverageColumn(dark, x, s.y1+1, p.y1, on) >= 0.9 {
		s.y1 = p.y1
	}
	return s
}

// coverageColumn is the share of rows y0..y1 where one of columns x−1,
// x, x+1 is at least on.
func coverageColumn(m *image.Gray, x, y0, y1 int, on uint8) float64 {
	b := m.Rect
	if y1 < y0 || x-1 < b.Min.X || x+1 >= b.Max.X || y0 < b.Min.Y || y1 >= b.Max.Y {
		return 0
	}
	n := 0
	for y := y0; y <= y1; y++ {
		o := (y-b.Min.Y)*m.Stride + x - b.Min.X
		if m.Pix[o-1] >= on || m.Pix[o] >= on || m.Pix[o+1] >= on {
			n++
		}
	}
	return float64(n) / float64(y1-y0+1)
}

// darkMap returns 255 − g (a luminance map read as ink strength).
func darkMap(g *image.Gray) *image.Gray {
	d := image.NewGray(g.Rect)
	for i, v := range g.Pix {
		d.Pix[i] = 255 - v
	}
	return d
}

// coverageGray is coverage on a luminance map: dark (< 255−110) counts.
func coverageGray(g *image.Gray, x0, x1, y, t int) float64 {
	if g == nil || x1 < x0 {
		return 0
	}
	h := g.Rect.Dy()
	n := 0
	for x := x0; x <= x1; x++ {
		for yy := max(0, y-1); yy <= min(h-1, y+t); yy++ {
			if g.Pix[yy*g.Stride+x] <= 255-110 {
				n++
				break
			}
		}
	}
	return float64(n) / float64(x1-x0+1)
}
