package synth

import (
	"math"
	"path/filepath"
	"slices"
	"strconv"
	"testing"

	"tracelift/export/wfdb"
	"tracelift/internal/refdata"
)

// ludbWave is one expert-marked wave in an LUDB lead annotation: kind
// 'p', 'N' (QRS) or 't', and onset, peak and offset in samples (500 Hz).
type ludbWave struct {
	kind          byte
	on, peak, off int
}

// readLUDB reads an LUDB lead annotation file with the project's WFDB
// annotation reader and returns its waves, each an "(" onset, peak and
// ")" offset triple.
func readLUDB(t *testing.T, path string) []ludbWave {
	t.Helper()
	anns, err := wfdb.ReadAnnotations(path, 500)
	if err != nil {
		t.Fatal(err)
	}
	const onset, offset = 39, 40 // WFDB codes '(' and ')'
	kinds := map[int]byte{24: 'p', 1: 'N', 27: 't'}
	var out []ludbWave
	for k := 0; k+2 < len(anns); k++ {
		if anns[k].Code == onset && anns[k+2].Code == offset && kinds[anns[k+1].Code] != 0 {
			out = append(out, ludbWave{kinds[anns[k+1].Code], int(anns[k].Sample), int(anns[k+1].Sample), int(anns[k+2].Sample)})
		}
	}
	return out
}

func median(x []float64) float64 {
	s := slices.Clone(x)
	slices.Sort(s)
	if len(s)%2 == 1 {
		return s[len(s)/2]
	}
	return (s[len(s)/2-1] + s[len(s)/2]) / 2
}

// TestAgainstLUDB compares the generator's wave geometry with expert
// delineation of real resting ECGs: LUDB 1.0.1 (Kalyakulina et al., IEEE
// Access 8:186181, 2020), lead II marks of the records in the shared set
// whose diagnosis (ludb.csv) is sinus rhythm without conduction disease.
// For each record the generator gets the record's own median RR, PR, QRS
// and QT; its P-wave duration, T-wave duration and ST segment (QRS offset
// → T onset) must then lie within the range of the experts' medians over
// these records. The synthetic values use the global (all-lead) rule and
// LUDB marks are for lead II alone, so only the range is compared.
func TestAgainstLUDB(t *testing.T) {
	dir := refdata.Dir(t, "ludb")
	records := []int{2, 5, 7, 9, 11, 12, 63, 114}
	type stats struct{ rr, pr, qrs, qt, p, tdur, st float64 } // ms
	var real []stats
	for _, rec := range records {
		w := readLUDB(t, filepath.Join(dir, strconv.Itoa(rec)+".ii"))
		var rr, pr, qrs, qt, pd, td, st []float64
		for k, x := range w {
			ms := func(n int) float64 { return 2 * float64(n) } // 500 Hz
			switch x.kind {
			case 'p':
				pd = append(pd, ms(x.off-x.on))
				if k+1 < len(w) && w[k+1].kind == 'N' {
					pr = append(pr, ms(w[k+1].on-x.on))
				}
			case 't':
				td = append(td, ms(x.off-x.on))
			case 'N':
				qrs = append(qrs, ms(x.off-x.on))
				if k+1 < len(w) && w[k+1].kind == 't' {
					qt = append(qt, ms(w[k+1].off-x.on))
					st = append(st, ms(w[k+1].on-x.off))
				}
				for j := k + 1; j < len(w); j++ {
					if w[j].kind == 'N' {
						rr = append(rr, ms(w[j].peak-x.peak))
						break
					}
				}
			}
		}
		if len(pd) < 3 || len(td) < 3 || len(st) < 3 {
			t.Fatalf("record %d: only %d P, %d T, %d ST marks", rec, len(pd), len(td), len(st))
		}
		real = append(real, stats{median(rr), median(pr), median(qrs), median(qt), median(pd), median(td), median(st)})
	}
	lo, hi := real[0], real[0]
	for _, s := range real {
		lo.p, hi.p = min(lo.p, s.p), max(hi.p, s.p)
		lo.tdur, hi.tdur = min(lo.tdur, s.tdur), max(hi.tdur, s.tdur)
		lo.st, hi.st = min(lo.st, s.st), max(hi.st, s.st)
	}
	t.Logf("LUDB lead II medians over %d records: P %.0f–%.0f ms, T %.0f–%.0f ms, ST %.0f–%.0f ms",
		len(real), lo.p, hi.p, lo.tdur, hi.tdur, lo.st, hi.st)
	for i, s := range real {
		p := Default()
		p.HeartRateBPM, p.PRMS, p.QRSMS, p.QTMS, p.SampleRate = 60000/s.rr, s.pr, s.qrs, s.qt, 1000
		rec, err := Generate(p, uint64(i))
		if err != nil {
			t.Fatalf("record %d: %v", records[i], err)
		}
		b := midBeat(t, rec)
		m := measureBeat(rec, b.R, s.rr/1000)
		pd, td, st := 1000*(b.POff-b.POn), 1000*(m.tEnd-m.tOn), 1000*(m.tOn-m.qrsOff)
		t.Logf("record %d (RR %.0f, PR %.0f, QRS %.0f, QT %.0f ms): synthetic P %.0f, T %.0f, ST %.0f ms; experts P %.0f, T %.0f, ST %.0f",
			records[i], s.rr, s.pr, s.qrs, s.qt, pd, td, st, s.p, s.tdur, s.st)
		for _, c := range []struct {
			name        string
			v, min, max float64
		}{{"P duration", pd, lo.p, hi.p}, {"T duration", td, lo.tdur, hi.tdur}, {"ST segment", st, lo.st, hi.st}} {
			if c.v < c.min || c.v > c.max || math.IsNaN(c.v) {
				t.Errorf("record %d: synthetic %s %.0f ms outside the experts' %.0f–%.0f ms", records[i], c.name, c.v, c.min, c.max)
			}
		}
	}
}
