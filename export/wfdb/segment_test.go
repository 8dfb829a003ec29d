package wfdb

import (
	"math"
	"path/filepath"
	"testing"

	"tracelift/ecg"
	"tracelift/internal/refdata"
)

func sameSegment(t *testing.T, name string, full, seg ecg.Record, from, n int) {
	t.Helper()
	if len(seg.Signals) != len(full.Signals) {
		t.Fatalf("%s: %d leads, want %d", name, len(seg.Signals), len(full.Signals))
	}
	for i, s := range seg.Signals {
		f := full.Signals[i]
		if s.Lead != f.Lead || len(s.Samples) != n || math.Abs(s.Start-float64(from)/f.SampleRate) > 1e-12 {
			t.Fatalf("%s lead %v: %d samples from %g s", name, s.Lead, len(s.Samples), s.Start)
		}
		for k, v := range s.Samples {
			w := f.Samples[from+k]
			if v != w && !(math.IsNaN(v) && math.IsNaN(w)) {
				t.Fatalf("%s lead %v sample %d: %g, full read %g", name, s.Lead, from+k, v, w)
			}
		}
	}
}

// A segment equals the same slice of the full read: MIT-BIH 100 (format
// 212, two signals), PTB s0010_re (format 16, two files), and a written
// format-212 record with three signals read from an odd frame (a segment
// that starts in the middle of a 3-byte pair).
func TestReadSegment(t *testing.T) {
	m := refdata.Dir(t, "mitdb")
	full, _, err := ReadRecord(filepath.Join(m, "100.hea"))
	if err != nil {
		t.Fatal(err)
	}
	seg, _, err := ReadSegment(filepath.Join(m, "100.hea"), 21600, 3600)
	if err != nil {
		t.Fatal(err)
	}
	sameSegment(t, "100", full, seg, 21600, 3600)
	seg, _, err = ReadSegment(filepath.Join(m, "100.hea"), 649990, 100)
	if err != nil {
		t.Fatal(err)
	}
	sameSegment(t, "100 tail", full, seg, 649990, 10)

	p := refdata.Dir(t, "ptbdb")
	full, _, err = ReadRecord(filepath.Join(p, "s0010_re.hea"))
	if err != nil {
		t.Fatal(err)
	}
	seg, _, err = ReadSegment(filepath.Join(p, "s0010_re.hea"), 5000, 33000)
	if err != nil {
		t.Fatal(err)
	}
	sameSegment(t, "s0010_re", full, seg, 5000, 33000)

	rec := testRecord(11, 2)
	rec.Signals = rec.Signals[:3]
	dir := t.TempDir()
	if _, err := WriteRecord(dir, "odd", rec, &WriteOptions{Format: 212}); err != nil {
		t.Fatal(err)
	}
	full, _, err = ReadRecord(filepath.Join(dir, "odd.hea"))
	if err != nil {
		t.Fatal(err)
	}
	for _, from := range []int{0, 1, 7, 998} {
		seg, _, err = ReadSegment(filepath.Join(dir, "odd.hea"), int64(from), 2)
		if err != nil {
			t.Fatal(err)
		}
		sameSegment(t, "odd", full, seg, from, 2)
	}
}

func BenchmarkReadMITDB100(b *testing.B) {
	m := refdata.Dir(b, "mitdb")
	for b.Loop() {
		if _, _, err := ReadRecord(filepath.Join(m, "100.hea")); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkReadSegmentMinute(b *testing.B) {
	m := refdata.Dir(b, "mitdb")
	for b.Loop() {
		if _, _, err := ReadSegment(filepath.Join(m, "100.hea"), 300000, 21600); err != nil {
			b.Fatal(err)
		}
	}
}
