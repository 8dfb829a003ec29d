package trace

import (
	"errors"
	"image"
	"math"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/render"
)

func TestParseLayoutStandard(t *testing.T) {
	// Arrangements from standards.md §1.2 (common practice): 3 × 4 rows
	// I/aVR/V1/V4, II/aVL/V2/V5, III/aVF/V3/V6 over consecutive 2.5 s
	// windows; 6 × 2 with 5 s columns; Cabrera aVL, I, −aVR, II, aVF, III.
	tests := []struct {
		name     string
		rows     int
		dur      float64
		row, col int
		lead     ecg.Lead
		neg      bool
		t0, t1   float64
	}{
		{"3x4", 3, 10, 0, 1, ecg.LeadAVR, false, 2.5, 5},
		{"3x4", 3, 10, 2, 3, ecg.LeadV6, false, 7.5, 10},
		{"3x4+1", 4, 10, 3, 0, ecg.LeadII, false, 0, 10},
		{"3x4+3", 6, 10, 4, 0, ecg.LeadV1, false, 0, 10},
		{"6x2", 6, 10, 5, 1, ecg.LeadV6, false, 5, 10},
		{"12x1", 12, 10, 11, 0, ecg.LeadV6, false, 0, 10},
		{"cabrera-3x4", 3, 10, 2, 0, ecg.LeadAVR, true, 0, 2.5},
		{"cabrera-3x4", 3, 10, 0, 1, ecg.LeadII, false, 2.5, 5},
		{"rhythm", 1, 10, 0, 0, ecg.LeadII, false, 0, 10},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			l, err := ParseLayout(tc.name)
			if err != nil {
				t.Fatal(err)
			}
			if len(l.Rows) != tc.rows || l.DurationS() != tc.dur {
				t.Fatalf("rows %d dur %g, want %d %g", len(l.Rows), l.DurationS(), tc.rows, tc.dur)
			}
			c := l.Rows[tc.row].Cells[tc.col]
			if c.Lead != tc.lead || c.Negated != tc.neg || c.T0S != tc.t0 || c.T1S != tc.t1 {
				t.Errorf("cell (%d,%d) = %+v, want %v neg=%v %g–%g s", tc.row, tc.col, c, tc.lead, tc.neg, tc.t0, tc.t1)
			}
		})
	}
}

func TestParseLayoutDescription(t *testing.T) {
	l, err := ParseLayout("rows=4;cols=4;sec=2.5;cells=I,aVR,V1,V4/II,aVL,V2,V5/III,aVF,V3,V6/II*")
	if err != nil {
		t.Fatal(err)
	}
	if l.Name != "custom" || len(l.Rows) != 4 || !l.Rows[3].Rhythm || l.Rows[3].Cells[0].T1S != 10 {
		t.Fatalf("got %+v", l)
	}
	// A 30 s rhythm of II over three rows.
	l, err = ParseLayout("sec=10;cells=II/II~/II~")
	if err != nil {
		t.Fatal(err)
	}
	if got := l.Rows[2].Cells[0]; got.T0S != 20 || got.T1S != 30 {
		t.Errorf("third row window %g–%g, want 20–30", got.T0S, got.T1S)
	}
	// String renders a description that parses back to the same cells.
	std, _ := ParseLayout("cabrera-3x4")
	back, err := ParseLayout(std.String())
	if err != nil {
		t.Fatalf("%q: %v", std.String(), err)
	}
	for r := range std.Rows {
		for c := range std.Rows[r].Cells {
			if std.Rows[r].Cells[c] != back.Rows[r].Cells[c] {
				t.Errorf("round trip cell (%d,%d): %+v vs %+v", r, c, std.Rows[r].Cells[c], back.Rows[r].Cells[c])
			}
		}
	}
}

func TestParseLayoutErrors(t *testing.T) {
	for _, s := range []string{
		"", "4x3", "sec=0;cells=I", "sec=x;cells=I", "cells=I,Q9", "cells=I,II*",
		"rows=2;cells=I", "cols=1;cells=I,II", "colour=red;cells=I", "sec=2.5",
		// Longer than a page can hold (limits in layout.go): 64 columns
		// of an hour each, 601 s in one cell, 11 × 60 s continued rows,
		// 145 cells.
		"sec=3600;cols=64;cells=II*", "sec=601;cells=II", "sec=60;cells=II/II~/II~/II~/II~/II~/II~/II~/II~/II~/II~",
		"sec=1;cells=" + strings.Repeat("I,", 144) + "I",
	} {
		if _, err := ParseLayout(s); err == nil {
			t.Errorf("ParseLayout(%q): want an error", s)
		}
	}
}

func TestParseLayoutSizeLimit(t *testing.T) {
	// The largest accepted: 600 s of lead II over ten rows.
	l, err := ParseLayout("sec=60;cells=II/II~/II~/II~/II~/II~/II~/II~/II~/II~")
	if err != nil {
		t.Fatalf("600 s rhythm: %v", err)
	}
	if d := l.DurationS(); d != 600 {
		t.Errorf("duration %g s, want 600", d)
	}
	if _, err := ParseLayout("sec=3600;cols=64;cells=II*"); err == nil || !strings.Contains(err.Error(), "fit on a page") {
		t.Errorf("hour-long columns: err %v, want a clear size error", err)
	}
	// Extract applies the same bounds to a layout built in code and to
	// the output rate, before any work.
	ink := naiveInk(renderBlank())
	big := RhythmLayout(ecg.LeadII, 61, 10)
	if _, err := Extract(ink, testCal(11.8), nil, &Options{Layout: big}); !errors.Is(err, ecg.ErrUnreadable) {
		t.Errorf("610 s layout: err %v, want ErrUnreadable", err)
	}
	if _, err := Extract(ink, testCal(11.8), nil, &Options{SampleRate: 1e9}); !errors.Is(err, ecg.ErrUnreadable) {
		t.Errorf("1 GHz output: err %v, want ErrUnreadable", err)
	}
}

func TestSNR(t *testing.T) {
	const fs = 500.0
	n := 5000
	sine := func(amp, off, shift float64) ecg.Signal {
		s := ecg.Signal{Lead: ecg.LeadII, SampleRate: fs, Samples: make([]float64, n)}
		for i := range s.Samples {
			t := float64(i)/fs - shift
			s.Samples[i] = amp*math.Sin(2*math.Pi*1.3*t) + off
		}
		return s
	}
	truth := ecg.Record{Signals: []ecg.Signal{sine(1, 0, 0)}}
	// Estimate = truth + 0.1 mV offset: strict SNR = 10·log10((A²/2)/c²)
	// = 10·log10(0.5/0.01) = 16.99 dB; the lenient one removes the offset.
	est := ecg.Record{Signals: []ecg.Signal{sine(1, 0.1, 0)}}
	if got := SNR(truth, est, SNROptions{}).PerLead[ecg.LeadII]; math.Abs(got-16.99) > 0.05 {
		t.Errorf("strict SNR = %.3f dB, want 16.99", got)
	}
	if got := SNR(truth, est, Lenient).PerLead[ecg.LeadII]; got < 60 {
		t.Errorf("lenient SNR with offset = %.1f dB, want ≥ 60", got)
	}
	// A missing lead counts as zero: 0 dB.
	if got := SNR(truth, ecg.Record{}, SNROptions{}).PerLead[ecg.LeadII]; got != 0 {
		t.Errorf("missing lead SNR = %g, want 0", got)
	}
	// A 20 ms delay is found by the lenient search within ±60 ms.
	late := ecg.Record{Signals: []ecg.Signal{sine(1, 0, 0.020)}}
	sc := SNR(truth, late, Lenient)
	if math.Abs(sc.ShiftS-0.020) > 1e-9 || sc.PerLead[ecg.LeadII] < 40 {
		t.Errorf("shift %.4f s SNR %.1f dB, want 0.020 s and ≥ 40 dB", sc.ShiftS, sc.PerLead[ecg.LeadII])
	}
	// NaN in the truth marks unprinted time: those samples are ignored.
	tr := truth.Clone()
	for i := 0; i < n/2; i++ {
		tr.Signals[0].Samples[i] = math.NaN()
	}
	half := est.Clone()
	for i := n / 2; i < n; i++ {
		half.Signals[0].Samples[i] = math.NaN()
	}
	if got := SNR(tr, half, SNROptions{}).PerLead[ecg.LeadII]; math.Abs(got) > 1e-9 {
		t.Errorf("estimate only where the truth is unprinted: %g dB, want 0", got)
	}
}

func TestFillPitchGaps(t *testing.T) {
	// Baselines at a 15 mm pitch (12 rows on A4 at 8 px/mm ≈ 120 px)
	// with the scatter of profile peaks on a fax (±8 px); one row lost.
	ys := []float64{373, 493, 608, 734, 841, 1084, 1190, 1311, 1423, 1543, 1658}
	var rows []rowInfo
	for _, y := range ys {
		rows = append(rows, rowInfo{baseY: y, hasPulse: true, zeroY: y})
	}
	got := fillPitchGaps(rows)
	if len(got) != 12 {
		t.Fatalf("%d rows, want 12", len(got))
	}
	if ph := got[5]; ph.hasPulse || !math.IsNaN(ph.zeroY) || math.Abs(ph.baseY-962.5) > 1 {
		t.Errorf("placeholder %+v, want a pulse-less row at y 962.5", ph)
	}
	// A gap of 1.5 pitches is not a lost row.
	rows = []rowInfo{{baseY: 100}, {baseY: 220}, {baseY: 340}, {baseY: 520}}
	if got := fillPitchGaps(rows); len(got) != 4 {
		t.Errorf("1.5-pitch gap: %d rows, want 4", len(got))
	}
}

func TestRowEcho(t *testing.T) {
	// Four rows 20 mm apart at 10 px/mm; rows 0 and 2 print the same
	// curve, rows 1 and 3 others (a sine of another period and its
	// negative).
	const px = 10.0
	ink := image.NewGray(image.Rect(0, 0, 2600, 900))
	curves := []func(x float64) float64{
		func(x float64) float64 { return 40 * math.Sin(x/37) * math.Sin(x/211) },
		func(x float64) float64 { return 40 * math.Sin(x/53) },
		func(x float64) float64 { return 40 * math.Sin(x/37) * math.Sin(x/211) },
		func(x float64) float64 { return -40 * math.Sin(x/37) * math.Sin(x/211) },
	}
	var rows []rowInfo
	for i, f := range curves {
		base := 150 + 200*float64(i)
		for x := 100; x < 2600; x++ {
			y := int(math.Round(base + f(float64(x))))
			for d := -1; d <= 1; d++ {
				ink.Pix[(y+d)*ink.Stride+x] = 255
			}
		}
		rows = append(rows, rowInfo{baseY: base, traceX0: 100, x1: 2600})
	}
	if e := rowEcho(ink, rows, 2, 0, 0, 0.25, px, px); e < 0.99 {
		t.Errorf("same curve: echo %.2f, want ≈ 1", e)
	}
	if e := rowEcho(ink, rows, 1, 0, 0, 0.25, px, px); e > 0.5 {
		t.Errorf("different curves: echo %.2f, want low", e)
	}
	if e := rowEcho(ink, rows, 3, 0, 0, 0.25, px, px); e > -0.9 {
		t.Errorf("inverted curve: echo %.2f, want ≈ −1", e)
	}
	// No ink in the window: no echo.
	empty := image.NewGray(ink.Rect)
	if e := rowEcho(empty, rows, 2, 0, 0, 0.25, px, px); !math.IsNaN(e) {
		t.Errorf("empty page: echo %.2f, want NaN", e)
	}
}

func TestNameRhythmStrips(t *testing.T) {
	// A clean 3 × 4 + 3 page (rhythm strips II, V1, V5 below the grid,
	// standards.md §1.2) at 150 dpi, ink and calibration from the truth.
	rec := synthRecord(t, 3)
	pg := renderPage(t, rec, render.Options{Layout: "3x4+3", DPI: 150})
	ink := naiveInk(pg.img)
	cal := truthCal(pg.truth)
	rows := findRows(ink, cal, truthPulses(pg.truth))
	for i := range rows {
		up, down := bandAround(rows, i, cal.PxPerMMY.V)
		findTicks(ink, &rows[i], cal, up, down)
	}
	if len(rows) != 6 {
		t.Fatalf("%d rows, want 6", len(rows))
	}
	lay, got := detectLayout(ink, rows, cal)
	if lay.Name != "3x4+3" || len(got) != 6 {
		t.Fatalf("layout %s with %d rows, want 3x4+3", lay.Name, len(got))
	}
	strips := func(l *Layout) []ecg.Lead {
		var out []ecg.Lead
		for _, r := range l.Rows[3:] {
			out = append(out, r.Cells[0].Lead)
		}
		return out
	}
	if s := strips(lay); s[0] != ecg.LeadII || s[1] != ecg.LeadV1 || s[2] != ecg.LeadV5 {
		t.Errorf("strips %v, want II V1 V5", s)
	}
	// Strips assumed to be other leads are named by the cell they repeat.
	wrong, _ := StandardLayout("3x4+3")
	wrong.Rows[3].Cells[0].Lead = ecg.LeadAVR
	wrong.Rows[5].Cells[0].Lead = ecg.LeadIII
	if !nameRhythmStrips(ink, rows, wrong, cal.PxPerMMX.V, cal.PxPerMMY.V) {
		t.Error("wrongly named strips were not renamed")
	}
	if s := strips(wrong); s[0] != ecg.LeadII || s[1] != ecg.LeadV1 || s[2] != ecg.LeadV5 {
		t.Errorf("renamed strips %v, want II V1 V5", s)
	}
	// The last strip lost: five rows read as a 3 × 4 grid with strips
	// assumed to be lead II (detectLayout's reading of an unusual row
	// count with separators) are named II and V1 by their echoes, not II
	// twice.
	lay5, _ := ParseLayout("sec=2.5;cells=I,aVR,V1,V4/II,aVL,V2,V5/III,aVF,V3,V6/II*/II*")
	nameRhythmStrips(ink, rows[:5], lay5, cal.PxPerMMX.V, cal.PxPerMMY.V)
	if s := strips(lay5); s[0] != ecg.LeadII || s[1] != ecg.LeadV1 {
		t.Errorf("5 rows: strips %v, want II V1", s)
	}
}
