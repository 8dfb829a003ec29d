package ecg

import "math"

// Resample returns s at a new uniform rate (Hz) by band-limited
// interpolation: a windowed-sinc filter (Kaiser window, β = 8, 16 zero
// crossings each side) whose cut-off is 0.95 × the lower of the two Nyquist
// frequencies, so downsampling is anti-aliased and upsampling adds no
// images. This is the textbook approach to sample-rate conversion (Smith,
// "Digital Audio Resampling", common practice); linear interpolation would
// attenuate a 30 Hz QRS component noticeably at 250 Hz.
//
// The output covers the same time span as s, starting at s.Start. Output
// samples whose nearest input sample is NaN are NaN; taps that fall on NaN
// samples or beyond the ends are left out and the remaining weights are
// renormalised, so edges and gaps stay unbiased. A non-positive rate
// panics.
func Resample(s Signal, rate float64) Signal {
	return resample(s, rate, s.Start)
}

// ResampleOnGrid is Resample with the output's first sample placed on the
// record-wide grid t = k/rate: at the first grid time at or after s.Start.
// Signals resampled this way line up sample for sample.
func ResampleOnGrid(s Signal, rate float64) Signal {
	if rate <= 0 {
		panic("ecg: ResampleOnGrid: non-positive sample rate")
	}
	start := math.Ceil(s.Start*rate-1e-6) / rate
	return resample(s, rate, start)
}

func resample(s Signal, rate, start float64) Signal {
	if rate <= 0 || s.SampleRate <= 0 {
		panic("ecg: Resample: non-positive sample rate")
	}
	out := Signal{Lead: s.Lead, SampleRate: rate, Start: start}
	if len(s.Samples) == 0 {
		return out
	}
	offset := (start - s.Start) * s.SampleRate // input-sample position of output sample 0
	if rate == s.SampleRate && math.Abs(offset) < 1e-6 {
		out.Samples = append([]float64(nil), s.Samples...)
		return out
	}
	n := int(math.Floor((float64(len(s.Samples))-offset)*rate/s.SampleRate + 1e-9))
	if n < 1 {
		n = 1
	}
	out.Samples = make([]float64, n)
	ratio := rate / s.SampleRate // output samples per input sample
	k := newKernel(math.Min(1, ratio))
	for o := range out.Samples {
		x := offset + float64(o)/ratio // position in input samples
		near := min(max(int(math.Round(x)), 0), len(s.Samples)-1)
		if math.IsNaN(s.Samples[near]) {
			out.Samples[o] = math.NaN()
			continue
		}
		lo := max(0, int(math.Ceil(x-k.half)))
		hi := min(len(s.Samples)-1, int(math.Floor(x+k.half)))
		var acc, wsum float64
		for j := lo; j <= hi; j++ {
			v := s.Samples[j]
			if math.IsNaN(v) {
				continue
			}
			w := k.at(float64(j) - x)
			acc += w * v
			wsum += w
		}
		if wsum == 0 {
			out.Samples[o] = s.Samples[near]
			continue
		}
		out.Samples[o] = acc / wsum
	}
	return out
}

// ResampleRecord resamples every signal of r to rate with ResampleOnGrid,
// so that all leads share one sample grid.
func ResampleRecord(r Record, rate float64) Record {
	out := Record{Meta: r.Meta, Beats: append([]Beat(nil), r.Beats...)}
	for _, s := range r.Signals {
		out.Signals = append(out.Signals, ResampleOnGrid(s, rate))
	}
	return out
}

// kernel is the windowed-sinc interpolation filter, tabulated at
// kernelSteps points per input sample and read by linear interpolation
// (relative error below 1e-5), so that a tap costs a table lookup instead
// of a sine and a Bessel series.
type kernel struct {
	half float64   // half-width in input samples
	tab  []float64 // kernel at d = i/kernelSteps, i = 0 … len−1
}

const (
	kernelZeros = 16  // zero crossings each side
	kernelBeta  = 8.0 // Kaiser window shape
	kernelSteps = 512 // table points per input sample
)

// newKernel builds the filter for a given output/input rate ratio (≤ 1
// when downsampling): cut-off 0.95 × the lower Nyquist frequency.
func newKernel(ratio float64) kernel {
	fc := 0.95 * ratio / 2 // cut-off, cycles per input sample
	k := kernel{half: kernelZeros / (2 * fc)}
	n := int(math.Ceil(k.half*kernelSteps)) + 2
	k.tab = make([]float64, n)
	i0b := besselI0(kernelBeta)
	for i := range k.tab {
		d := float64(i) / kernelSteps
		r := d / k.half
		k.tab[i] = 2 * fc * sinc(2*fc*d) * besselI0(kernelBeta*math.Sqrt(math.Max(0, 1-r*r))) / i0b
	}
	return k
}

// at returns the kernel at distance d (input samples).
func (k *kernel) at(d float64) float64 {
	p := math.Abs(d) * kernelSteps
	i := int(p)
	if i+1 >= len(k.tab) {
		return 0
	}
	f := p - float64(i)
	return k.tab[i] + f*(k.tab[i+1]-k.tab[i])
}

func sinc(x float64) float64 {
	if x == 0 {
		return 1
	}
	return math.Sin(math.Pi*x) / (math.Pi * x)
}

// besselI0 is the zeroth-order modified Bessel function of the first kind
// by its power series, adequate for the window's arguments (≤ 20).
func besselI0(x float64) float64 {
	sum, term := 1.0, 1.0
	q := x * x / 4
	for k := 1; k < 50; k++ {
		term *= q / float64(k*k)
		sum += term
		if term < 1e-17*sum {
			break
		}
	}
	return sum
}
