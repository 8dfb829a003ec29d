// Package frames puts a record's signals on one common sample grid, the
// shape every tabular or multiplexed file format needs (CSV rows, EDF data
// records, WFDB frames, aECG sequence sets).
package frames

import (
	"fmt"
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

// MaxCells bounds rows × leads of a grid (2^28 values, 2 GiB).
const MaxCells = 1 << 28

// usable reports whether a signal can be placed on a grid.
func usable(s *ecg.Signal) bool {
	return len(s.Samples) > 0 && s.SampleRate > 0 && !math.IsInf(s.SampleRate, 0) &&
		!math.IsNaN(s.Start) && !math.IsInf(s.Start, 0)
}

// Align lays rec out on one grid at the highest sample rate found, with
// columns in the order given by leads (nil: the record's own order).
// Signals at that rate whose start falls on the grid are copied exactly;
// others are resampled with ecg.ResampleOnGrid. Leads absent from the
// record, and signals without samples or with a non-finite or
// non-positive rate or start, give all-NaN columns; infinite samples
// become NaN (not recorded). A record with nothing usable gives N = 0
// and Fs = fallbackFs. A grid of more than MaxCells values is an error
// wrapping ecg.ErrOutput.
func Align(rec *ecg.Record, leads []ecg.Lead, fallbackFs float64) (Grid, error) {
	if leads == nil {
		leads = rec.Leads()
	}
	g := Grid{Leads: leads, Cols: make([][]float64, len(leads))}
	start, end := math.Inf(1), math.Inf(-1)
	for i := range rec.Signals {
		s := &rec.Signals[i]
		if !usable(s) {
			continue
		}
		g.Fs = math.Max(g.Fs, s.SampleRate)
		start = math.Min(start, s.Start)
		end = math.Max(end, s.End())
	}
	if !(g.Fs > 0) {
		g.Fs = fallbackFs
		for j := range g.Cols {
			g.Cols[j] = []float64{}
		}
		return g, nil
	}
	k0 := math.Floor(start*g.Fs + 1e-6)
	g.T0 = k0 / g.Fs
	rows := math.Ceil(end*g.Fs-1e-6) - k0
	if rows*float64(max(1, len(leads))) > MaxCells || math.IsNaN(rows) {
		return g, fmt.Errorf("record spans %g s at %g Hz: too many samples to write: %w", end-start, g.Fs, ecg.ErrOutput)
	}
	g.N = max(0, int(rows))
	for j, l := range leads {
		col := make([]float64, g.N)
		for k := range col {
			col[k] = math.NaN()
		}
		g.Cols[j] = col
		s := rec.Signal(l)
		if s == nil || !usable(s) {
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
			if r := o + k; r >= 0 && r < g.N && !math.IsInf(v, 0) {
				col[r] = v
			}
		}
	}
	return g, nil
}
