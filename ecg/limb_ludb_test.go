package ecg

import (
	"encoding/binary"
	"os"
	"path/filepath"
	"testing"

	"tracelift/internal/refdata"
)

// ludbRecord reads an LUDB record's 12 leads (WFDB format 16: interleaved
// little-endian int16, 500 Hz, 5000 samples, leads in standard order) in
// digital units, taking one unit as 1 µV. The dataset's per-lead header
// gains are a range normalisation, not a calibration (shared data README,
// "LUDB calibration caveat"), so the raw units are used.
func ludbRecord(t *testing.T, name string) Record {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(refdata.Dir(t, "ludb"), name+".dat"))
	if err != nil {
		t.Fatal(err)
	}
	const nsig, n = 12, 5000
	if len(b) != 2*nsig*n {
		t.Fatalf("%s.dat: %d bytes, want %d", name, len(b), 2*nsig*n)
	}
	var r Record
	for li, l := range Standard12 {
		s := Signal{Lead: l, SampleRate: 500, Samples: make([]float64, n)}
		for k := range n {
			s.Samples[k] = float64(int16(binary.LittleEndian.Uint16(b[2*(k*nsig+li):]))) / 1000
		}
		r.Set(s)
	}
	return r
}

// On real recordings (LUDB 1.0.1, records 1 and 2; Kalyakulina et al.,
// IEEE Access 8:186181, 2020) the limb leads satisfy Einthoven and
// Goldberger to within the rounding of stored integers (the README of the
// shared data: III = II − I exactly, the augmented leads within 0.5 unit),
// so the residual is below 0.5 µV; inverting one lead, a common reading
// error, makes that lead stand out.
func TestCheckLimbLUDB(t *testing.T) {
	for _, name := range []string{"1", "2"} {
		r := ludbRecord(t, name)
		c, ok := CheckLimb(&r)
		if !ok || c.ResidualUV > 0.5 || c.Samples != 5000 {
			t.Errorf("record %s: residual %.3f µV over %d samples (ok=%v), want < 0.5", name, c.ResidualUV, c.Samples, ok)
		}
		t.Logf("record %s: residual %.3f µV", name, c.ResidualUV)
		for _, bad := range []Lead{LeadAVL, LeadIII} {
			inv := r.Clone()
			s := inv.Signal(bad)
			for k := range s.Samples {
				s.Samples[k] = -s.Samples[k]
			}
			c, _ := CheckLimb(&inv)
			worst := LeadUnknown
			for l, v := range c.PerLeadUV {
				if worst == LeadUnknown || v > c.PerLeadUV[worst] {
					worst = l
				}
			}
			if worst != bad || c.ResidualUV < 20 {
				t.Errorf("record %s with %v inverted: residual %.1f µV, worst lead %v", name, bad, c.ResidualUV, worst)
			}
		}
	}
}
