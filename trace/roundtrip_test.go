package trace

import (
	"errors"
	"image"
	"math"
	"sort"
	"testing"

	"tracelift/ecg"
	"tracelift/render"
)

// TestRoundTripLayouts prints a seeded synthetic record in every layout on
// a clean 300-dpi page, digitises it with the truth's calibration (this
// isolates trace extraction from the front end) and checks the detected
// layout, that every printed lead comes back under its own name, and
// median-SNR floors (the metric of the PhysioNet/CinC Challenge 2024,
// standards.md §7, with the lenient shift and offset handling).
func TestRoundTripLayouts(t *testing.T) {
	tests := []struct {
		layout   string
		medianDB float64 // floor for the median per-lead SNR
		minDB    float64 // floor for every lead (a swap scores ≤ 0 dB)
	}{
		{"3x4+1", 22, 10},
		{"3x4", 22, 10},
		{"3x4+3", 22, 10},
		{"6x2", 22, 10},
		{"cabrera-3x4", 22, 10},
		{"rhythm", 22, 20},
		// 12 rows on A4: complexes cross several rows (weak; see doc.go);
		// measured 17.8 dB.
		{"12x1", 15, -5},
	}
	rec := synthRecord(t, 1)
	for _, tc := range tests {
		t.Run(tc.layout, func(t *testing.T) {
			pg := renderPage(t, rec, render.Options{Layout: tc.layout})
			res, err := Extract(naiveInk(pg.img), truthCal(pg.truth), truthPulses(pg.truth), nil)
			if err != nil {
				t.Fatalf("Extract: %v", err)
			}
			writeOverlay(t, "rt-"+tc.layout, pg.img, res)
			if res.Layout.Name != tc.layout {
				t.Errorf("layout %q, want %q", res.Layout.Name, tc.layout)
			}
			printed := printedTruth(pg.truth)
			sc := SNR(printed, res.Record, Lenient)
			var v []float64
			for _, s := range printed.Signals {
				got, ok := sc.PerLead[s.Lead]
				if !ok {
					t.Errorf("lead %v not scored", s.Lead)
					continue
				}
				v = append(v, got)
				if got < tc.minDB {
					t.Errorf("lead %v: %.1f dB < %.0f", s.Lead, got, tc.minDB)
				}
			}
			sort.Float64s(v)
			if med := quantile(v, 0.5); med < tc.medianDB {
				t.Errorf("median SNR %.1f dB < %.0f dB", med, tc.medianDB)
			}
			if math.Abs(sc.ShiftS) > 0.006 {
				t.Errorf("time base off by %.3f s", sc.ShiftS)
			}
			t.Logf("%s: median %.1f dB, shift %.3f s, limb residual %.0f µV, flagged %v", tc.layout, sc.Median, sc.ShiftS, res.Limb.ResidualUV, res.Flagged)
		})
	}
}

// TestSelfCheckFlagsBadLead corrupts one limb lead of a consistent record
// (the synthetic limb leads obey Einthoven's II = I + III and Goldberger's
// relations, standards.md §1.3) and expects the residual check to flag it
// and only it.
func TestSelfCheckFlagsBadLead(t *testing.T) {
	for _, bad := range []ecg.Lead{ecg.LeadIII, ecg.LeadAVL} {
		rec := synthRecord(t, 2)
		s := rec.Signal(bad)
		for i := range s.Samples {
			s.Samples[i] = 0.6*s.Samples[i] + 0.15 // wrong gain and offset
		}
		res := &Result{Record: rec, Quality: map[ecg.Lead]float64{}}
		c, ok := ecg.CheckLimb(&res.Record)
		if !ok {
			t.Fatal("CheckLimb: no limb leads")
		}
		res.Limb = c
		got := flagLeads(res, true)
		if len(got) != 1 || got[0] != bad {
			t.Errorf("corrupted %v: flagged %v (residual %.0f µV)", bad, got, c.ResidualUV)
		}
		// The uncorrupted record passes.
		good := synthRecord(t, 2)
		res = &Result{Record: good, Quality: map[ecg.Lead]float64{}}
		res.Limb, _ = ecg.CheckLimb(&res.Record)
		if got := flagLeads(res, true); len(got) != 0 {
			t.Errorf("clean record: flagged %v (residual %.1f µV)", got, res.Limb.ResidualUV)
		}
	}
}

func TestExtractErrors(t *testing.T) {
	blank := naiveInk(renderBlank())
	if _, err := Extract(blank, testCal(11.8), nil, nil); !errors.Is(err, ecg.ErrNoECG) {
		t.Errorf("blank page: err %v, want ErrNoECG", err)
	}
	if _, err := Extract(nil, testCal(11.8), nil, nil); !errors.Is(err, ecg.ErrNoECG) {
		t.Errorf("nil ink: err %v, want ErrNoECG", err)
	}
	bad := testCal(11.8)
	bad.PxPerMMX.V = math.NaN()
	if _, err := Extract(blank, bad, nil, nil); !errors.Is(err, ecg.ErrUnreadable) {
		t.Errorf("NaN px/mm: err %v, want ErrUnreadable", err)
	}
}

// TestExtractPartial erases V2 and V3 (third column, rows 2 and 3) of a
// 3 × 4 + 1 page and the last 40 % of V4's panel: the erased leads must be absent from the record
// (not present as all-NaN signals), V4 must be reported as partial, and
// the error must wrap ecg.ErrPartial with one *LeadError per affected lead.
func TestExtractPartial(t *testing.T) {
	rec := synthRecord(t, 3)
	pg := renderPage(t, rec, render.Options{Layout: "3x4+1"})
	ink := naiveInk(pg.img)
	tr := pg.truth
	erase := func(p render.TruthPanel, t0 float64) {
		x0, y0 := tr.PaperToPx(p.X0MM+(t0-p.T0)*tr.SpeedMMPerS-1, p.BaselineYMM-21)
		x1, y1 := tr.PaperToPx(p.X1MM+1, p.BaselineYMM+21)
		for y := int(y0); y <= int(y1); y++ {
			for x := int(x0); x <= int(x1); x++ {
				if (image.Point{x, y}).In(ink.Rect) {
					ink.Pix[y*ink.Stride+x] = 0
				}
			}
		}
	}
	gone := map[ecg.Lead]bool{}
	for _, p := range tr.Panels {
		switch l, _ := ecg.ParseLead(p.Lead); {
		case p.Col == 2 && p.Row > 0 && !p.Rhythm:
			erase(p, p.T0)
			gone[l] = true
		case l == ecg.LeadV4:
			erase(p, p.T0+0.6*(p.T1-p.T0))
		}
	}
	if len(gone) != 2 {
		t.Fatalf("erased %d leads, want V2 and V3", len(gone))
	}
	lay, _ := StandardLayout("3x4+1")
	res, err := Extract(ink, truthCal(tr), truthPulses(tr), &Options{Layout: lay})
	if !errors.Is(err, ecg.ErrPartial) {
		t.Fatalf("err %v, want ErrPartial", err)
	}
	if res == nil {
		t.Fatal("no partial result")
	}
	reported := map[ecg.Lead]bool{}
	for _, e := range err.(interface{ Unwrap() error }).Unwrap().(interface{ Unwrap() []error }).Unwrap() {
		var le *LeadError
		if errors.As(e, &le) {
			reported[le.Lead] = true
		}
	}
	for l := range gone {
		if !reported[l] {
			t.Errorf("lead %v erased but not reported", l)
		}
		if s := res.Record.Signal(l); s != nil {
			t.Errorf("lead %v erased but present in the record", l)
		}
	}
	if !reported[ecg.LeadV4] {
		t.Errorf("V4 partly erased but not reported as partial")
	}
	if s := res.Record.Signal(ecg.LeadV4); s == nil {
		t.Errorf("V4 partly erased: its traced part should be kept")
	}
	for _, l := range []ecg.Lead{ecg.LeadI, ecg.LeadII, ecg.LeadIII, ecg.LeadAVR, ecg.LeadAVL, ecg.LeadAVF, ecg.LeadV1, ecg.LeadV5, ecg.LeadV6} {
		if reported[l] {
			t.Errorf("intact lead %v reported missing", l)
		}
		if s := res.Record.Signal(l); s == nil {
			t.Errorf("intact lead %v missing from the record", l)
		}
	}
}

func TestValidFraction(t *testing.T) {
	nan := math.NaN()
	s := []float64{1, 1, nan, nan, 1, 1, 1, 1, nan, nan}
	tests := []struct {
		win  [][2]float64
		want float64
	}{
		{[][2]float64{{0, 10}}, 0.6},
		{[][2]float64{{0, 4}}, 0.5},
		{[][2]float64{{0, 4}, {2, 6}}, 4.0 / 6}, // overlapping windows count once
		{[][2]float64{{4, 8}}, 1},
		{nil, 0},
	}
	for _, tc := range tests {
		if got := validFraction(s, tc.win, 1); math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("windows %v: %g, want %g", tc.win, got, tc.want)
		}
	}
}

// TestExtractMissingRow erases the whole second row (II, aVL, V2, V5) of a
// 3 × 4 + 1 page: the rows below must keep their own leads (III, aVF, V3,
// V6 and the rhythm II) instead of moving up one row, and the erased row's
// leads that are printed nowhere else must be reported missing.
func TestExtractMissingRow(t *testing.T) {
	rec := synthRecord(t, 4)
	pg := renderPage(t, rec, render.Options{Layout: "3x4+1"})
	ink := naiveInk(pg.img)
	tr := pg.truth
	for _, p := range tr.Panels {
		if p.Row != 1 {
			continue
		}
		x0, y0 := tr.PaperToPx(p.X0MM-12, p.BaselineYMM-21)
		x1, y1 := tr.PaperToPx(p.X1MM+1, p.BaselineYMM+21)
		for y := max(int(y0), 0); y <= int(y1) && y < ink.Rect.Max.Y; y++ {
			for x := max(int(x0), 0); x <= int(x1) && x < ink.Rect.Max.X; x++ {
				ink.Pix[y*ink.Stride+x] = 0
			}
		}
	}
	lay, _ := StandardLayout("3x4+1")
	res, err := Extract(ink, truthCal(tr), truthPulses(tr), &Options{Layout: lay})
	if !errors.Is(err, ecg.ErrPartial) {
		t.Fatalf("err %v, want ErrPartial", err)
	}
	for _, l := range []ecg.Lead{ecg.LeadAVL, ecg.LeadV2, ecg.LeadV5} {
		if res.Record.Signal(l) != nil {
			t.Errorf("lead %v erased but present", l)
		}
	}
	printed := printedTruth(tr)
	sc := SNR(printed, res.Record, Lenient)
	for _, l := range []ecg.Lead{ecg.LeadI, ecg.LeadII, ecg.LeadIII, ecg.LeadAVF, ecg.LeadV3, ecg.LeadV6} {
		// A lead traced under another lead's name scores ≤ 0 dB; a
		// correct one 14–27 dB on this clean page.
		if v, ok := sc.PerLead[l]; !ok || v < 10 {
			t.Errorf("lead %v: %.1f dB (scored %v), want ≥ 10", l, v, ok)
		}
	}
}
