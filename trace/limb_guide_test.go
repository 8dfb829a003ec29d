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

// testCal10 is the calibration of the hand-built limb pages: 10 px/mm,
// 25 mm/s, 10 mm/mV.
func testCal10() grid.Calibration {
	return grid.Calibration{
		PxPerMMX: grid.Value{V: 10}, PxPerMMY: grid.Value{V: 10},
		SpeedMMPerS: grid.Value{V: 25}, GainMMPerMV: grid.Value{V: 10},
	}
}

// inventedBeats returns n samples at fs Hz of leads I and II with two
// invented beats (at 0.4 and 1.2 s): an R wave of ampI mV in I and one of
// ampII mV in II 10 ms later, followed by a 0.3 mV S wave in II, with slow
// waves between.
func inventedBeats(n int, fs, ampI, ampII float64) (lI, lII []float64) {
	lI, lII = make([]float64, n), make([]float64, n)
	for k := range n {
		tt := float64(k) / fs
		lI[k], lII[k] = 0.1*math.Sin(2*math.Pi*tt), 0.15*math.Cos(2*math.Pi*1.3*tt)
		for _, r := range []float64{0.4, 1.2} {
			lI[k] += ampI * math.Exp(-0.5*math.Pow((tt-r)/0.012, 2))
			lII[k] += ampII*math.Exp(-0.5*math.Pow((tt-r-0.01)/0.012, 2)) - 0.3*math.Exp(-0.5*math.Pow((tt-r-0.04)/0.01, 2))
		}
	}
	return lI, lII
}

// paintTrace draws samples v (mV, fs Hz) into ink from x0 px at 250 px/s
// (two samples per column) and 100 px/mV about the line zero, pen 3 px:
// per sample a vertical segment to the next sample's level; skip, when
// not nil, leaves out the samples it marks.
func paintTrace(ink *image.Gray, v []float64, zero, x0, fs float64, skip func(k int) bool) {
	for k := 0; k+1 < len(v); k++ {
		if skip != nil && skip(k) {
			continue
		}
		x := int(math.Round(x0 + float64(k)/fs*250))
		y0, y1 := zero-v[k]*100, zero-v[k+1]*100
		for y := int(math.Min(y0, y1)) - 1; y <= int(math.Max(y0, y1))+1; y++ {
			ink.Pix[y*ink.Stride+x] = 255
		}
	}
}

// limbPage builds six simultaneous limb-lead panels (I, II, III, aVR,
// aVL, aVF as on the first column of a 6 × 2 page: 10 px/mm, 25 mm/s,
// 10 mm/mV, rows 15 mm apart), their true samples (III, aVR, aVL and aVF
// derived from I and II by Einthoven's and Goldberger's laws,
// standards.md §1.3) and an ink map with every trace drawn; skip, when
// not nil, leaves that lead's ink out over the samples it marks.
func limbPage(t testing.TB, skip func(l ecg.Lead, k int) bool) (*image.Gray, grid.Calibration, []*Panel, [][]float64, []float64) {
	t.Helper()
	const fs, n = 500.0, 1000
	cal := testCal10()
	lI, lII := inventedBeats(n, fs, 1.4, 0.9)
	ink := image.NewGray(image.Rect(0, 0, 700, 1200))
	var panels []*Panel
	var vals [][]float64
	var xs []float64
	for r, l := range ecg.LimbLeads {
		a, b, _ := ecg.FrontalCoefficients(l)
		v := make([]float64, n)
		for k := range v {
			v[k] = a*lI[k] + b*lII[k]
		}
		zero := 250 + 150*float64(r)
		panels = append(panels, &Panel{Lead: l, Row: r, T0: 0, T1: 2, ZeroY: zero, Quality: 1})
		vals = append(vals, v)
		xs = append(xs, 50)
		paintTrace(ink, v, zero, 50, fs, func(k int) bool { return skip != nil && skip(l, k) })
	}
	return ink, cal, panels, vals, xs
}

// TestGuideLimbRestoresBrokenLead: aVL loses its R wave at 1.2 s (read
// flat, as when its stroke merged with a neighbour's and the path stayed
// on the baseline). The other five leads agree on the Einthoven and
// Goldberger identities, the ink is there, so the stretch is re-read at
// the consensus; the other leads and aVL's first beat are not touched.
func TestGuideLimbRestoresBrokenLead(t *testing.T) {
	ink, cal, panels, vals, xs := limbPage(t, nil)
	truth := slices.Clone(vals[4])
	others := make([][]float64, len(vals))
	for i := range vals {
		others[i] = slices.Clone(vals[i])
	}
	for k := 580; k < 640; k++ { // 1.16–1.28 s
		vals[4][k] = 0
	}
	warn := guideLimb(ink, cal, 500, panels, vals, xs, defaultLimbGuide)
	if len(warn) != 1 || !strings.Contains(warn[0], "aVL") {
		t.Fatalf("warnings %q, want one naming aVL", warn)
	}
	worst := 0.0
	for k := 560; k < 660; k++ {
		worst = math.Max(worst, math.Abs(vals[4][k]-truth[k]))
	}
	// 0.02 mV: the leads' medians are removed and restored, exact here
	// up to the median of a changed lead.
	if worst > 0.02 {
		t.Errorf("aVL after re-reading departs %.3f mV from the truth (before: 0.8 mV)", worst)
	}
	for i := range vals {
		if i == 4 {
			continue
		}
		if !slices.Equal(vals[i], others[i]) {
			t.Errorf("lead %v changed", panels[i].Lead)
		}
	}
}

// TestGuideLimbNeedsInk: the same broken stretch, but the page has no
// ink where the consensus would put aVL's R wave; the lead is left as
// read (the identities guide the reading, they do not replace the page).
func TestGuideLimbNeedsInk(t *testing.T) {
	ink, cal, panels, vals, xs := limbPage(t, func(l ecg.Lead, k int) bool { return l == ecg.LeadAVL && k >= 560 && k < 660 })
	for k := 580; k < 640; k++ {
		vals[4][k] = 0
	}
	before := slices.Clone(vals[4])
	if warn := guideLimb(ink, cal, 500, panels, vals, xs, defaultLimbGuide); len(warn) != 0 {
		t.Errorf("warnings %q, want none", warn)
	}
	if !slices.Equal(vals[4], before) {
		t.Error("aVL changed without ink under the consensus")
	}
}

// TestGuideLimbConsistentUnchanged: six consistent leads are left alone.
func TestGuideLimbConsistentUnchanged(t *testing.T) {
	ink, cal, panels, vals, xs := limbPage(t, nil)
	requireGuideLimbUnchanged(t, ink, cal, panels, vals, xs)
}

// secondColumn keeps, of limbPage's six panels, the four a 3 × 4 page
// with a rhythm strip prints at the same time in its second column: aVR,
// aVL, aVF and the rhythm strip's II.
func secondColumn(panels []*Panel, vals [][]float64, xs []float64) ([]*Panel, [][]float64, []float64) {
	var p []*Panel
	var v [][]float64
	var x []float64
	for i, pn := range panels {
		switch pn.Lead {
		case ecg.LeadII, ecg.LeadAVR, ecg.LeadAVL, ecg.LeadAVF:
			p, v, x = append(p, pn), append(v, vals[i]), append(x, xs[i])
		}
	}
	return p, v, x
}

// TestGuideLimbFourLeadsGross: the second column of a 3 × 4 page with
// the rhythm II holds four limb leads, two independent constraints
// (aVR + aVL + aVF = 0; aVF = 1.5·II + aVR, from Goldberger's and
// Einthoven's laws, standards.md §1.3), enough to name one lead that
// breaks them. aVL loses its 0.95 mV R wave at 1.2 s (read flat, as when
// its path took another row's stroke); it is re-read at the value the
// other three agree on, and they are left alone.
func TestGuideLimbFourLeadsGross(t *testing.T) {
	ink, cal, panels6, vals6, xs6 := limbPage(t, nil)
	panels, vals, xs := secondColumn(panels6, vals6, xs6)
	const iAVL = 2 // II, aVR, aVL, aVF
	if panels[iAVL].Lead != ecg.LeadAVL {
		t.Fatalf("panel %d is %v", iAVL, panels[iAVL].Lead)
	}
	truth := slices.Clone(vals[iAVL])
	others := make([][]float64, len(vals))
	for i := range vals {
		others[i] = slices.Clone(vals[i])
	}
	for k := 580; k < 640; k++ { // 1.16–1.28 s
		vals[iAVL][k] = 0
	}
	warn := guideLimb(ink, cal, 500, panels, vals, xs, defaultLimbGuide)
	if len(warn) != 1 || !strings.Contains(warn[0], "aVL") {
		t.Fatalf("warnings %q, want one naming aVL", warn)
	}
	worst := 0.0
	for k := 560; k < 660; k++ {
		worst = math.Max(worst, math.Abs(vals[iAVL][k]-truth[k]))
	}
	// The stretch departing by more than 0.3 mV is found, then widened
	// while aVL departs by more than a millimetre of trace, so the whole
	// lost wave is re-read (exact here up to the medians removed).
	if worst > 0.02 {
		t.Errorf("aVL after re-reading departs %.3f mV from the truth (before: 0.95 mV)", worst)
	}
	for i := range vals {
		if i != iAVL && !slices.Equal(vals[i], others[i]) {
			t.Errorf("lead %v changed", panels[i].Lead)
		}
	}
}

// TestGuideLimbFourLeadsSlipUnchanged: with only four limb leads a small
// disagreement is not acted on: aVL read one sample (2 ms) late, so that
// it departs by up to ≈ 0.1 mV on its steep R-wave strokes (a fraction of
// a pixel at 10 px/mm), and II read 0.08 mV high over its R wave, are
// both left as read.
func TestGuideLimbFourLeadsSlipUnchanged(t *testing.T) {
	ink, cal, panels6, vals6, xs6 := limbPage(t, nil)
	panels, vals, xs := secondColumn(panels6, vals6, xs6)
	for k := len(vals[2]) - 1; k > 0; k-- {
		vals[2][k] = vals[2][k-1]
	}
	for k := 590; k < 615; k++ {
		vals[0][k] += 0.08
	}
	requireGuideLimbUnchanged(t, ink, cal, panels, vals, xs)
}

// BenchmarkGuideLimb times guideLimb on six 2 s limb-lead panels at
// 500 Hz with one broken stretch (a 10 s page costs five times this).
func BenchmarkGuideLimb(b *testing.B) {
	ink, cal, panels, vals, xs := limbPage(b, nil)
	orig := slices.Clone(vals[4])
	for k := 580; k < 640; k++ {
		orig[k] = 0
	}
	b.ReportAllocs()
	for b.Loop() {
		copy(vals[4], orig)
		guideLimb(ink, cal, 500, panels, vals, xs, defaultLimbGuide)
	}
}

// requireGuideLimbUnchanged runs guideLimb and requires no warning and
// every panel's samples unchanged.
func requireGuideLimbUnchanged(t *testing.T, ink *image.Gray, cal grid.Calibration, panels []*Panel, vals [][]float64, xs []float64) {
	t.Helper()
	before := make([][]float64, len(vals))
	for i := range vals {
		before[i] = slices.Clone(vals[i])
	}
	if warn := guideLimb(ink, cal, 500, panels, vals, xs, defaultLimbGuide); len(warn) != 0 {
		t.Errorf("warnings %q, want none", warn)
	}
	for i := range vals {
		if !slices.Equal(vals[i], before[i]) {
			t.Errorf("lead %v changed", panels[i].Lead)
		}
	}
}
