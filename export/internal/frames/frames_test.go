package frames

import (
	"math"
	"testing"

	"tracelift/ecg"
)

func TestAlignMixedStartsAndRates(t *testing.T) {
	rec := ecg.Record{}
	rec.Set(ecg.Signal{Lead: ecg.LeadI, SampleRate: 500, Start: 0, Samples: []float64{1, 2, 3, 4, 5, 6}})
	rec.Set(ecg.Signal{Lead: ecg.LeadV1, SampleRate: 500, Start: 0.004, Samples: []float64{7, 8}})
	g, _ := Align(&rec, []ecg.Lead{ecg.LeadI, ecg.LeadII, ecg.LeadV1}, 500)
	if g.Fs != 500 || g.N != 6 || g.T0 != 0 {
		t.Fatalf("grid %g Hz, %d rows, t0 %g", g.Fs, g.N, g.T0)
	}
	for k := range 6 {
		if g.Cols[0][k] != float64(k+1) || !math.IsNaN(g.Cols[1][k]) {
			t.Errorf("row %d: %v %v", k, g.Cols[0][k], g.Cols[1][k])
		}
	}
	if g.Cols[2][2] != 7 || g.Cols[2][3] != 8 || !math.IsNaN(g.Cols[2][1]) || !math.IsNaN(g.Cols[2][4]) {
		t.Errorf("V1 column %v", g.Cols[2])
	}
}

func TestAlignResamplesSlowerLead(t *testing.T) {
	rec := ecg.Record{}
	n := 1000
	a := make([]float64, n)
	b := make([]float64, n/2)
	for k := range a {
		a[k] = math.Sin(2 * math.Pi * 2 * float64(k) / 500)
	}
	for k := range b {
		b[k] = math.Sin(2 * math.Pi * 2 * float64(k) / 250)
	}
	rec.Set(ecg.Signal{Lead: ecg.LeadI, SampleRate: 500, Samples: a})
	rec.Set(ecg.Signal{Lead: ecg.LeadII, SampleRate: 250, Samples: b})
	g, _ := Align(&rec, nil, 0)
	if g.Fs != 500 || g.N != n {
		t.Fatalf("grid %g Hz %d rows", g.Fs, g.N)
	}
	// Away from the edges the resampled 2 Hz sine matches the 500 Hz one.
	for k := 100; k < 900; k++ {
		if d := math.Abs(g.Cols[1][k] - g.Cols[0][k]); d > 1e-3 {
			t.Fatalf("row %d: resampled %g vs %g", k, g.Cols[1][k], g.Cols[0][k])
		}
	}
}
