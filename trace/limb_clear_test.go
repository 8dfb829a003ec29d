package trace

import (
	"image"
	"math"
	"slices"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/grid"
)

// clearColumn builds the second column of a 3 × 4 page with its rhythm
// strip: aVR, aVL and aVF in rows 0–2 and II in row 3 (10 px/mm, 25 mm/s,
// 10 mm/mV, rows 15 mm apart), printed at the same time, with each
// panel's path on its own trace (one point per column), the true samples
// (aVR, aVL and aVF derived from I and II by Goldberger's laws,
// standards.md §1.3) and an ink map with every trace drawn; skip, when
// not nil, leaves that lead's ink out over the samples it marks.
func clearColumn(t testing.TB, skip func(l ecg.Lead, k int) bool) (*image.Gray, grid.Calibration, []*Panel, [][]float64, []float64) {
	t.Helper()
	const fs, n, x0 = 500.0, 1000, 50.0
	cal := testCal10()
	lI, lII := inventedBeats(n, fs, 1.2, 0.8)
	ink := image.NewGray(image.Rect(0, 0, 700, 900))
	var panels []*Panel
	var vals [][]float64
	var xs []float64
	for r, l := range []ecg.Lead{ecg.LeadAVR, ecg.LeadAVL, ecg.LeadAVF, ecg.LeadII} {
		a, b, _ := ecg.FrontalCoefficients(l)
		v := make([]float64, n)
		for k := range v {
			v[k] = a*lI[k] + b*lII[k]
		}
		zero := 200 + 150*float64(r)
		p := &Panel{Lead: l, Row: r, T0: 0, T1: 2, ZeroY: zero, Quality: 1, Bounds: image.Rect(int(x0), int(zero)-75, int(x0)+500, int(zero)+75)}
		for x := x0; x < x0+500; x++ {
			p.Path = append(p.Path, Point{x, zero - v[int(2*(x-x0))]*100})
		}
		panels = append(panels, p)
		vals = append(vals, v)
		xs = append(xs, x0)
		paintTrace(ink, v, zero, x0, fs, func(k int) bool { return skip != nil && skip(l, k) })
	}
	return ink, cal, panels, vals, xs
}

// tradeStrokes makes aVR's and aVL's paths (panels 0 and 1) meet half-way
// between their rows over samples [k0, k1), as two paths that traded
// their merged QRS strokes do, with their samples read there.
func tradeStrokes(panels []*Panel, vals [][]float64, k0, k1 int) {
	mid := (panels[0].ZeroY + panels[1].ZeroY) / 2
	for _, i := range []int{0, 1} {
		p := panels[i]
		for j := range p.Path {
			if k := int(2 * (p.Path[j].X - 50)); k >= k0 && k < k1 {
				p.Path[j].Y = mid
			}
		}
		for k := k0; k < k1; k++ {
			vals[i][k] = (p.ZeroY - mid) / 100
		}
	}
}

// TestReReadFromClear: at the second beat aVR and aVL traded strokes
// (both paths run together between their rows, reading −0.75 and
// +0.75 mV). Their errors nearly cancel in aVR + aVL + aVF = 0; aVF and
// the rhythm strip's II, clear of other rows, give the frontal vector,
// and both broken leads are re-read at what it predicts, which lies on
// their own ink. The clear leads and aVR's and aVL's first beat are not
// touched.
func TestReReadFromClear(t *testing.T) {
	ink, cal, panels, vals, xs := clearColumn(t, nil)
	truth := [][]float64{slices.Clone(vals[0]), slices.Clone(vals[1])}
	clearBefore := [][]float64{slices.Clone(vals[2]), slices.Clone(vals[3])}
	tradeStrokes(panels, vals, 590, 620) // 1.18–1.24 s
	before := [][]float64{slices.Clone(vals[0]), slices.Clone(vals[1])}
	warn := reReadFromClear(ink, cal, 500, panels, vals, nil, xs, defaultClear)
	if len(warn) != 2 || !strings.Contains(warn[0], "aVR") || !strings.Contains(warn[1], "aVL") {
		t.Fatalf("warnings %q, want one naming aVR and one aVL", warn)
	}
	for i := range 2 {
		worst, was := 0.0, 0.0
		for k := 590; k < 620; k++ {
			worst = math.Max(worst, math.Abs(vals[i][k]-truth[i][k]))
			was = math.Max(was, math.Abs(before[i][k]-truth[i][k]))
		}
		// 0.02 mV: the leads' medians are removed and restored, exact
		// here up to the median of a changed lead.
		if worst > 0.02 {
			t.Errorf("%v after re-reading departs %.3f mV from the truth (before: %.2f mV)", panels[i].Lead, worst, was)
		}
		if !slices.Equal(vals[i][:500], before[i][:500]) {
			t.Errorf("%v changed at its first beat", panels[i].Lead)
		}
	}
	for i := range 2 {
		if !slices.Equal(vals[2+i], clearBefore[i]) {
			t.Errorf("clear lead %v changed", panels[2+i].Lead)
		}
	}
}

// TestReReadFromClearNeedsInk: the same trade, but the page has no ink
// where the clear leads put aVL's second R wave. aVL is left as read
// (the identities guide the reading, they do not replace the page);
// aVR, whose ink is there, is still re-read.
func TestReReadFromClearNeedsInk(t *testing.T) {
	ink, cal, panels, vals, xs := clearColumn(t, func(l ecg.Lead, k int) bool { return l == ecg.LeadAVL && k >= 570 && k < 640 })
	tradeStrokes(panels, vals, 590, 620)
	before := slices.Clone(vals[1])
	warn := reReadFromClear(ink, cal, 500, panels, vals, nil, xs, defaultClear)
	if len(warn) != 1 || !strings.Contains(warn[0], "aVR") {
		t.Errorf("warnings %q, want one naming aVR", warn)
	}
	if !slices.Equal(vals[1], before) {
		t.Error("aVL changed without ink under the prediction")
	}
}

// TestReReadFromClearBridgedIsNotClear: aVF's path has no points over its
// second R wave (an excursion dropped: the samples there are a straight
// bridge, not read from the page), so at that beat only II is clear and
// nothing is re-read; and a re-read sample that guideLimb already wrote
// (differs from keep) is left alone.
func TestReReadFromClearBridgedIsNotClear(t *testing.T) {
	ink, cal, panels, vals, xs := clearColumn(t, nil)
	tradeStrokes(panels, vals, 590, 620)
	p := panels[2]
	p.Path = slices.DeleteFunc(p.Path, func(q Point) bool { k := 2 * (q.X - 50); return k >= 580 && k < 630 })
	before := make([][]float64, len(vals))
	for i := range vals {
		before[i] = slices.Clone(vals[i])
	}
	if warn := reReadFromClear(ink, cal, 500, panels, vals, nil, xs, defaultClear); len(warn) != 0 {
		t.Errorf("warnings %q, want none", warn)
	}
	for i := range vals {
		if !slices.Equal(vals[i], before[i]) {
			t.Errorf("%v changed with one clear lead", panels[i].Lead)
		}
	}

	// Back with aVF's path whole, but aVR's stretch already re-read by
	// guideLimb: keep holds other values there.
	ink, cal, panels, vals, xs = clearColumn(t, nil)
	tradeStrokes(panels, vals, 590, 620)
	keep := make([][]float64, len(vals))
	for i := range vals {
		keep[i] = slices.Clone(vals[i])
	}
	for k := 570; k < 640; k++ {
		keep[0][k] = 9
	}
	aVR := slices.Clone(vals[0])
	warn := reReadFromClear(ink, cal, 500, panels, vals, keep, xs, defaultClear)
	if len(warn) != 1 || !strings.Contains(warn[0], "aVL") {
		t.Errorf("warnings %q, want one naming aVL", warn)
	}
	if !slices.Equal(vals[0], aVR) {
		t.Error("aVR's stretch re-read although guideLimb had written it")
	}
}

// TestReReadFromClearNeedsTheLaws: the page's limb leads must agree
// where three or more are clear (clearParams.minHold) before any is
// re-read. On this page they agree at every such sample; asking for more
// than that leaves the traded stretch as read. (On LUDB records printed
// with the dataset's per-lead header gains, which break the laws, the
// share is 90–96 % at 20 mm/mV; see defaultClear.)
func TestReReadFromClearNeedsTheLaws(t *testing.T) {
	ink, cal, panels, vals, xs := clearColumn(t, nil)
	tradeStrokes(panels, vals, 590, 620)
	before := make([][]float64, len(vals))
	for i := range vals {
		before[i] = slices.Clone(vals[i])
	}
	p := defaultClear
	p.minHold = 1.01
	if warn := reReadFromClear(ink, cal, 500, panels, vals, nil, xs, p); len(warn) != 0 {
		t.Errorf("warnings %q, want none", warn)
	}
	for i := range vals {
		if !slices.Equal(vals[i], before[i]) {
			t.Errorf("%v changed although the page's leads were not held to the laws", panels[i].Lead)
		}
	}
	p.minHold = 1
	if warn := reReadFromClear(ink, cal, 500, panels, vals, nil, xs, p); len(warn) != 2 {
		t.Errorf("warnings %q with every clear sample agreeing, want two", warn)
	}
}
