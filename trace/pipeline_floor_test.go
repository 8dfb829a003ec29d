package trace_test

import (
	"image/color"
	"image/draw"
	"math"
	"os"
	"path/filepath"
	"sort"
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
	"tracelift/export/wfdb"
	"tracelift/imageproc"
	"tracelift/internal/refdata"
	"tracelift/render"
	"tracelift/trace"
)

// TestPipelineFloors runs render → imageproc.Prepare → grid.Detect →
// trace.Extract on a small seeded corpus and asserts SNR floors (the
// PhysioNet/CinC Challenge 2024 metric, standards.md §7, lenient variant)
// so that a regression anywhere in the chain fails.
func TestPipelineFloors(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	// One seeded page per condition; each floor is below the page's
	// measured median (clean 25.0, scan 23.5, gray 21.9, penmarks 23.5 dB
	// when set) and at or above the condition's target. The corpus medians
	// over four pages per condition were clean 24.9, scan 21.7, gray 19.9,
	// penmarks 21.6 dB (TestCorpusTable). Fax and overlapping rows have
	// their own tests (TestFaxFloor, TestOverlapFloor); photos are held to
	// their calibration bounds in grid's TestCorpusPhoto.
	tests := []struct {
		c        accuracy.Case
		medianDB float64
	}{
		{accuracy.Case{Condition: "clean", Layout: "3x4+1", Seed: 1}, 24},
		{accuracy.Case{Condition: "scan", Seed: 1}, 20},
		{accuracy.Case{Condition: "gray", Seed: 1}, 18},
		{accuracy.Case{Condition: "penmarks", Seed: 1}, 18},
	}
	for _, tc := range tests {
		t.Run(tc.c.Name(), func(t *testing.T) {
			cs := scoreCase(t, tc.c, "")
			if cs.err != nil {
				t.Fatalf("digitise: %v", cs.err)
			}
			if cs.found != cs.printed || cs.swaps != 0 {
				t.Errorf("found %d of %d leads, %d swaps", cs.found, cs.printed, cs.swaps)
			}
			if cs.lenient.Median < tc.medianDB {
				t.Errorf("median SNR %.1f dB < %.0f dB (%s)", cs.lenient.Median, tc.medianDB, fmtLeads(cs.lenient.PerLead))
			}
			t.Logf("%s: median %.1f dB (strict %.1f)", cs.name, cs.lenient.Median, cs.strict.Median)
		})
	}
}

// TestFaxFloor digitises a seeded fax page (binarised, 204 × 196 dpi, the
// grid mostly dropped to dashes) through the whole front end, given the
// resolution its file carries, and asserts that every printed lead is
// found without swaps and the median SNR (PhysioNet/CinC Challenge 2024
// metric, standards.md §7, lenient variant) stays above a floor. Measured
// 15.7 dB on this page (before rows broken into islands were read, it
// gave one lead of twelve); the fax corpus median over nine pages (3x4+1,
// 3x4, 6x2; seeds 1–3) was 10.1 dB with 88 % of the leads found.
//
// The 3x4+3 page (seed 3) lost lead II in both its printed places ("no
// trace found"): the binarised trace kept only dashes and QRS strokes and
// its path ran along the next row's unbroken line, then was dropped as an
// excursion. With the far-from-baseline cost for flat stretches
// (followParams.farCost) all twelve leads are found; measured 17.2 dB.
func TestFaxFloor(t *testing.T) {
	t.Run("3x4 seed 2", func(t *testing.T) {
		checkPageFloor(t, accuracy.Case{Condition: "fax", Layout: "3x4", Seed: 2}, 14)
	})
	t.Run("3x4+3 seed 3", func(t *testing.T) {
		checkPageFloor(t, accuracy.Case{Condition: "fax", Layout: "3x4+3", Seed: 3}, 12)
	})
	// No grid left after binarisation: every trace baseline was taken
	// for a grid line and cut from the ink (11 of 12 leads, 5.4 dB) until
	// imageproc's split asked binarised line flags to form a lattice;
	// measured 19.3 dB.
	t.Run("12x1 seed 1", func(t *testing.T) {
		checkPageFloor(t, accuracy.Case{Condition: "fax", Layout: "12x1", Seed: 1}, 17)
	})
}

// checkPageFloor digitises one seeded page through the whole front end
// and asserts its layout, every printed lead found under its own name,
// and a median (lenient) SNR of at least floorDB.
func checkPageFloor(t *testing.T, c accuracy.Case, floorDB float64) {
	t.Helper()
	if testing.Short() {
		t.Skip("renders a full page")
	}
	cs := scoreCaseWith(t, c, "", true)
	if cs.err != nil {
		t.Fatalf("digitise: %v", cs.err)
	}
	if cs.layout != c.Layout {
		t.Errorf("layout %q, want %s", cs.layout, c.Layout)
	}
	if cs.found != cs.printed || cs.swaps != 0 {
		t.Errorf("found %d of %d leads, %d swaps", cs.found, cs.printed, cs.swaps)
	}
	if cs.lenient.Median < floorDB {
		t.Errorf("median SNR %.1f dB < %g dB (%s)", cs.lenient.Median, floorDB, fmtLeads(cs.lenient.PerLead))
	}
	t.Logf("%s: median %.1f dB (strict %.1f)", cs.name, cs.lenient.Median, cs.strict.Median)
}

// TestOverlapFloor digitises a seeded overlap page (20 mm/mV and tall
// complexes, so QRS strokes of neighbouring rows cross each trace) through
// the whole front end and asserts that every lead comes back under its own
// name and the median SNR (PhysioNet/CinC Challenge 2024 metric,
// standards.md §7, lenient variant) stays above a floor. Measured 18.3 dB
// on this page (13.0 before the pen-bound radius was capped at
// maxPenRadiusMM); the overlap median over ten pages (3x4, 3x4+1, 3x4+3,
// 6x2, cabrera-3x4; seeds 1–2) is 14.8 dB with 7 swaps (8.2 dB and 10
// swaps before), the 3x4+3 and 6x2 pages still lose or swap complexes:
// see doc.go, Known limits.
//
// Seed 3 returned aVL matching V2's truth better than its own (its path
// took the QRS of a neighbouring row in columns where its own R wave
// stood); after separateRows no lead is swapped, measured 16.0 dB. The
// 6x2 page (seed 2) keeps every lead under its own name, measured 11.3 dB.
func TestOverlapFloor(t *testing.T) {
	for _, tc := range []struct {
		c     accuracy.Case
		floor float64
	}{
		{accuracy.Case{Condition: "overlap", Layout: "3x4", Seed: 2}, 16},
		{accuracy.Case{Condition: "overlap", Layout: "3x4", Seed: 3}, 14},
		{accuracy.Case{Condition: "overlap", Layout: "6x2", Seed: 2}, 13},
	} {
		t.Run(tc.c.Name(), func(t *testing.T) { checkPageFloor(t, tc.c, tc.floor) })
	}
}

// TestRealRecords prints open PhysioNet records (PTB Diagnostic
// patient001/s0010_re; LUDB record 1), digitises the pages through the
// whole front end and reports the SNR against the printed signals.
func TestRealRecords(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	type src struct {
		name, dataset, file string
		floor               float64
	}
	for _, s := range []src{
		{"ptb-s0010_re", "ptbdb", "s0010_re.hea", 15},
		{"ludb-1", "ludb", "1.hea", 15},
	} {
		t.Run(s.name, func(t *testing.T) {
			r := realRecord(t, s.dataset, s.file)
			page, err := render.Render(r, &render.Options{Layout: "3x4+1"})
			if err != nil {
				t.Fatalf("render: %v", err)
			}
			printed := accuracy.PrintedRecord(&page.Truth)
			// Upright pages: the orientation step of imageproc turned the
			// PTB page (no header text) upside down when this test was
			// written; trace extraction is what is measured here.
			res, pg, err := digitiseWith(page.Image, &imageproc.Options{NoOrient: true})
			if err != nil {
				t.Fatalf("digitise: %v", err)
			}
			if d := os.Getenv("TRACELIFT_TRACE_OVERLAY"); d != "" {
				drawOverlay(filepath.Join(d, s.name+".png"), pg.Upright(), res)
			}
			sc := trace.SNR(printed, res.Record, trace.Lenient)
			var v []float64
			for _, x := range sc.PerLead {
				v = append(v, math.Min(x, 60))
			}
			sort.Float64s(v)
			t.Logf("%s: median %.1f dB, p10 %.1f dB, strict median %.1f dB; %s", s.name, accuracy.Percentile(v, 50), accuracy.Percentile(v, 10),
				trace.SNR(printed, res.Record, trace.SNROptions{}).Median, fmtLeads(sc.PerLead))
			if sc.Median < s.floor {
				t.Errorf("median SNR %.1f dB < %.0f dB", sc.Median, s.floor)
			}
		})
	}
}

// realRecord reads the first 10 s of the twelve standard leads of an
// open record in the shared data (skipping when the dataset is absent),
// at 500 Hz.
func realRecord(t *testing.T, dataset, file string) ecg.Record {
	t.Helper()
	return readReal(t, dataset, file, false)
}

// realRecordRaw is realRecord in the record's digital units, one unit
// taken as 1 µV: LUDB's header gains are a per-lead range normalisation
// (the shared data's README, "LUDB calibration caveat"), and only the raw
// units keep the leads' relative sizes and the limb-lead laws.
func realRecordRaw(t *testing.T, dataset, file string) ecg.Record {
	t.Helper()
	return readReal(t, dataset, file, true)
}

func readReal(t *testing.T, dataset, file string, raw bool) ecg.Record {
	t.Helper()
	dir := refdata.Dir(t, dataset)
	rec, hdr, err := wfdb.ReadRecord(filepath.Join(dir, file))
	if err != nil {
		t.Fatalf("read: %v", err)
	}
	var r ecg.Record
	for _, l := range ecg.Standard12 {
		if sig := rec.Signal(l); sig != nil {
			c := sig.Clone()
			if n := int(10 * c.SampleRate); len(c.Samples) > n {
				c.Samples = c.Samples[:n]
			}
			if raw {
				k := math.NaN()
				for _, sp := range hdr.Signals {
					if pl, err := ecg.ParseLead(sp.Description); err == nil && pl == l {
						k = sp.Gain / 1000
					}
				}
				if math.IsNaN(k) {
					t.Fatalf("%s: no header line for lead %v", file, l)
				}
				for i := range c.Samples {
					c.Samples[i] *= k
				}
			}
			r.Set(c)
		}
	}
	return ecg.ResampleRecord(r, 500)
}

// TestRealUpsideDownGuess prints LUDB record 15 (raw units) 3x4+3 at
// 20 mm/mV. Its QRS complexes point mostly down and its V4 swings off the
// sheet, so the front end's ink balance turns the page over; one row's
// tangle of strokes then passed for a 4 mm pulse at its left end, the
// page was not tried turned back (that needed no pulse at all), and it
// was traced upside down as 6 × 2 at 4 mm/mV (median −13.7 dB). Turned
// back when that finds more than twice as many pulses: 3x4+3 at
// 20 mm/mV, 18.3 dB.
func TestRealUpsideDownGuess(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	res, page := printAndRead(t, realRecordRaw(t, "ludb", "15.hea"), &render.Options{Layout: "3x4+3", GainMMPerMV: 20}, nil)
	if g := res.Record.Meta.GainMMPerMV; g != 20 || res.Layout.Name != "3x4+3" {
		t.Fatalf("layout %q at %g mm/mV, want 3x4+3 at 20", res.Layout.Name, g)
	}
	sc := trace.SNR(accuracy.PrintedRecord(&page.Truth), res.Record, trace.Lenient)
	t.Logf("median %.1f dB; %s", sc.Median, fmtLeads(sc.PerLead))
	// Floor below the measured 18.3 dB; the real records' floor elsewhere
	// in this file is 15 dB.
	if sc.Median < 15 {
		t.Errorf("median SNR %.1f dB < 15 dB", sc.Median)
	}
}

// erasePulses paints the calibration pulses of a clean page white, with
// the baseline printed before and after them and a millimetre above and
// below: a page printed without pulses.
func erasePulses(t *testing.T, page *render.Page) {
	t.Helper()
	img, ok := page.Image.(draw.Image)
	if !ok {
		t.Fatalf("page image %T is not drawable", page.Image)
	}
	kx, ky := page.Truth.PxPerMMX, page.Truth.PxPerMMY
	for _, p := range page.Truth.Pulses {
		for y := int((p.BaselineYMM - p.HeightMM - 1) * ky); y <= int((p.BaselineYMM+1)*ky); y++ {
			for x := int((p.X0MM - 2.5) * kx); x <= int((p.X1MM+1.9)*kx); x++ {
				img.Set(x, y, color.White)
			}
		}
	}
}

// TestNoPulseOrientation prints pages without calibration pulses (painted
// out, with their baselines). The front end turned LUDB records 21
// (3 × 4) and 45 (6 × 2), whose complexes point mostly down, upside down,
// and with no pulse to say otherwise they were traced so, every lead
// reversed (−0.5 and −1.7 dB, read as Cabrera layouts); the beats'
// direction in time (the larger wave after each QRS complex,
// beatAsymmetry) turns them back (21.1 and 18.4 dB). Synthetic record 14
// printed 6 × 2 is upright and has the weakest asymmetry of 120
// synthetic pages (mean −0.03): it is left alone (24.1 dB). Without
// pulses the gain is the assumed 10 mm/mV: on synthetic record 5 printed
// 12 × 1 a complex with a flat top was read as a 2.4 mm pulse on one row
// and the page traced at 2.4 mm/mV (−11.3 dB; dropOddPulses), and on
// LUDB record 24 printed 12 × 1 the grid stage read a 3.7 mm "pulse" on
// no trace row (−4.5 dB).
func TestNoPulseOrientation(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, tc := range []struct {
		name, layout string
		rec          func(t *testing.T) ecg.Record
	}{
		{"ludb 21", "3x4", func(t *testing.T) ecg.Record { return realRecordRaw(t, "ludb", "21.hea") }},
		{"ludb 45", "6x2", func(t *testing.T) ecg.Record { return realRecordRaw(t, "ludb", "45.hea") }},
		{"synthetic 14", "6x2", func(t *testing.T) ecg.Record { return corpusRecord(t, 14) }},
		{"synthetic 5", "12x1", func(t *testing.T) ecg.Record { return corpusRecord(t, 5) }},
		{"ludb 24", "12x1", func(t *testing.T) ecg.Record { return realRecordRaw(t, "ludb", "24.hea") }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			res, page := printAndRead(t, tc.rec(t), &render.Options{Layout: tc.layout}, func(p *render.Page) { erasePulses(t, p) })
			if res.Layout.Name != tc.layout {
				t.Errorf("layout %q, want %s", res.Layout.Name, tc.layout)
			}
			if g := res.Record.Meta.GainMMPerMV; g != 10 {
				t.Errorf("gain %g mm/mV, want the assumed 10", g)
			}
			sc := trace.SNR(accuracy.PrintedRecord(&page.Truth), res.Record, trace.Lenient)
			t.Logf("median %.1f dB; %s", sc.Median, fmtLeads(sc.PerLead))
			// Upside down or at a wrong gain, every lead reads below
			// 0 dB; read right, these pages read 14–24 dB.
			if sc.Median < 10 {
				t.Errorf("median SNR %.1f dB < 10 dB (traced upside down?)", sc.Median)
			}
		})
	}
}

// TestRealCabrera prints LUDB record 5 (raw units, so that the limb-lead
// laws hold) in the Cabrera order at 10 mm/mV. Its leads I and aVF are
// small, and they are what the standard order's residual measures on a
// Cabrera page: 38.5 µV against Cabrera's 4.6, under the 50 µV the
// switch to Cabrera needed, so the page was read in the standard order
// with four limb leads swapped (14.2 dB). A fit five times better than an
// order off by more than 20 µV now switches too (18.7 dB); the synthetic
// 3 × 4 pages (192, records 1–6) and 202 other LUDB pages of the 3 × 4
// family (raw units and header gains) are unchanged.
func TestRealCabrera(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	r := realRecordRaw(t, "ludb", "5.hea")
	res, page := printAndRead(t, r, &render.Options{Layout: "cabrera-3x4"}, nil)
	if res.Layout.Name != "cabrera-3x4" {
		t.Errorf("layout %q, want cabrera-3x4", res.Layout.Name)
	}
	var p accuracy.Page
	pr, full := accuracy.PrintedRecord(&page.Truth), r
	accuracy.ScoreSignals(&p, &pr, &full, &res.Record)
	if p.Swaps != 0 {
		t.Errorf("%d leads swapped", p.Swaps)
	}
}

// TestRealStackedGain prints LUDB records in their raw units 12 × 1 at
// 20 mm/mV, where the rows are 15 mm apart and the 20 mm calibration
// pulses stack into a ladder at the rows' left ends, and requires the
// gain read from that ladder (20 mm/mV) and the layout. Before, on these
// clean pages: record 1 read at the assumed 10 mm/mV (four rows'
// baselines, their ink profiles' peaks, sat 1.3–1.7 mm below their
// pulses' feet, and their tops were looked for within 0.5 mm of 20 mm
// above the baselines: 8 of 12 found, too few); record 24 at 10 mm/mV
// as 6 × 2; record 44 at 5 mm/mV as 3x4+1. The ladder is now read from
// each row's foot (stackFeet) with a tolerance proportional to the
// height tried (fitStack). Over the 29 LUDB records printed so with the
// scan preset, the gain was right on 14 pages, now on all 29.
func TestRealStackedGain(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, file := range []string{"1.hea", "24.hea", "44.hea", "105.hea", "114.hea"} {
		t.Run(file, func(t *testing.T) {
			res, _ := printAndRead(t, realRecordRaw(t, "ludb", file), &render.Options{Layout: "12x1", GainMMPerMV: 20}, nil)
			if g := res.Record.Meta.GainMMPerMV; g != 20 {
				t.Errorf("gain %g mm/mV, want 20", g)
			}
			if res.Layout.Name != "12x1" || len(res.Record.Signals) != 12 {
				t.Errorf("layout %q with %d leads, want 12x1 with 12", res.Layout.Name, len(res.Record.Signals))
			}
		})
	}
}

// TestRealRecordDrift prints LUDB records at 20 mm/mV, where their
// baseline wander takes the trace several millimetres off its line, and
// requires every row to be found (the layout with its twelve leads) and
// the median SNR above the real records' floor (15 dB). Before:
//
//   - record 4, 3 × 4: lead II drifts off its line over its first
//     centimetres, so its stretch of ink (read within 3 mm of the line)
//     started 12 mm after its pulse, the pulse did not attach, the row
//     was dropped and the page read as one lead of rhythm
//     (attachPulseGapMM);
//   - record 114, 6 × 2, and record 38, Cabrera: a row's stretch started
//     37 mm after its pulse; read within 6 mm of a line that has a pulse
//     (pulseBandMM), it spans the page;
//   - record 4, 12 × 1: the stacked pulses (20 mm tall, rows 15 mm
//     apart) were read on 4 of the 12 rows, and the rows between them
//     were taken for tangles of complexes (evenRows).
func TestRealRecordDrift(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, tc := range []struct{ file, layout string }{
		{"4.hea", "3x4"}, {"114.hea", "6x2"}, {"38.hea", "cabrera-3x4"}, {"4.hea", "12x1"},
	} {
		t.Run(tc.file+"_"+tc.layout, func(t *testing.T) {
			r := realRecord(t, "ludb", tc.file)
			page, err := render.Render(r, &render.Options{Layout: tc.layout, GainMMPerMV: 20})
			if err != nil {
				t.Fatalf("render: %v", err)
			}
			res, _, err := digitise(page.Image)
			if res == nil {
				t.Fatalf("digitise: %v", err)
			}
			if res.Layout.Name != tc.layout || len(res.Record.Signals) != 12 {
				t.Errorf("layout %q with %d leads (%v), want %s with 12", res.Layout.Name, len(res.Record.Signals), err, tc.layout)
			}
			printed := accuracy.PrintedRecord(&page.Truth)
			sc := trace.SNR(printed, res.Record, trace.Lenient)
			t.Logf("ludb %s %s at 20 mm/mV: median %.1f dB; %s", tc.file, tc.layout, sc.Median, fmtLeads(sc.PerLead))
			if sc.Median < 15 {
				t.Errorf("median SNR %.1f dB < 15 dB", sc.Median)
			}
		})
	}
}

// TestLimbIdentityFloors digitises pages on which limb leads printed at
// the same time lost their QRS complexes to merged strokes, and asserts
// per-lead floors (PhysioNet/CinC Challenge 2024 SNR, standards.md §7,
// lenient variant). On the clean 12 × 1 page of seed 2, aVR's deep S wave
// runs into aVL's tall R wave: aVR read 8.1 dB and aVL 6.7 dB while I, II,
// III and aVF read 28–30 dB; re-read where they break the Einthoven and
// Goldberger identities the other limb leads agree on (guideLimb), 29.1
// and 27.6 dB. On the overlap 6 × 2 page of seed 2 (20 mm/mV), aVR and
// aVL went from 2.9 and 1.9 dB to 18.8 and 18.4 dB.
func TestLimbIdentityFloors(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, tc := range []struct {
		c     accuracy.Case
		floor map[ecg.Lead]float64
	}{
		{accuracy.Case{Condition: "clean", Layout: "12x1", Seed: 2}, map[ecg.Lead]float64{ecg.LeadAVR: 25, ecg.LeadAVL: 24, ecg.LeadI: 26}},
		{accuracy.Case{Condition: "overlap", Layout: "6x2", Seed: 2}, map[ecg.Lead]float64{ecg.LeadAVR: 16, ecg.LeadAVL: 16, ecg.LeadI: 17}},
	} {
		t.Run(tc.c.Name(), func(t *testing.T) { requireLeadFloors(t, tc.c, tc.floor) })
	}
}

// corpusRecord is the synthetic corpus's record of seed (normal heights).
func corpusRecord(t *testing.T, seed uint64) ecg.Record {
	t.Helper()
	r, err := render.CorpusRecord(seed, false)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// printAndRead prints r with o, applies edit to the page (nil: none) and
// digitises it; it fails the test when nothing could be read.
func printAndRead(t *testing.T, r ecg.Record, o *render.Options, edit func(*render.Page)) (*trace.Result, *render.Page) {
	t.Helper()
	page, err := render.Render(r, o)
	if err != nil {
		t.Fatalf("render: %v", err)
	}
	if edit != nil {
		edit(page)
	}
	res, _, err := digitise(page.Image)
	if res == nil {
		t.Fatalf("digitise: %v", err)
	}
	return res, page
}
