package measure

import (
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"testing"

	"tracelift/ecg"
)

// wave is one annotated wave: onset, peak, offset (s; NaN when unmarked)
// and its peak symbol (p, N, t).
type wave struct {
	sym         string
	on, pk, off float64
}

// readWaves parses a delineation annotation file ('(' onset, peak symbol,
// ')' offset — LUDB and QT Database q1c conventions) into waves.
func readWaves(t testing.TB, path string, fs float64) []wave {
	t.Helper()
	anns := readAnnotations(t, path, fs)
	var out []wave
	nan := math.NaN()
	for i, a := range anns {
		s := a.Symbol
		if s != "p" && s != "N" && s != "t" && !isBeatSym(a.Code) {
			continue
		}
		w := wave{sym: s, on: nan, pk: a.Time, off: nan}
		if isBeatSym(a.Code) {
			w.sym = "N"
		}
		if i > 0 && anns[i-1].Symbol == "(" {
			w.on = anns[i-1].Time
		}
		if i+1 < len(anns) && anns[i+1].Symbol == ")" {
			w.off = anns[i+1].Time
		}
		out = append(out, w)
	}
	return out
}

func isBeatSym(code int) bool { return isBeat(code) }

// refIntervals are reference global intervals of one record: per beat,
// earliest onset and latest offset over the annotated leads (the CSE
// convention, standards.md §3–4.4), then the median over beats, in ms.
type refIntervals struct{ p, pr, qrs, qt float64 }

// globalRef combines per-lead wave lists into per-beat global boundaries
// and returns the median intervals.
func globalRef(leads [][]wave) refIntervals {
	// Beats: QRS peaks of all leads clustered within 80 ms.
	type beat struct {
		r                          float64
		qOn, qOff, pOn, pOff, tOff float64
	}
	var peaks []float64
	for _, ws := range leads {
		for _, w := range ws {
			if w.sym == "N" {
				peaks = append(peaks, w.pk)
			}
		}
	}
	sort.Float64s(peaks)
	var beats []beat
	nan := math.NaN()
	for _, p := range peaks {
		if len(beats) > 0 && p-beats[len(beats)-1].r < 0.08 {
			continue
		}
		beats = append(beats, beat{r: p, qOn: nan, qOff: nan, pOn: nan, pOff: nan, tOff: nan})
	}
	// skipNaN makes a two-argument min or max ignore a NaN argument.
	skipNaN := func(f func(a, b float64) float64) func(a, b float64) float64 {
		return func(a, b float64) float64 {
			if math.IsNaN(a) {
				return b
			}
			if math.IsNaN(b) {
				return a
			}
			return f(a, b)
		}
	}
	minN, maxN := skipNaN(math.Min), skipNaN(math.Max)
	for _, ws := range leads {
		for i, w := range ws {
			if w.sym != "N" {
				continue
			}
			k := -1
			for j := range beats {
				if math.Abs(beats[j].r-w.pk) < 0.1 {
					k = j
				}
			}
			if k < 0 {
				continue
			}
			b := &beats[k]
			b.qOn, b.qOff = minN(b.qOn, w.on), maxN(b.qOff, w.off)
			if i > 0 && ws[i-1].sym == "p" && w.pk-ws[i-1].pk < 0.45 {
				b.pOn, b.pOff = minN(b.pOn, ws[i-1].on), maxN(b.pOff, ws[i-1].off)
			}
			if i+1 < len(ws) && ws[i+1].sym == "t" && ws[i+1].pk-w.pk < 0.7 {
				b.tOff = maxN(b.tOff, ws[i+1].off)
			}
		}
	}
	var p, pr, qrs, qt []float64
	for _, b := range beats {
		if !math.IsNaN(b.qOn) && !math.IsNaN(b.qOff) {
			qrs = append(qrs, b.qOff-b.qOn)
			if !math.IsNaN(b.tOff) {
				qt = append(qt, b.tOff-b.qOn)
			}
			if !math.IsNaN(b.pOn) {
				pr = append(pr, b.qOn-b.pOn)
			}
		}
		if !math.IsNaN(b.pOn) && !math.IsNaN(b.pOff) {
			p = append(p, b.pOff-b.pOn)
		}
	}
	return refIntervals{1000 * median(p), 1000 * median(pr), 1000 * median(qrs), 1000 * median(qt)}
}

// diffStats accumulates measured − reference differences.
type diffStats struct {
	name string
	d    []float64
	// For P: records where the reference has a P wave / where we found
	// one too; records without a reference P / where we reported one.
	refP, foundP, noRefP, falseP int
}

func (s *diffStats) countP(meas Num, ref float64) {
	if math.IsNaN(ref) {
		s.noRefP++
		if meas.Valid() {
			s.falseP++
		}
		return
	}
	s.refP++
	if meas.Valid() {
		s.foundP++
	}
}

func (s *diffStats) add(meas Num, ref float64) {
	if meas.Valid() && !math.IsNaN(ref) {
		s.d = append(s.d, float64(meas)-ref)
	}
}

func (s *diffStats) meanSD() (float64, float64) { return meanSD(s.d) }

func (s *diffStats) String() string {
	m, sd := s.meanSD()
	out := fmt.Sprintf("%-4s n=%2d  mean %+6.1f ms  SD %5.1f ms", s.name, len(s.d), m, sd)
	if s.refP+s.noRefP > 0 {
		out += fmt.Sprintf("  (P found in %d of %d records with a reference P; reported in %d of %d without)", s.foundP, s.refP, s.falseP, s.noRefP)
	}
	return out
}

var ludbRecords = []int{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 15, 20, 21, 22, 24, 34, 35, 38, 44, 45, 52, 63, 70, 105, 108, 114}

var ludbLeads = []string{"i", "ii", "iii", "avr", "avl", "avf", "v1", "v2", "v3", "v4", "v5", "v6"}

// TestIntervalsLUDB compares global P duration, PR, QRS and QT with the
// LUDB cardiologists' per-lead delineation (Kalyakulina et al. 2020,
// PhysioNet ludb 1.0.1; 29 records), timing only (the LUDB gains are a
// per-lead range normalisation, not a calibration: data README). The
// tolerances of IEC 60601-2-25 for global intervals (mean/SD: P ±10/15,
// PR ±10/10, QRS ±6/10, QT ±25/30 ms; quoted from memory, standards.md §3)
// are the target; the asserted bounds are set just above what this
// implementation reaches, and the gap is reported.
func TestIntervalsLUDB(t *testing.T) {
	dir := refdataDir(t, "ludb")
	var recs []refRecord
	for _, n := range ludbRecords {
		rec, h := readWFDB(t, filepath.Join(dir, fmt.Sprint(n)+".hea"))
		var leads [][]wave
		for _, l := range ludbLeads {
			leads = append(leads, readWaves(t, filepath.Join(dir, fmt.Sprintf("%d.%s", n, l)), h.Fs))
		}
		recs = append(recs, refRecord{fmt.Sprintf("ludb %3d", n), rec, globalRef(leads)})
	}
	// P presence: found in all 22 records whose experts marked P;
	// reported in 1 of the 7 without (record 45, atrial and ventricular
	// pacing).
	checkIntervals(t, "LUDB", recs, ludbBounds, 22, 1)
}

// refRecord is one record with expert delineation: its label in the
// logs, the signals to measure and the reference global intervals.
type refRecord struct {
	label string
	rec   ecg.Record
	ref   refIntervals
}

// checkIntervals measures each record of set with the default options,
// logs each record's and the set's global intervals against the
// reference, checks the set's differences against bounds (checkBounds)
// and that a P wave is found in at least wantP records whose reference
// has one and reported in at most maxFalseP of those whose reference has
// none.
func checkIntervals(t *testing.T, set string, recs []refRecord, bounds map[string][2]float64, wantP, maxFalseP int) {
	t.Helper()
	st := intervalStats()
	for _, r := range recs {
		rep, err := Measure(r.rec, nil)
		if err != nil {
			t.Fatalf("%s: %v", r.label, err)
		}
		addIntervals(st, rep, r.ref)
		st[0].countP(rep.PMS, r.ref.p)
		logIntervals(t, r.label, rep, r.ref)
	}
	for _, s := range st {
		t.Logf("%s %s", set, s)
	}
	checkBounds(t, set, st, bounds)
	if st[0].foundP < wantP || st[0].falseP > maxFalseP {
		t.Errorf("%s P found in %d of %d (want %d), reported in %d of %d without (want ≤ %d)",
			set, st[0].foundP, st[0].refP, wantP, st[0].falseP, st[0].noRefP, maxFalseP)
	}
}

// Bounds asserted on |mean| and SD (ms). Measured on 2026-12-01 with the
// default parameters: LUDB P −5.0±10.5, PR +0.8±10.4, QRS −7.7±16.2,
// QT +5.4±21.8; QTDB P +14.2±9.4, PR +8.9±10.8, QRS −0.6±11.9,
// QT +1.2±21.9. Each bound is the measured value rounded up with at most
// 1.5 ms to spare; a change that needs wider bounds makes the
// delineation worse and must say so, re-measure and update these figures
// (the QTDB PR mean had drifted from +2.6 to +8.9 ms while its bound was
// widened 5 → 7 → 10 ms; it is now pinned at the measured value).
//
// Against the IEC 60601-2-25 targets for global intervals (from memory:
// |mean| / SD ≤ P 10/15, PR 10/10, QRS 6/10, QT 25/30 ms) P and QT are
// within them; PR is at the mean target but its SD (10.4 and 10.8 ms)
// just misses 10; QRS misses the SD (16.2 and 11.9 against 10) and on
// LUDB its mean (−7.7 against ±6). QTDB P is long (+14 ms: its onsets
// come early on the two-lead records) while LUDB P is short; a sweep of
// the P onset threshold (xiPOn 0.3–0.6) and of the lead-combination rank
// moves the two datasets in opposite directions (xiPOn 0.6 brings QTDB PR
// to +1.8 but LUDB PR to −5.4 and loses the P of one QTDB record), so the
// defaults stay. The delineation thresholds were chosen while looking at
// these same two datasets, so these are not independent validation
// figures.
var ludbBounds = map[string][2]float64{"P": {6, 12}, "PR": {2, 12}, "QRS": {9, 17}, "QT": {7, 23}}
var qtdbBounds = map[string][2]float64{"P": {15, 11}, "PR": {10, 12}, "QRS": {2, 13}, "QT": {3, 23}}

func checkBounds(t *testing.T, set string, st []*diffStats, b map[string][2]float64) {
	t.Helper()
	for _, s := range st {
		m, sd := s.meanSD()
		lim := b[s.name]
		if len(s.d) < 5 {
			t.Errorf("%s %s: only %d records measured", set, s.name, len(s.d))
			continue
		}
		if math.Abs(m) > lim[0] || sd > lim[1] {
			t.Errorf("%s %s: mean %+.1f SD %.1f ms, bound |mean| ≤ %.0f, SD ≤ %.0f", set, s.name, m, sd, lim[0], lim[1])
		}
	}
}

// TestIntervalsQTDB compares global intervals with the QT Database
// manual wave boundaries (annotator 1, second pass, .q1c; Laguna et al.
// 1997) on the annotated stretch of each of the ten records.
func TestIntervalsQTDB(t *testing.T) {
	dir := refdataDir(t, "qtdb")
	var recs []refRecord
	for _, name := range qtdbRecords {
		cut, ws := qtdbStretch(t, dir, name)
		recs = append(recs, refRecord{fmt.Sprintf("qtdb %-9s", name), cut, globalRef([][]wave{ws})})
	}
	checkIntervals(t, "QTDB", recs, qtdbBounds, 9, 0)
}

// intervalStats returns empty statistics of the four global intervals,
// in the order addIntervals fills: P, PR, QRS, QT.
func intervalStats() []*diffStats {
	return []*diffStats{{name: "P"}, {name: "PR"}, {name: "QRS"}, {name: "QT"}}
}

// addIntervals adds rep's global P, PR, QRS and QT against ref (ms) to
// st, which intervalStats made.
func addIntervals(st []*diffStats, rep *Report, ref refIntervals) {
	st[0].add(rep.PMS, ref.p)
	st[1].add(rep.PRMS, ref.pr)
	st[2].add(rep.QRSMS, ref.qrs)
	st[3].add(rep.QTMS, ref.qt)
}

// logIntervals logs one record's measured and reference global
// intervals under label.
func logIntervals(t *testing.T, label string, rep *Report, ref refIntervals) {
	t.Helper()
	t.Logf("%s: P %5.0f/%5.0f  PR %5.0f/%5.0f  QRS %5.0f/%5.0f  QT %5.0f/%5.0f (measured/reference ms)",
		label, float64(rep.PMS), ref.p, float64(rep.PRMS), ref.pr, float64(rep.QRSMS), ref.qrs, float64(rep.QTMS), ref.qt)
}

// qtdbStretch reads QT Database record name from dir with its manual
// wave marks (annotator 1, .q1c) and returns the part of the record from
// 3 s before the first marked wave peak to 3 s after the last.
func qtdbStretch(t *testing.T, dir, name string) (ecg.Record, []wave) {
	t.Helper()
	rec, h := readWFDB(t, filepath.Join(dir, name+".hea"))
	ws := readWaves(t, filepath.Join(dir, name+".q1c"), h.Fs)
	if len(ws) == 0 {
		t.Fatalf("%s.q1c: no waves", name)
	}
	return cutRecord(rec, ws[0].pk-3, ws[len(ws)-1].pk+3), ws
}

// cutRecord returns the part of rec between from and to seconds.
func cutRecord(rec ecg.Record, from, to float64) ecg.Record {
	var out ecg.Record
	for _, s := range rec.Signals {
		a := max(0, int((from-s.Start)*s.SampleRate))
		b := min(len(s.Samples), int((to-s.Start)*s.SampleRate))
		out.Signals = append(out.Signals, ecg.Signal{Lead: s.Lead, SampleRate: s.SampleRate, Start: s.Start + float64(a)/s.SampleRate, Samples: s.Samples[a:b]})
	}
	return out
}

// TestBeatTableQTDB compares the per-beat QRS and QT of the beat table
// with the QT Database manual marks (q1c) beat by beat, over all ten
// records: mean ± SD of measured − reference.
func TestBeatTableQTDB(t *testing.T) {
	dir := refdataDir(t, "qtdb")
	qrs, qt := &diffStats{name: "QRS"}, &diffStats{name: "QT"}
	for _, name := range qtdbRecords {
		cut, ws := qtdbStretch(t, dir, name)
		rep, err := Measure(cut, nil)
		if err != nil {
			t.Fatalf("qtdb %s: %v", name, err)
		}
		for i, w := range ws {
			if w.sym != "N" || math.IsNaN(w.on) {
				continue
			}
			var b *Beat
			for k := range rep.Beats {
				if math.Abs(rep.Beats[k].RS-w.pk) < 0.1 {
					b = &rep.Beats[k]
				}
			}
			if b == nil {
				continue
			}
			if !math.IsNaN(w.off) {
				qrs.add(b.QRSMS, 1000*(w.off-w.on))
			}
			if i+1 < len(ws) && ws[i+1].sym == "t" && !math.IsNaN(ws[i+1].off) {
				qt.add(b.QTMS, 1000*(ws[i+1].off-w.on))
			}
		}
	}
	t.Logf("QTDB per beat %s", qrs)
	t.Logf("QTDB per beat %s", qt)
	// Bounds just above the measured performance: QRS +2.7 ± 17.1 ms
	// (341 beats), QT +7.4 ± 31.3 ms (336 beats).
	checkBounds(t, "QTDB per beat", []*diffStats{qrs, qt}, map[string][2]float64{"QRS": {4, 19}, "QT": {9, 33}})
}

// TestLUDBAsPages measures each LUDB record as it would come off a 3 × 4
// page — every lead only in its 2.5 s column, with and without a full
// lead II rhythm strip — and compares the global intervals with the
// full-record measurement (and the differences' spread over records).
func TestLUDBAsPages(t *testing.T) {
	dir := refdataDir(t, "ludb")
	for _, rhythm := range []bool{true, false} {
		st := intervalStats()
		hr := &diffStats{name: "HR"}
		for _, n := range ludbRecords {
			rec, _ := readWFDB(t, filepath.Join(dir, fmt.Sprint(n)+".hea"))
			full, err := Measure(rec, nil)
			if err != nil {
				t.Fatal(err)
			}
			page, err := Measure(columnise(rec, rhythm), nil)
			if err != nil {
				t.Fatalf("ludb %d as a page: %v", n, err)
			}
			addIntervals(st, page, refIntervals{float64(full.PMS), float64(full.PRMS), float64(full.QRSMS), float64(full.QTMS)})
			hr.add(page.HeartRateBPM, float64(full.HeartRateBPM))
		}
		name := map[bool]string{true: "3x4+II", false: "3x4"}[rhythm]
		for _, s := range append(st, hr) {
			t.Logf("LUDB as %s page − full record: %s", name, s) // HR in bpm
		}
		// Bounds just above the measured differences (page − full):
		// with the rhythm strip P +0.3±9.1, PR −0.6±7.3, QRS +0.5±9.5,
		// QT −3.5±33.1, HR −0.5±3.4 bpm; 3 × 4 alone P −8.9±15.6,
		// PR +3.6±8.9, QRS +5.4±22.4, QT +18.7±40.4, HR −0.1±2.3 bpm.
		// QT from 2.5 s columns is the weak point (see the report).
		b := map[string][2]float64{"P": {1, 10}, "PR": {1, 8}, "QRS": {1, 10}, "QT": {4, 34}, "HR": {1, 4}}
		if !rhythm {
			b = map[string][2]float64{"P": {9, 16}, "PR": {4, 9}, "QRS": {6, 23}, "QT": {19, 41}, "HR": {1, 3}}
		}
		checkBounds(t, "LUDB "+name+" vs full", append(st, hr), b)
	}
}
