package accuracy

import (
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/ecg"
)

// testRecord gives each lead a sine of its own frequency, so that leads
// are uncorrelated with each other.
func testRecord(leads []ecg.Lead, fs, dur float64) ecg.Record {
	var r ecg.Record
	n := int(fs * dur)
	for k, l := range leads {
		s := ecg.Signal{Lead: l, SampleRate: fs, Samples: make([]float64, n)}
		f := 1.0 + 0.37*float64(k)
		for i := range s.Samples {
			s.Samples[i] = math.Sin(2 * math.Pi * f * float64(i) / fs)
		}
		r.Set(s)
	}
	return r
}

func TestScoreSignals(t *testing.T) {
	leads := []ecg.Lead{ecg.LeadI, ecg.LeadII, ecg.LeadV1}
	full := testRecord(leads, 500, 10)
	printed := full.Clone()
	// V1 printed only over 0–2.5 s, as on a 3×4 page.
	v1 := printed.Signal(ecg.LeadV1)
	for i := 1250; i < len(v1.Samples); i++ {
		v1.Samples[i] = math.NaN()
	}

	t.Run("perfect", func(t *testing.T) {
		var p Page
		ScoreSignals(&p, &printed, &full, &printed)
		assert.Equal(t, 3, p.LeadsPrinted)
		assert.Equal(t, 3, p.LeadsFound)
		assert.Equal(t, 0, p.Swaps)
		for l, v := range p.StrictSNRdB {
			assert.Equal(t, F(100), v, "lead %s: a perfect copy scores the cap", l)
		}
	})
	t.Run("scaled by 1.1", func(t *testing.T) {
		// Challenge 2024: SNR = 10·log10(Σx²/Σ(y−x)²); y = 1.1·x gives
		// 10·log10(1/0.01) = 20 dB.
		est := printed.Clone()
		for i := range est.Signals {
			for k := range est.Signals[i].Samples {
				est.Signals[i].Samples[k] *= 1.1
			}
		}
		var p Page
		ScoreSignals(&p, &printed, &full, &est)
		for l, v := range p.StrictSNRdB {
			assert.InDelta(t, 20, float64(v), 1e-6, "strict SNR of lead %s", l)
		}
		// Whole periods: the means are ~0, so the aligned SNR agrees.
		assert.InDelta(t, 20, float64(p.SNRdB["I"]), 0.2)
		assert.InDelta(t, 0, float64(p.ShiftMS), 1e-9)
	})
	t.Run("missing lead scores zero", func(t *testing.T) {
		est := printed.Clone()
		est.Signals = est.Signals[:2] // drop V1
		var p Page
		ScoreSignals(&p, &printed, &full, &est)
		assert.Equal(t, 2, p.LeadsFound)
		assert.Equal(t, F(0), p.StrictSNRdB["V1"])
		assert.Equal(t, F(0), p.SNRdB["V1"])
	})
	t.Run("swapped leads", func(t *testing.T) {
		est := printed.Clone()
		est.Signals[0].Lead, est.Signals[1].Lead = ecg.LeadII, ecg.LeadI
		var p Page
		ScoreSignals(&p, &printed, &full, &est)
		assert.Equal(t, 2, p.Swaps)
		assert.Equal(t, ecg.LeadII, SwappedWith(&full, est.Signal(ecg.LeadI)))
		assert.Less(t, float64(p.StrictSNRdB["I"]), 3.0)
	})
}

func TestTrueIntervals(t *testing.T) {
	// R every 0.8 s → 75 beats/min; PR 160 ms, QRS 90 ms, QT 380 ms.
	var beats []ecg.Beat
	for k := range 5 {
		r := 0.5 + 0.8*float64(k)
		b := ecg.NewBeat(ecg.BeatNormal, r)
		b.QRSOn, b.QRSOff = r-0.040, r+0.050
		b.POn = b.QRSOn - 0.160
		b.TEnd = b.QRSOn + 0.380
		beats = append(beats, b)
	}
	iv := TrueIntervals(beats)
	assert.InDelta(t, 75, iv.HRBPM, 1e-9)
	assert.InDelta(t, 160, iv.PRMS, 1e-9)
	assert.InDelta(t, 90, iv.QRSMS, 1e-9)
	assert.InDelta(t, 380, iv.QTMS, 1e-9)
	d := Intervals{HRBPM: 76, PRMS: math.NaN(), QRSMS: 100, QTMS: 370}.Diff(iv)
	assert.InDelta(t, 1, d.HRBPM, 1e-9)
	assert.True(t, math.IsNaN(d.PRMS))
	assert.InDelta(t, 10, d.QRSMS, 1e-9)
	assert.InDelta(t, -10, d.QTMS, 1e-9)

	// No P waves: PR unknown.
	beats[0].POn, beats[1].POn, beats[2].POn, beats[3].POn, beats[4].POn = math.NaN(), math.NaN(), math.NaN(), math.NaN(), math.NaN()
	require.True(t, math.IsNaN(TrueIntervals(beats).PRMS))
}
