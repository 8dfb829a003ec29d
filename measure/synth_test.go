package measure

import (
	"math"
	"testing"

	"tracelift/ecg"
	"tracelift/synth"
)

// truthIntervals returns the median true P duration, PR, QRS and QT (ms)
// of a synthetic record's dominant beats.
func truthIntervals(rec ecg.Record) (p, pr, qrs, qt float64) {
	var a, b, c, d []float64
	for _, bt := range rec.Beats {
		if bt.Class != ecg.BeatNormal {
			continue
		}
		a = append(a, 1000*(bt.POff-bt.POn))
		b = append(b, 1000*(bt.QRSOn-bt.POn))
		c = append(c, 1000*(bt.QRSOff-bt.QRSOn))
		d = append(d, 1000*(bt.TEnd-bt.QRSOn))
	}
	return median(a), median(b), median(c), median(d)
}

// columnise blanks each lead outside its 2.5 s column of a 3 × 4 page
// (rows I/aVR/V1/V4, II/aVL/V2/V5, III/aVF/V3/V6; standards.md §1.2),
// keeping lead II whole when rhythm is true (the rhythm strip).
func columnise(rec ecg.Record, rhythm bool) ecg.Record {
	col := map[ecg.Lead]int{
		ecg.LeadI: 0, ecg.LeadII: 0, ecg.LeadIII: 0,
		ecg.LeadAVR: 1, ecg.LeadAVL: 1, ecg.LeadAVF: 1,
		ecg.LeadV1: 2, ecg.LeadV2: 2, ecg.LeadV3: 2,
		ecg.LeadV4: 3, ecg.LeadV5: 3, ecg.LeadV6: 3,
	}
	out := rec.Clone()
	for i := range out.Signals {
		s := &out.Signals[i]
		if rhythm && s.Lead == ecg.LeadII {
			continue
		}
		c := col[s.Lead]
		for k := range s.Samples {
			t := s.Time(k)
			if t < 2.5*float64(c) || t >= 2.5*float64(c+1) {
				s.Samples[k] = math.NaN()
			}
		}
	}
	return out
}

// TestSyntheticIntervals measures synthetic records with known fiducials
// (synth: McSharry et al. 2003 model) as full 12-lead records and as 3 × 4
// pages with and without a lead II rhythm strip.
//
// synth places wave boundaries where a wave's envelope crosses 5 % of its
// peak; on Gaussian waves that lies inside the slope-based boundaries this
// package uses (tuned against cardiologists' marks), so QRS and QT read
// longer than synth's truth by a fixed amount. The test therefore checks
// (1) heart rate and QRS axis against the truth, (2) PR against the truth,
// (3) that measured − true QRS, QT and P offsets stay constant across
// rates, PR and QRS widths (the measurements track the truth) and stay in
// a band around the bias measured below, and (4) that
// 3 × 4 pages give the same intervals as the full record they came from.
func TestSyntheticIntervals(t *testing.T) {
	base := synth.Default()
	noisy := base
	noisy.NoiseMV, noisy.BaselineWanderMV, noisy.HRVStdMS = 0.02, 0.3, 30
	slow := base
	slow.HeartRateBPM, slow.PRMS, slow.QRSMS = 50, 220, 130
	fast := base
	fast.HeartRateBPM, fast.AxisDeg = 110, -45
	cases := []struct {
		name string
		p    synth.Params
		seed uint64
	}{{"default", base, 1}, {"noisy", noisy, 2}, {"slow long PR wide QRS", slow, 3}, {"fast LAD", fast, 4}}
	type iv [4]float64 // P, PR, QRS, QT
	names := []string{"P", "PR", "QRS", "QT"}
	var offsets []iv
	for _, c := range cases {
		rec, err := synth.Generate(c.p, c.seed)
		if err != nil {
			t.Fatal(err)
		}
		tp, tpr, tqrs, tqt := truthIntervals(rec)
		truth := iv{tp, tpr, tqrs, tqt}
		var full iv
		for page, pname := range []string{"12 leads", "3x4+II", "3x4"} {
			in := rec
			if page > 0 {
				in = columnise(rec, page == 1)
			}
			in.Beats = nil
			rep, err := Measure(in, nil)
			if err != nil {
				t.Fatalf("%s %s: %v", c.name, pname, err)
			}
			got := iv{float64(rep.PMS), float64(rep.PRMS), float64(rep.QRSMS), float64(rep.QTMS)}
			t.Logf("%-22s %-8s HR %5.1f  P %3.0f/%3.0f  PR %3.0f/%3.0f  QRS %3.0f/%3.0f  QT %3.0f/%3.0f  axis %5.1f/%3.0f (measured/true)",
				c.name, pname, float64(rep.HeartRateBPM), got[0], tp, got[1], tpr, got[2], tqrs, got[3], tqt, float64(rep.Axes.QRSDeg), c.p.AxisDeg)
			if math.Abs(float64(rep.HeartRateBPM)-c.p.HeartRateBPM) > 2 {
				t.Errorf("%s %s: heart rate %v bpm, set %.0f", c.name, pname, rep.HeartRateBPM, c.p.HeartRateBPM)
			}
			if d := math.Abs(float64(rep.Axes.QRSDeg) - c.p.AxisDeg); !(d < 5) {
				t.Errorf("%s %s: QRS axis %v°, set %.0f°", c.name, pname, rep.Axes.QRSDeg, c.p.AxisDeg)
			}
			if d := math.Abs(got[1] - tpr); !(d <= 15) {
				t.Errorf("%s %s: PR %v ms, true %.0f", c.name, pname, got[1], tpr)
			}
			if page == 0 {
				full = got
				var off iv
				for i := range off {
					off[i] = got[i] - truth[i]
				}
				offsets = append(offsets, off)
				continue
			}
			// A 3 × 4 page must give the full record's intervals (PR within
			// 15 ms: without a rhythm strip it is the median of the columns'
			// PRs, each from its own earliest QRS onset).
			for i, lim := range []float64{12, 15, 8, 20} {
				if d := math.Abs(got[i] - full[i]); !(d <= lim) {
					t.Errorf("%s %s: %s %.0f ms, full record %.0f ms (limit ±%.0f)", c.name, pname, names[i], got[i], full[i], lim)
				}
			}
		}
	}
	// The fixed offsets themselves, measured on 2026-12-01: P +10…+12,
	// PR −10…−8, QRS +24…+30, QT +39…+51 ms. Investigated: on the default
	// record every lead's QRS offset lies where the 12-lead envelope has
	// fallen to 0.5 % of its peak (≈ 9 µV; 1 % is one sample earlier), so
	// the offset does not run into the ST segment; the QRS reads long
	// because synth's 5 % envelope level is far above a visible departure,
	// and most of that excess is at the onset (earliest septal slope; the
	// 1 % envelope onset is 10 ms later than ours). Raising the QRS
	// thresholds (xiQOn, xiQOff 0.07 → 0.15) shortens the synthetic QRS by
	// only 2–8 ms while the LUDB QRS, already short by 7.7 ms, worsens by
	// up to 6 ms, so the defaults stay. The QT excess is mostly the T end:
	// the 24 ms T smoothing scale widens the last T slope (σ 32 ms in synth
	// → ≈ 40 ms), which puts the 15 % slope threshold ≈ 26 ms beyond the
	// 5 % amplitude level (estimate for a Gaussian; on the expert-marked
	// data the QT mean is +5.4 and +1.2 ms). The bands below allow 4–6 ms
	// around the measured offsets, so a drift of the bias is caught too.
	bands := [][2]float64{{6, 16}, {-14, -4}, {20, 34}, {34, 56}}
	for i, lim := range []float64{12, 12, 12, 20} {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, o := range offsets {
			lo, hi = math.Min(lo, o[i]), math.Max(hi, o[i])
		}
		t.Logf("%s measured − true: %+.0f … %+.0f ms", names[i], lo, hi)
		if !(hi-lo <= lim) {
			t.Errorf("%s: measured − true varies by %.0f ms across records (limit %.0f)", names[i], hi-lo, lim)
		}
		if !(lo >= bands[i][0] && hi <= bands[i][1]) {
			t.Errorf("%s: measured − true %+.0f … %+.0f ms outside the expected bias band %+.0f … %+.0f", names[i], lo, hi, bands[i][0], bands[i][1])
		}
	}
}

// TestSyntheticBeats checks detection and classification against the true
// beats of a 60 s synthetic record with ectopic beats.
func TestSyntheticBeats(t *testing.T) {
	p := synth.Default()
	p.DurationS, p.EctopicRate, p.NoiseMV = 60, 0.1, 0.02
	rec, err := synth.Generate(p, 11)
	if err != nil {
		t.Fatal(err)
	}
	truth := rec.Beats
	rec.Beats = nil
	got, err := DetectBeats(rec, nil)
	if err != nil {
		t.Fatal(err)
	}
	tp, fn, fp := score(beatTimes(truth), beatTimes(got), 0, math.Inf(1))
	t.Logf("synthetic 60 s: %d true beats, TP %d FN %d FP %d", len(truth), tp, fn, fp)
	if fn > 0 || fp > 0 {
		t.Errorf("FN %d FP %d, want 0", fn, fp)
	}
	// Class agreement on matched beats.
	agree, n := 0, 0
	conf := map[[2]ecg.BeatClass]int{}
	for _, b := range truth {
		for _, g := range got {
			if math.Abs(g.R-b.R) < 0.15 {
				n++
				conf[[2]ecg.BeatClass{b.Class, g.Class}]++
				if g.Class == b.Class {
					agree++
				}
			}
		}
	}
	t.Logf("class agreement %d/%d; (true, detected) counts %v", agree, n, conf)
	if float64(agree) < 0.9*float64(n) {
		t.Errorf("class agreement %d/%d, want ≥ 90 %%", agree, n)
	}
}
