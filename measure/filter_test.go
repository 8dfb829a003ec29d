package measure

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestButterworthForwardBackward: a 2nd-order Butterworth section has
// |H(fc)|² = 1/2, so run forward and backward it passes a sine at the
// cut-off at half amplitude (−6 dB), with zero phase (textbook
// property of Butterworth filters and of forward-backward filtering).
func TestButterworthForwardBackward(t *testing.T) {
	fs := 500.0
	for _, c := range []struct {
		name string
		q    biquad
		f    float64
		want float64
	}{
		{"low-pass at cut-off", butterLow(40, fs), 40, 0.5},
		{"low-pass pass band", butterLow(40, fs), 4, 1},
		{"low-pass stop band", butterLow(40, fs), 160, 0.0},
		{"high-pass at cut-off", butterHigh(5, fs), 5, 0.5},
		{"high-pass pass band", butterHigh(5, fs), 50, 1},
	} {
		n := int(20 * fs)
		x := make([]float64, n)
		for i := range x {
			x[i] = math.Sin(2 * math.Pi * c.f * float64(i) / fs)
		}
		y := bandFilter(nil, x, fs, 1, 0.3, c.q)
		// Amplitude and phase by projection on sin/cos over the middle.
		var s, co float64
		for i := n / 4; i < 3*n/4; i++ {
			ph := 2 * math.Pi * c.f * float64(i) / fs
			s += y[i] * math.Sin(ph)
			co += y[i] * math.Cos(ph)
		}
		m := float64(n / 2)
		amp := 2 * math.Hypot(s, co) / m
		phase := math.Atan2(co, s)
		if math.Abs(amp-c.want) > 0.02 {
			t.Errorf("%s: amplitude %.3f, want %.2f", c.name, amp, c.want)
		}
		if amp > 0.1 && math.Abs(phase) > 1e-3 {
			t.Errorf("%s: phase %.4f rad, want 0 (zero phase)", c.name, phase)
		}
	}
}

// TestBandFilterNaNRuns: NaN stays NaN, runs are filtered separately, a
// constant run passes a low-pass unchanged (padding leaves no edge
// transient), and runs shorter than the minimum become NaN.
func TestBandFilterNaNRuns(t *testing.T) {
	fs := 250.0
	x := make([]float64, 1000)
	for i := range x {
		switch {
		case i < 400:
			x[i] = 1.5
		case i < 500:
			x[i] = math.NaN()
		case i < 520:
			x[i] = 3 // 80 ms: shorter than the 0.3 s minimum
		case i < 540:
			x[i] = math.NaN()
		default:
			x[i] = -0.5
		}
	}
	y := bandFilter(nil, x, fs, 0.5, 0.3, butterLow(40, fs))
	for i, v := range y {
		switch {
		case i < 400:
			if math.Abs(v-1.5) > 1e-9 {
				t.Fatalf("sample %d = %g, want 1.5", i, v)
			}
		case i < 540:
			if !math.IsNaN(v) {
				t.Fatalf("sample %d = %g, want NaN", i, v)
			}
		default:
			if math.Abs(v+0.5) > 1e-9 {
				t.Fatalf("sample %d = %g, want −0.5", i, v)
			}
		}
	}
}

// TestRunningMedian compares the sliding-window median with a direct one.
func TestRunningMedian(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	src := make([]float64, 300)
	for i := range src {
		src[i] = rng.NormFloat64()
		if i%37 == 5 {
			src[i] = math.NaN()
		}
	}
	for _, h := range []int{1, 4, 15} {
		got := make([]float64, len(src))
		runningMedian(got, src, h)
		for i := range src {
			var w []float64
			for j := max(0, i-h); j <= min(len(src)-1, i+h); j++ {
				if !math.IsNaN(src[j]) {
					w = append(w, src[j])
				}
			}
			want := median(slices.Clone(w))
			if math.IsNaN(src[i]) {
				want = math.NaN()
			}
			if !(got[i] == want || math.IsNaN(got[i]) && math.IsNaN(want)) {
				t.Fatalf("h=%d i=%d: %g, want %g", h, i, got[i], want)
			}
		}
	}
}

// TestMedianBaseline: the two-stage median estimate (de Chazal et al.
// 2004) follows a slow wander under a train of narrow QRS-like spikes and
// wide T-like bumps. Measured: 0.040 mV worst error for 0.2 mV at 0.1 Hz,
// 0.126 mV for 0.4 mV at 0.2 Hz (a steep ramp biases the median of a
// window that holds a T wave); the bounds sit just above.
func TestMedianBaseline(t *testing.T) {
	fs := 500.0
	n := int(10 * fs)
	for _, c := range []struct{ amp, hz, bound float64 }{{0.2, 0.1, 0.045}, {0.4, 0.2, 0.14}} {
		x := make([]float64, n)
		wander := make([]float64, n)
		for i := range x {
			ts := float64(i) / fs
			wander[i] = c.amp * math.Sin(2*math.Pi*c.hz*ts)
			ph := math.Mod(ts, 0.8)
			x[i] = wander[i] + 1.2*math.Exp(-(ph-0.2)*(ph-0.2)/(2*0.01*0.01)) + 0.3*math.Exp(-(ph-0.5)*(ph-0.5)/(2*0.05*0.05))
		}
		b := medianBaseline(nil, x, fs)
		worst := 0.0
		for i := int(fs); i < n-int(fs); i++ {
			worst = math.Max(worst, math.Abs(b[i]-wander[i]))
		}
		t.Logf("wander %.1f mV at %.1f Hz: worst baseline error %.3f mV", c.amp, c.hz, worst)
		if worst > c.bound {
			t.Errorf("wander %.1f mV at %.1f Hz: baseline error up to %.3f mV, want ≤ %.2f", c.amp, c.hz, worst, c.bound)
		}
	}
}
