package trace

import (
	"errors"
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
		// 12 rows on A4: complexes cross several rows (weak; see doc.go).
		{"12x1", 10, -5},
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
