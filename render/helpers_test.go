package render

import (
	"math"
	"testing"

	"tracelift/ecg"
)

// testRecord builds a 12-lead record of simple shapes: a Gaussian "QRS"
// every second on a slow sine, scaled per lead, at fs Hz for dur seconds.
// Limb leads obey Einthoven/Goldberger exactly.
func testRecord(fs, dur float64) ecg.Record {
	n := int(dur * fs)
	lI := make([]float64, n)
	lII := make([]float64, n)
	for k := range n {
		t := float64(k) / fs
		ph := math.Mod(t, 1.0) - 0.4
		q := math.Exp(-ph * ph / (2 * 0.012 * 0.012))
		tw := 0.25 * math.Exp(-(ph-0.3)*(ph-0.3)/(2*0.05*0.05))
		lI[k] = 0.8*q + tw*0.8 + 0.05*math.Sin(2*math.Pi*0.3*t)
		lII[k] = 1.2*q + tw + 0.05*math.Sin(2*math.Pi*0.3*t+1)
	}
	rec := ecg.Record{Meta: ecg.Metadata{Source: "synthetic"}}
	rec.Set(ecg.Signal{Lead: ecg.LeadI, SampleRate: fs, Samples: lI})
	rec.Set(ecg.Signal{Lead: ecg.LeadII, SampleRate: fs, Samples: lII})
	ecg.FillLimb(&rec)
	for i := 0; i < 6; i++ {
		s := make([]float64, n)
		g := -1.0 + 0.45*float64(i)
		for k := range n {
			s[k] = g*lII[k] + 0.1*float64(i)*lI[k]
		}
		rec.Set(ecg.Signal{Lead: ecg.LeadV1 + ecg.Lead(i), SampleRate: fs, Samples: s})
	}
	for b := 0; b < int(dur); b++ {
		rec.Beats = append(rec.Beats, ecg.NewBeat(ecg.BeatNormal, float64(b)+0.4))
	}
	return rec
}

// panelPolylines returns, for each panel of tr in order, the panel's
// trace of rec as a polyline in image pixels, placed by the truth's own
// geometry (PanelPoint, PaperToPx): the samples within the panel's time
// span, NaN samples left out.
func panelPolylines(t *testing.T, tr Truth, rec ecg.Record) [][][2]float64 {
	t.Helper()
	var lines [][][2]float64
	for _, pn := range tr.Panels {
		sig := rec.Signal(mustLead(t, pn.Lead))
		var l [][2]float64
		for i, v := range sig.Samples {
			ts := sig.Time(i)
			if ts >= pn.T0-1e-9 && ts <= pn.T1+1e-9 && !math.IsNaN(v) {
				x, y := tr.PanelPoint(pn, ts, v)
				u, w := tr.PaperToPx(x, y)
				l = append(l, [2]float64{u, w})
			}
		}
		lines = append(lines, l)
	}
	return lines
}
