// Package frames puts a record's signals on one common sample grid, the
// shape every tabular or multiplexed file format needs (CSV rows, EDF data
// records, WFDB frames, aECG sequence sets).
package frames

import (
	"math"

	"tracelift/ecg"
)

// Grid is a record laid out on one uniform time grid.
type Grid struct {
	Fs    float64     // Hz, the highest sample rate among the signals
	T0    float64     // s, time of row 0 on the record's time base (a multiple of 1/Fs)
	N     int         // number of rows
	Leads []ecg.Lead  // column order
	Cols  [][]float64 // Cols[j][k] = lead j at T0 + k/Fs, mV; NaN where not recorded
}

// Time returns the time of row k in seconds.
func (g *Grid) Time(k int) float64 { return g.T0 + float64(k)/g.Fs }

// Align lays rec out on one grid at the highest sample rate found, with
// columns in the order given by leads (nil: the record's own order).
// Signals at that rate whose start falls on the grid are copied exactly;
// others are resampled with ecg.ResampleOnGrid. Leads absent from the
// record give all-NaN columns. A record without signals gives N = 0 and
// Fs = fallbackFs.
func Align(rec *ecg.Record, leads []ecg.Lead, fallbackFs float64) Grid {
	if leads == nil {
		leads = rec.Leads()
	}
	g := Grid{Leads: leads}
	for i := range rec.Signals {
		g.Fs = math.Max(g.Fs, rec.Signals[i].SampleRate)
	}
	if !(g.Fs > 0) {
		g.Fs = fallbackFs
	}
	start, end := rec.Span()
	if len(rec.Signals) == 0 || !(g.Fs > 0) {
		g.Cols = make([][]float64, len(leads))
		for j := range g.Cols {
			g.Cols[j] = []float64{}
		}
		return g
	}
	k0 := math.Floor(start*g.Fs + 1e-6)
	g.T0 = k0 / g.Fs
	g.N = max(0, int(math.Ceil(end*g.Fs-1e-6)-k0))
	g.Cols = make([][]float64, len(leads))
	for j, l := range leads {
		col := make([]float64, g.N)
		for k := range col {
			col[k] = math.NaN()
		}
		g.Cols[j] = col
		s := rec.Signal(l)
		if s == nil || len(s.Samples) == 0 || !(s.SampleRate > 0) {
			continue
		}
		src := *s
		off := s.Start*g.Fs - k0
		if s.SampleRate != g.Fs || math.Abs(off-math.Round(off)) > 1e-6 {
			src = ecg.ResampleOnGrid(*s, g.Fs)
			off = src.Start*g.Fs - k0
		}
		o := int(math.Round(off))
		for k, v := range src.Samples {
			if r := o + k; r >= 0 && r < g.N {
				col[r] = v
			}
		}
	}
	return g
}
