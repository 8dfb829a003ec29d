package trace_test

import (
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"tracelift/accuracy"
	"tracelift/ecg"
	"tracelift/grid"
	"tracelift/imageproc"
	"tracelift/trace"
)

// digitise runs the real front end (imageproc.Prepare, grid.Detect) and
// Extract on a rendered page.
func digitise(img image.Image) (*trace.Result, *imageproc.Page, error) {
	return digitiseWith(img, nil)
}

func digitiseWith(img image.Image, po *imageproc.Options) (*trace.Result, *imageproc.Page, error) {
	pg, err := imageproc.Prepare(img, po)
	if err != nil {
		return nil, nil, fmt.Errorf("prepare: %w", err)
	}
	gr, err := grid.Detect(pg, nil)
	if err != nil {
		return nil, pg, fmt.Errorf("grid: %w", err)
	}
	res, err := trace.Extract(pg.Ink, gr.Calibration, gr.Pulses, &trace.Options{Bilevel: pg.Bilevel})
	return res, pg, err
}

type caseScore struct {
	name            string
	lenient, strict trace.SNRScore
	printed, found  int
	swaps           int
	layout          string
	err             error
	quality         map[ecg.Lead]float64 // the digitiser's own scores (trace.Result)
	crossed         map[ecg.Lead]float64
}

// scoreCase renders one corpus page, digitises it and scores it against
// the printed truth.
func scoreCase(t testing.TB, c accuracy.Case, overlay string) caseScore {
	return scoreCaseWith(t, c, overlay, false)
}

// scoreCaseWith is scoreCase; with withDPI the front end is given the
// resolution the page's file would carry (render.Truth.Resolution), as
// the pipeline passes it from a PNG's pHYs chunk.
func scoreCaseWith(t testing.TB, c accuracy.Case, overlay string, withDPI bool) caseScore {
	t.Helper()
	full, page, err := accuracy.RenderCase(c)
	if err != nil {
		t.Fatalf("%s: render: %v", c.Name(), err)
	}
	printed := accuracy.PrintedRecord(&page.Truth)
	cs := caseScore{name: c.Name()}
	var po *imageproc.Options
	if dx, dy, ok := page.Truth.Resolution(); withDPI && ok {
		po = &imageproc.Options{DPIX: dx, DPIY: dy}
	}
	res, pg, err := digitiseWith(page.Image, po)
	cs.err = err
	for _, s := range printed.Signals {
		if _, _, ok := s.ValidSpan(); ok {
			cs.printed++
		}
	}
	if res == nil {
		return cs
	}
	cs.layout = res.Layout.Name
	cs.quality, cs.crossed = res.Quality, res.Crossed
	cs.lenient = trace.SNR(printed, res.Record, trace.Lenient)
	cs.strict = trace.SNR(printed, res.Record, trace.SNROptions{})
	for _, s := range printed.Signals {
		if e := res.Record.Signal(s.Lead); e != nil {
			if _, _, ok := e.ValidSpan(); ok {
				cs.found++
			}
			if w := accuracy.SwappedWith(&full, e); w != ecg.LeadUnknown && w != s.Lead {
				cs.swaps++
			}
		}
	}
	if overlay != "" && pg != nil {
		drawOverlay(filepath.Join(overlay, c.Name()+".png"), pg.Upright(), res)
	}
	return cs
}

func drawOverlay(path string, img *image.NRGBA, res *trace.Result) {
	out := image.NewNRGBA(img.Rect)
	draw.Draw(out, out.Rect, img, img.Rect.Min, draw.Src)
	green := color.NRGBA{0, 190, 0, 255}
	for _, p := range res.Panels {
		for _, q := range p.Path {
			out.Set(int(math.Round(q.X)), int(math.Round(q.Y)), green)
		}
		for x := p.Bounds.Min.X; x < p.Bounds.Max.X; x += 3 {
			out.Set(x, int(p.ZeroY), color.NRGBA{255, 0, 255, 255})
		}
	}
	f, err := os.Create(path)
	if err != nil {
		return
	}
	defer f.Close()
	png.Encode(f, out)
}

// TestCorpusTable prints the per-condition SNR table over a corpus and
// fails on every condition short of the issue's targets
// (checkCorpusTargets); it is slow, so it runs only when
// TRACELIFT_TRACE_CORPUS gives the number of pages per condition.
func TestCorpusTable(t *testing.T) {
	nstr := os.Getenv("TRACELIFT_TRACE_CORPUS")
	if nstr == "" {
		t.Skip("set TRACELIFT_TRACE_CORPUS=n to score n pages per condition")
	}
	var n int
	fmt.Sscan(nstr, &n)
	conds := []string{"clean", "scan", "gray", "penmarks", "overlap", "fax", "photo", "lowres"}
	if c := os.Getenv("TRACELIFT_TRACE_CONDS"); c != "" {
		conds = strings.Split(c, ",")
	}
	overlay := os.Getenv("TRACELIFT_TRACE_OVERLAY")
	var lines []string
	for _, cond := range conds {
		var per []float64
		var strictMed []float64
		printed, found, swaps, errs := 0, 0, 0, 0
		for _, c := range accuracy.Cases([]string{cond}, nil, n, 1) {
			cs := scoreCase(t, c, overlay)
			for _, v := range cs.lenient.PerLead {
				per = append(per, math.Min(v, 60))
			}
			if cs.lenient.PerLead == nil {
				for i := 0; i < cs.printed; i++ {
					per = append(per, 0)
				}
			}
			strictMed = append(strictMed, cs.strict.Median)
			printed += cs.printed
			found += cs.found
			swaps += cs.swaps
			if cs.err != nil {
				errs++
			}
			t.Logf("%-28s layout %-14s lenient %5.1f strict %5.1f found %d/%d swaps %d err %v per-lead %s", cs.name, cs.layout, cs.lenient.Median, cs.strict.Median, cs.found, cs.printed, cs.swaps, cs.err, fmtLeads(cs.lenient.PerLead))
		}
		sort.Float64s(per)
		sort.Float64s(strictMed)
		lines = append(lines, fmt.Sprintf("| %-8s | %5.1f | %5.1f | %5.1f | %d/%d | %d | %d |", cond,
			accuracy.Percentile(per, 50), accuracy.Percentile(per, 10), accuracy.Median(strictMed), found, printed, swaps, errs))
		checkCorpusTargets(t, cond, accuracy.Percentile(per, 50), found, printed, swaps)
	}
	t.Logf("\n| condition | median dB | p10 dB | strict median dB | leads found | swaps | errors |\n%s", strings.Join(lines, "\n"))
}

// requireLeadFloors digitises corpus page c (given its file's resolution,
// as the pipeline passes it from a PNG) and requires every printed lead
// found, no lead swapped (accuracy.SwappedWith) and each lead of floors at
// or above its floor, dB (aligned SNR, standards.md §7).
func requireLeadFloors(t *testing.T, c accuracy.Case, floors map[ecg.Lead]float64) {
	t.Helper()
	cs := scoreCaseWith(t, c, "", true)
	if cs.err != nil {
		t.Fatalf("digitise: %v", cs.err)
	}
	if cs.found != cs.printed || cs.swaps != 0 {
		t.Errorf("found %d of %d leads, %d swaps", cs.found, cs.printed, cs.swaps)
	}
	for l, f := range floors {
		if v := cs.lenient.PerLead[l]; !(v >= f) {
			t.Errorf("%v: %.1f dB < %g dB", l, v, f)
		}
	}
	t.Logf("%s: %s", cs.name, fmtLeads(cs.lenient.PerLead))
}

func fmtLeads(m map[ecg.Lead]float64) string {
	var b strings.Builder
	for _, l := range ecg.Standard12 {
		if v, ok := m[l]; ok {
			fmt.Fprintf(&b, "%v:%.1f ", l, v)
		}
	}
	return b.String()
}

// issueTargetDB holds the per-condition median SNR targets of the trace
// extraction issue (aligned SNR, dB). The opt-in corpus scorers report
// every condition that falls short as an error, so a run shows at once
// which targets are unmet.
var issueTargetDB = map[string]float64{
	"clean": 25, "scan": 20, "gray": 18, "penmarks": 18, "overlap": 15, "fax": 12, "photo": 12,
}

// checkCorpusTargets reports a condition's shortfalls against the issue:
// the median target, ≥ 99 % of printed leads found, and no swaps.
func checkCorpusTargets(t *testing.T, cond string, median float64, found, printed, swaps int) {
	t.Helper()
	if want, ok := issueTargetDB[cond]; ok && median < want {
		t.Errorf("%s: median SNR %.1f dB, target ≥ %.0f dB", cond, median, want)
	}
	if printed > 0 && float64(found) < 0.99*float64(printed) {
		t.Errorf("%s: %d of %d printed leads found, target ≥ 99 %%", cond, found, printed)
	}
	if swaps > 0 {
		t.Errorf("%s: %d lead swaps, target none", cond, swaps)
	}
}
