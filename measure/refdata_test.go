package measure

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"

	"tracelift/ecg"
	"tracelift/export/wfdb"
)

// readWFDB reads a PhysioNet record with every signal, giving signals
// without a lead name the leads X, Y, Z in turn (QT Database records label
// them "ECG1", "D3" and so on).
func readWFDB(t testing.TB, hea string) (ecg.Record, *wfdb.Header) {
	t.Helper()
	h, sig, err := wfdb.ReadSignals(hea)
	if err != nil {
		t.Fatalf("read %s: %v", hea, err)
	}
	var rec ecg.Record
	spare := []ecg.Lead{ecg.LeadX, ecg.LeadY, ecg.LeadZ}
	for i := range h.Signals {
		l := h.Signals[i].Lead()
		if !l.Valid() || rec.Signal(l) != nil {
			l, spare = spare[0], spare[1:]
		}
		rec.Signals = append(rec.Signals, ecg.Signal{Lead: l, SampleRate: h.Fs, Samples: sig[i]})
	}
	return rec, h
}

// isBeat reports whether an annotation code is a beat label (WFDB isqrs:
// codes 1–13, 25, 30, 31, 34, 35, 38, 41; WFDB library ecgmap.h).
func isBeat(code int) bool {
	switch {
	case code >= 1 && code <= 13, code == 25, code == 30, code == 31, code == 34, code == 35, code == 38, code == 41:
		return true
	}
	return false
}

// readAnnotations reads the WFDB annotation file at path (record at fs
// Hz), failing t when it cannot.
func readAnnotations(t testing.TB, path string, fs float64) []wfdb.Annotation {
	t.Helper()
	anns, err := wfdb.ReadAnnotations(path, fs)
	if err != nil {
		t.Fatalf("read %s: %v", path, err)
	}
	return anns
}

// refBeats returns the times (s) of the beat annotations in path.
func refBeats(t testing.TB, path string, fs float64) []float64 {
	t.Helper()
	anns := readAnnotations(t, path, fs)
	var out []float64
	for _, a := range anns {
		if isBeat(a.Code) {
			out = append(out, float64(a.Sample)/fs)
		}
	}
	return out
}

// score matches detections to reference beats the ANSI/AAMI EC57 way (a
// detection within 150 ms of a reference beat, one to one; WFDB bxb),
// counting only reference beats and detections in [from, to).
func score(ref, det []float64, from, to float64) (tp, fn, fp int) {
	const win = 0.150
	in := func(x float64) bool { return x >= from && x < to }
	used := make([]bool, len(det))
	j := 0
	for _, r := range ref {
		for j < len(det) && det[j] < r-win {
			j++
		}
		best, bd := -1, math.Inf(1)
		for k := j; k < len(det) && det[k] <= r+win; k++ {
			if !used[k] && math.Abs(det[k]-r) < bd {
				best, bd = k, math.Abs(det[k]-r)
			}
		}
		if best >= 0 {
			used[best] = true
			if in(r) {
				tp++
			}
		} else if in(r) {
			fn++
		}
	}
	for k, d := range det {
		if !used[k] && in(d) {
			fp++
		}
	}
	return tp, fn, fp
}

func beatTimes(b []ecg.Beat) []float64 {
	out := make([]float64, len(b))
	for i := range b {
		out[i] = b[i].R
	}
	return out
}

// TestDetectMITBIH100 scores beat detection on MIT-BIH Arrhythmia record
// 100 against its reference annotations (100.atr, PhysioNet mitdb 1.0.0),
// ANSI/AAMI EC57 style: 150 ms match window, first 5 minutes skipped
// (WFDB bxb default), target Se and +P ≥ 99.8 %.
func TestDetectMITBIH100(t *testing.T) {
	dir := refdataDir(t, "mitdb")
	rec, h := readWFDB(t, filepath.Join(dir, "100.hea"))
	ref := refBeats(t, filepath.Join(dir, "100.atr"), h.Fs)
	beats, err := DetectBeats(rec, nil)
	if err != nil {
		t.Fatal(err)
	}
	det := beatTimes(beats)
	end := float64(len(rec.Signals[0].Samples)) / h.Fs
	// Classes against the reference labels (2239 N, 33 A, 1 V).
	conf := classAgreement(t, filepath.Join(dir, "100.atr"), h.Fs, beats)
	if conf[[2]string{"A", "A"}] < 30 || conf[[2]string{"V", "V"}] < 1 || conf[[2]string{"N", "N"}] < 2228 {
		t.Errorf("mitdb 100 classes: want ≥ 30/33 A, 1/1 V, ≥ 2228/2239 N (99.5 %%), got %v", conf)
	}
	for _, c := range []struct {
		name string
		from float64
	}{{"whole record", 0}, {"from 5 min (EC57)", 300}} {
		tp, fn, fp := score(ref, det, c.from, end)
		se := float64(tp) / float64(tp+fn)
		pp := float64(tp) / float64(tp+fp)
		t.Logf("mitdb 100 %s: TP %d FN %d FP %d  Se %.3f %%  +P %.3f %%", c.name, tp, fn, fp, 100*se, 100*pp)
		if c.from == 300 && (se < 0.998 || pp < 0.998) {
			t.Errorf("mitdb 100 %s: Se %.4f +P %.4f, want ≥ 0.998 (task target)", c.name, se, pp)
		}
	}
}

var qtdbRecords = []string{"sel100", "sel102", "sel103", "sel117", "sel123", "sel16265", "sel30", "sel301", "sel803", "sele0104"}

// TestDetectQTDB scores beat detection on the ten QT Database records
// (PhysioNet qtdb 1.0.0) against the original databases' beat annotations
// (.atr), or, where there is none (sel30), the cardiologists' beat marks
// (.man) over the annotated stretch; EC57 150 ms window; target ≥ 99.5 %.
func TestDetectQTDB(t *testing.T) {
	dir := refdataDir(t, "qtdb")
	for _, name := range qtdbRecords {
		rec, h := readWFDB(t, filepath.Join(dir, name+".hea"))
		ann := name + ".atr"
		if _, err := os.Stat(filepath.Join(dir, ann)); err != nil {
			ann = name + ".man"
		}
		ref := refBeats(t, filepath.Join(dir, ann), h.Fs)
		beats, err := DetectBeats(rec, nil)
		if err != nil {
			t.Fatal(err)
		}
		from, to := 0.0, math.Inf(1)
		if filepath.Ext(ann) == ".man" {
			from, to = ref[0]-0.2, ref[len(ref)-1]+0.2
		}
		if filepath.Ext(ann) == ".atr" {
			classAgreement(t, filepath.Join(dir, ann), h.Fs, beats)
		}
		tp, fn, fp := score(ref, beatTimes(beats), from, to)
		se := float64(tp) / float64(tp+fn)
		pp := float64(tp) / float64(tp+fp)
		t.Logf("qtdb %-9s (%s, %4d ref beats): TP %4d FN %3d FP %3d  Se %.2f %%  +P %.2f %%", name, filepath.Ext(ann), tp+fn, tp, fn, fp, 100*se, 100*pp)
		if se < 0.995 || pp < 0.995 {
			t.Errorf("qtdb %s: Se %.4f +P %.4f, want ≥ 0.995 (task target)", name, se, pp)
		}
	}
}

// classAgreement logs a confusion table of reference beat labels (N, A, V
// and others) against detected classes, for matched beats.
func classAgreement(t *testing.T, atr string, fs float64, beats []ecg.Beat) map[[2]string]int {
	t.Helper()
	anns := readAnnotations(t, atr, fs)
	conf := map[[2]string]int{}
	j := 0
	for _, a := range anns {
		if !isBeat(a.Code) {
			continue
		}
		r := float64(a.Sample) / fs
		for j < len(beats) && beats[j].R < r-0.15 {
			j++
		}
		if j < len(beats) && math.Abs(beats[j].R-r) <= 0.15 {
			conf[[2]string{a.Symbol, string(rune(beats[j].Class))}]++
		}
	}
	t.Logf("beat classes (reference, detected): %v", conf)
	return conf
}

// TestDetectLUDB scores beat detection on the 29 LUDB records against the
// cardiologists' QRS marks in lead II (Kalyakulina et al. 2020), within
// the annotated stretch of each record (first to last mark ± 0.2 s), with
// the EC57 150 ms window.
func TestDetectLUDB(t *testing.T) {
	dir := refdataDir(t, "ludb")
	var TP, FN, FP int
	for _, n := range ludbRecords {
		rec, h := readWFDB(t, filepath.Join(dir, fmt.Sprint(n)+".hea"))
		var ref []float64
		for _, w := range readWaves(t, filepath.Join(dir, fmt.Sprintf("%d.ii", n)), h.Fs) {
			if w.sym == "N" {
				ref = append(ref, w.pk)
			}
		}
		beats, err := DetectBeats(rec, nil)
		if err != nil {
			t.Fatal(err)
		}
		tp, fn, fp := score(ref, beatTimes(beats), ref[0]-0.2, ref[len(ref)-1]+0.2)
		TP, FN, FP = TP+tp, FN+fn, FP+fp
		if fn+fp > 0 {
			t.Logf("ludb %d: TP %d FN %d FP %d", n, tp, fn, fp)
		}
	}
	se, pp := float64(TP)/float64(TP+FN), float64(TP)/float64(TP+FP)
	t.Logf("LUDB lead II marks: TP %d FN %d FP %d  Se %.2f %%  +P %.2f %%", TP, FN, FP, 100*se, 100*pp)
	// Measured (2026-12-01): Se 100 %, +P 99.28 %. The two false beats
	// are in record 45 (atrial and ventricular pacing), at 1.01 and 2.86 s:
	// the atrial pacing artefact 250 ms before a paced QRS. In this record
	// it is no narrow spike but a smooth monophasic bump of ≈ 40 ms and up
	// to 0.3 mV (the recording was band-limited), whose multi-lead QRS
	// extent (56–74 ms) overlaps that of normal QRS complexes (58–82 ms in
	// records 1, 2, 3, 11), so a spike-width rule cannot remove it without
	// risking real beats; nor does its spatial shape (the first principal
	// component holds 98–99 % of the 12-lead energy over ±50 ms, as it does
	// for this record's paced QRS complexes), nor a mirrored T-wave rule
	// (drop a detection followed within 360 ms by one of twice its slope),
	// which left both in place. Sharp spikes are merged with their QRS
	// (see TestPacingSpikes).
	if se < 0.999 || pp < 0.99 {
		t.Errorf("LUDB: Se %.4f +P %.4f, want ≥ 0.999 and ≥ 0.99", se, pp)
	}
}
