package synth

import (
	"math"
)

// vec is a heart-vector amplitude in the Frank axes (X left, Y feet,
// Z back), mV.
type vec [3]float64

// wave is one Gaussian of a group: centre c and width sigma in seconds
// relative to the group's reference time, amplitude v.
type wave struct {
	c, sigma float64
	v        vec
}

// group is a template wave group (P, QRS or T) and its envelope fiducials
// at unit time scale, in seconds relative to the reference time.
type group struct {
	waves         []wave
	on, off, peak float64
}

// limbGain scales the ideal Einthoven projections of I and II so that a
// typical QRS vector gives R ≈ 1.2 mV in lead II (chosen here).
const limbGain = 0.7

// onsetFrac is the envelope fraction that defines onsets and offsets.
const onsetFrac = 0.05

// leadVec holds the twelve standard leads as projections of the heart
// vector, in ecg.Standard12 order. Limb leads: ideal triangle (common
// practice); chest leads: Dower's transform (coefficients from memory, see
// doc.go).
var leadVec = func() [12]vec {
	c60, s60 := 0.5, math.Sqrt(3)/2
	i := vec{limbGain, 0, 0}
	ii := vec{limbGain * c60, limbGain * s60, 0}
	comb := func(a, b float64) vec {
		return vec{a*i[0] + b*ii[0], a*i[1] + b*ii[1], a*i[2] + b*ii[2]}
	}
	return [12]vec{
		i, ii, comb(-1, 1), comb(-0.5, -0.5), comb(1, -0.5), comb(-0.5, 1),
		{-0.515, 0.157, -0.917}, // V1
		{0.044, 0.164, -1.387},  // V2
		{0.882, 0.098, -1.277},  // V3
		{1.213, 0.127, -0.601},  // V4
		{1.125, 0.127, -0.086},  // V5
		{0.831, 0.076, 0.230},   // V6
	}
}()

func dot(a, b vec) float64 { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }

// rotFrontal rotates v by d radians in the frontal (X–Y) plane, toward +Y
// for positive d (clockwise on the hexaxial diagram, toward aVF).
func rotFrontal(v vec, d float64) vec {
	c, s := math.Cos(d), math.Sin(d)
	return vec{c*v[0] - s*v[1], s*v[0] + c*v[1], v[2]}
}

// value returns the group's heart vector at time t relative to the
// reference, with time scale s.
func (g *group) value(t, s float64) vec {
	var h vec
	for _, w := range g.waves {
		d := (t - s*w.c) / (s * w.sigma)
		if d > 6 || d < -6 {
			continue
		}
		e := math.Exp(-0.5 * d * d)
		h[0] += w.v[0] * e
		h[1] += w.v[1] * e
		h[2] += w.v[2] * e
	}
	return h
}

// span returns the time range outside which every wave is below e^-18.
func (g *group) span() (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, w := range g.waves {
		lo = min(lo, w.c-6*w.sigma)
		hi = max(hi, w.c+6*w.sigma)
	}
	return lo, hi
}

// envelope returns max over the twelve leads of |lead · h|.
func envelope(h vec) float64 {
	m := 0.0
	for _, l := range leadVec {
		m = max(m, math.Abs(dot(l, h)))
	}
	return m
}

// measure sets g.on, g.off and g.peak from the group's envelope sampled
// every 0.05 ms.
func (g *group) measure() {
	lo, hi := g.span()
	const dt = 0.00005
	n := int((hi-lo)/dt) + 1
	env := make([]float64, n)
	best, ipk := 0.0, 0
	for k := range env {
		env[k] = envelope(g.value(lo+float64(k)*dt, 1))
		if env[k] > best {
			best, ipk = env[k], k
		}
	}
	thr := onsetFrac * best
	first, last := 0, n-1
	for first < n && env[first] < thr {
		first++
	}
	for last > 0 && env[last] < thr {
		last--
	}
	g.on = lo + float64(first)*dt
	g.off = lo + float64(last)*dt
	g.peak = lo + float64(ipk)*dt
}

// width returns the template's onset-to-offset duration at unit scale.
func (g *group) width() float64 { return g.off - g.on }

// leadSeries returns lead li's signal produced by g alone, sampled at dt
// over the group's span.
func (g *group) leadSeries(li int, dt float64) []float64 {
	lo, hi := g.span()
	n := int((hi-lo)/dt) + 1
	out := make([]float64, n)
	for k := range out {
		out[k] = dot(leadVec[li], g.value(lo+float64(k)*dt, 1))
	}
	return out
}

// netAxis returns the frontal axis in degrees from the net QRS amplitudes
// (largest positive + largest negative deflection) of leads I and aVF,
// θ = atan2(2·aVF, √3·I) (standards.md §2.3).
func (g *group) netAxis() float64 {
	net := func(li int) float64 {
		mx, mn := 0.0, 0.0
		for _, v := range g.leadSeries(li, 0.0002) {
			mx, mn = max(mx, v), min(mn, v)
		}
		return mx + mn
	}
	return math.Atan2(2*net(5), math.Sqrt(3)*net(0)) * 180 / math.Pi
}

// rotated returns a copy of g with every wave rotated by d radians in the
// frontal plane.
func (g *group) rotated(d float64) group {
	out := group{waves: make([]wave, len(g.waves))}
	for i, w := range g.waves {
		w.v = rotFrontal(w.v, d)
		out.waves[i] = w
	}
	return out
}

// Templates at unit scale (nominal seconds), amplitudes in mV on the Frank
// axes. Chosen here to give textbook morphology with Dower's chest leads:
// small septal q in I and V6 and r in V1, R progression V1→V6, upright T
// except in aVR.
func sinusP() group {
	return group{waves: []wave{
		{c: -0.015, sigma: 0.017, v: vec{0.03, 0.13, -0.06}}, // right atrium: inferior, anterior
		{c: 0.017, sigma: 0.017, v: vec{0.11, 0.08, 0.05}},   // left atrium: leftward, posterior
	}}
}

// ectopicP is a low-atrial focus: the P vector points superiorly.
func ectopicP() group {
	return group{waves: []wave{
		{c: -0.012, sigma: 0.016, v: vec{0.02, -0.12, -0.04}},
		{c: 0.014, sigma: 0.016, v: vec{0.08, -0.07, 0.04}},
	}}
}

// normalQRS is drawn with its main vector at +60°.
func normalQRS() group {
	return group{waves: []wave{
		{c: -0.026, sigma: 0.0075, v: vec{-0.16, -0.06, -0.26}}, // septal: rightward, anterior
		{c: 0, sigma: 0.0095, v: vec{0.95, 1.62, 0.40}},         // main: leftward, inferior, posterior
		{c: 0.025, sigma: 0.0095, v: vec{-0.32, -0.22, 0.48}},   // terminal: rightward, superior, posterior
	}}
}

func normalT() group {
	return group{waves: []wave{
		{c: -0.030, sigma: 0.048, v: vec{0.20, 0.24, -0.13}},
		{c: 0.032, sigma: 0.032, v: vec{0.14, 0.15, -0.09}},
	}}
}

// ventricularQRS is a wide complex from a right-ventricular (right=true,
// leftward and posterior spread, QS in V1) or left-ventricular focus
// (rightward and anterior, tall R in V1); inferior tilts the frontal part.
func ventricularQRS(right bool, inferior float64) group {
	sx, sz := 1.0, 1.0
	if !right {
		sx, sz = -1, -1
	}
	return group{waves: []wave{
		{c: -0.022, sigma: 0.020, v: vec{0.55 * sx, 0.35 * inferior, 0.55 * sz}},
		{c: 0.020, sigma: 0.024, v: vec{1.05 * sx, 0.60 * inferior, 0.65 * sz}},
	}}
}

// discordantT returns a T group opposite in direction to the QRS group's
// mean vector, with magnitude frac of it.
func discordantT(q group, frac float64) group {
	var m vec
	for _, w := range q.waves {
		for k := range m {
			m[k] += w.v[k]
		}
	}
	return group{waves: []wave{
		{c: -0.025, sigma: 0.050, v: vec{-frac * 0.6 * m[0], -frac * 0.6 * m[1], -frac * 0.6 * m[2]}},
		{c: 0.030, sigma: 0.035, v: vec{-frac * 0.4 * m[0], -frac * 0.4 * m[1], -frac * 0.4 * m[2]}},
	}}
}

// withAxis rotates a QRS template (and its T template alike) so the net
// QRS axis is target degrees, iterating because the net-amplitude axis is
// not a linear function of the rotation.
func withAxis(q, t group, target float64) (group, group) {
	d := 0.0
	var cur group
	for range 8 {
		cur = q.rotated(d)
		err := target - cur.netAxis()
		err = math.Remainder(err, 360)
		if math.Abs(err) < 0.05 {
			break
		}
		d += err * math.Pi / 180
	}
	return cur, t.rotated(d)
}
