package accuracy

import (
	"math"
	"sort"

	"tracelift/ecg"
	"tracelift/trace"
)

// SwapMargin is how much better (in Pearson correlation) a returned lead
// must match another lead's truth than its own to count as a swap. Limb
// leads resemble each other (II and aVF often correlate above 0.9), so a
// small margin would count look-alikes as swaps; 0.2 is this project's
// choice, not a published value.
const SwapMargin = 0.2

// ScoreSignals fills p's SNR, lead and swap fields. printed is the truth as
// printed (each lead NaN outside its printed window), full the complete
// source record (every lead over the whole time; used to recognise swapped
// leads), est the digitised record.
func ScoreSignals(p *Page, printed, full, est *ecg.Record) {
	lenient := trace.SNR(*printed, *est, trace.Lenient)
	strict := trace.SNR(*printed, *est, trace.SNROptions{})
	p.SNRdB = make(map[string]F)
	p.StrictSNRdB = make(map[string]F)
	p.LeadsPrinted, p.LeadsFound, p.Swaps = 0, 0, 0
	for _, s := range printed.Signals {
		if _, _, ok := s.ValidSpan(); !ok {
			continue
		}
		p.LeadsPrinted++
		name := s.Lead.String()
		p.SNRdB[name] = F(capDB(lenient.PerLead[s.Lead]))
		p.StrictSNRdB[name] = F(capDB(strict.PerLead[s.Lead]))
		if e := est.Signal(s.Lead); e != nil {
			if _, _, ok := e.ValidSpan(); ok {
				p.LeadsFound++
			}
		}
	}
	p.ShiftMS = F(1000 * lenient.ShiftS)
	p.Swaps = countSwaps(full, est)
}

// capDB keeps a perfect (infinite) SNR finite for statistics and JSON.
func capDB(v float64) float64 {
	if math.IsInf(v, 1) {
		return 100
	}
	return v
}

func countSwaps(full, est *ecg.Record) int {
	n := 0
	for _, e := range est.Signals {
		if SwappedWith(full, &e) != ecg.LeadUnknown {
			n++
		}
	}
	return n
}

// SwappedWith returns the lead of full whose signal est matches better than
// its own by more than SwapMargin (Pearson correlation over est's valid
// samples), or ecg.LeadUnknown when est matches its own lead best or the
// comparison is impossible.
func SwappedWith(full *ecg.Record, est *ecg.Signal) ecg.Lead {
	own := full.Signal(est.Lead)
	if own == nil {
		return ecg.LeadUnknown
	}
	cOwn := corrAt(own, est)
	best, bestC := ecg.LeadUnknown, math.Inf(-1)
	for i := range full.Signals {
		s := &full.Signals[i]
		if s.Lead == est.Lead {
			continue
		}
		if c := corrAt(s, est); c > bestC {
			best, bestC = s.Lead, c
		}
	}
	if math.IsNaN(cOwn) {
		cOwn = 0
	}
	if bestC > cOwn+SwapMargin && bestC > 0.5 {
		return best
	}
	return ecg.LeadUnknown
}

// corrAt is the Pearson correlation between est and ref read at est's
// sample times, over samples valid in both; NaN with fewer than 10.
func corrAt(ref, est *ecg.Signal) float64 {
	var sx, sy, sxx, syy, sxy float64
	n := 0
	for i, y := range est.Samples {
		if math.IsNaN(y) {
			continue
		}
		x := ref.At(est.Time(i))
		if math.IsNaN(x) {
			continue
		}
		sx += x
		sy += y
		sxx += x * x
		syy += y * y
		sxy += x * y
		n++
	}
	if n < 10 {
		return math.NaN()
	}
	fn := float64(n)
	cov := sxy/fn - sx/fn*sy/fn
	vx := sxx/fn - sx/fn*sx/fn
	vy := syy/fn - sy/fn*sy/fn
	if vx <= 0 || vy <= 0 {
		return math.NaN()
	}
	return cov / math.Sqrt(vx*vy)
}

// Intervals are global intervals of a record; NaN where unknown.
type Intervals struct {
	HRBPM, PRMS, QRSMS, QTMS float64
}

// TrueIntervals derives the reference intervals from beat fiducials (the
// synthetic truth): heart rate = 60 / mean RR of consecutive beats, and the
// medians over beats of PR = QRS onset − P onset, QRS = QRS offset − QRS
// onset, QT = T end − QRS onset (definitions as in standards.md §2.1).
func TrueIntervals(beats []ecg.Beat) Intervals {
	var rr, pr, qrs, qt []float64
	for i, b := range beats {
		if i > 0 && !math.IsNaN(b.R) && !math.IsNaN(beats[i-1].R) {
			rr = append(rr, b.R-beats[i-1].R)
		}
		pr = append(pr, 1000*(b.QRSOn-b.POn))
		qrs = append(qrs, 1000*(b.QRSOff-b.QRSOn))
		qt = append(qt, 1000*(b.TEnd-b.QRSOn))
	}
	iv := Intervals{HRBPM: math.NaN(), PRMS: Median(pr), QRSMS: Median(qrs), QTMS: Median(qt)}
	if m := Mean(rr); m > 0 {
		iv.HRBPM = 60 / m
	}
	return iv
}

// Diff returns measured − truth for each interval (NaN where either is
// unknown).
func (m Intervals) Diff(truth Intervals) Intervals {
	return Intervals{m.HRBPM - truth.HRBPM, m.PRMS - truth.PRMS, m.QRSMS - truth.QRSMS, m.QTMS - truth.QTMS}
}

// SNRStats returns the median and 10th percentile of the per-lead SNRs of
// p in dB.
func SNRStats(m map[string]F) (median, p10 float64) {
	v := make([]float64, 0, len(m))
	for _, x := range m {
		v = append(v, float64(x))
	}
	sort.Float64s(v)
	return Median(v), Percentile(v, 10)
}
