package edf

import (
	"io"
	"math"
	"os"
	"path/filepath"
	"testing"

	"tracelift/export/wfdb"
	"tracelift/internal/biosig"
	"tracelift/internal/refdata"
)

// An EDF+ file written by another program: biosig's save2gdf converts the
// QT Database record sele0104 (WFDB format 212, 2 signals, 225,000
// samples at 250 Hz) to EDF+; our EDF reader must give the same physical
// values as our WFDB reader of the original, within one digital step of
// biosig's scaling. This also exercises a file with 225,000 data records
// of 4 ms each.
func TestReadBiosigEDF(t *testing.T) {
	biosig.Tool(t)
	src := refdata.Dir(t, "qtdb")
	dir := t.TempDir()
	for _, n := range []string{"sele0104.hea", "sele0104.dat"} {
		in, err := os.Open(filepath.Join(src, n))
		if err != nil {
			t.Fatal(err)
		}
		out, _ := os.Create(filepath.Join(dir, n))
		io.Copy(out, in)
		in.Close()
		out.Close()
	}
	biosig.Run(t, dir, "-f=EDF", "sele0104.hea", "out.edf")
	f, err := ReadFile(filepath.Join(dir, "out.edf"))
	if err != nil {
		t.Fatal(err)
	}
	_, ref, err := wfdb.ReadSignals(filepath.Join(src, "sele0104.hea"))
	if err != nil {
		t.Fatal(err)
	}
	if len(f.Header.Signals) < 2 || f.Header.Signals[0].Label != "D3" {
		t.Fatalf("signals %+v", f.Header.Signals)
	}
	for j := 0; j < 2; j++ {
		s := f.Header.Signals[j]
		step := (s.PhysMax - s.PhysMin) / float64(s.DigMax-s.DigMin)
		got := f.Physical[j]
		if len(got) != len(ref[j]) {
			t.Fatalf("signal %d: %d samples, WFDB has %d", j, len(got), len(ref[j]))
		}
		worst := 0.0
		for k := range got {
			worst = math.Max(worst, math.Abs(got[k]-ref[j][k]))
		}
		t.Logf("%s: worst difference %.3f µV (biosig step %.3f µV)", s.Label, worst*1000, step*1000)
		if worst > step+1e-6 {
			t.Errorf("%s: difference %g mV exceeds one step %g", s.Label, worst, step)
		}
	}
}
