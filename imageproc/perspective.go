package imageproc

import (
	"image"
	"math"

	"gonum.org/v1/gonum/mat"
)

// perspective is a projective correction estimated on the (turned) work
// image: toWork maps upright work pixels to turned work pixels; the
// upright page is w×h work pixels.
type perspective struct {
	toWork Homography
	w, h   float64
}

// tileAngle is one tile's measured direction of a line family.
type tileAngle struct {
	cx, cy float64 // tile centre, work px
	a      float64 // counter-clockwise angle, radians
}

// estimatePerspective measures the directions of the horizontal and
// vertical line families of lineMap in a 4×3 array of tiles. When they
// vary across the page more than a plain rotation allows, it returns the
// projective correction that sends both families' vanishing points to
// infinity and aligns the families with the axes (affine rectification
// from the line at infinity; Hartley & Zisserman 2004, §2.7, from memory).
// photo says a sheet edge was seen (paperMask): the image is a photo.
// It returns nil when a rotation suffices or the estimate is unreliable.
func estimatePerspective(lineMap *image.Gray, theta float64, photo bool) *perspective {
	w, h := lineMap.Rect.Dx(), lineMap.Rect.Dy()
	nx, ny := 4, 3
	if h > w {
		nx, ny = 3, 4
	}
	thr := strengthThreshold(lineMap)
	var hs, vs []tileAngle
	span := 3 * math.Pi / 180
	step := 0.05 * math.Pi / 180
	for ty := 0; ty < ny; ty++ {
		for tx := 0; tx < nx; tx++ {
			r := image.Rect(tx*w/nx, ty*h/ny, (tx+1)*w/nx, (ty+1)*h/ny)
			sub := lineMap.SubImage(r).(*image.Gray)
			pts := collectPoints(sub, thr, 25000)
			if len(pts.x) < 200 {
				continue
			}
			cx, cy := float64(r.Min.X+r.Max.X-1)/2, float64(r.Min.Y+r.Max.Y-1)/2
			if a, ok := tileDirection(pts, theta, span, step, horizontal); ok {
				hs = append(hs, tileAngle{cx, cy, a})
			}
			if a, ok := tileDirection(pts, theta, span, step, vertical); ok {
				vs = append(vs, tileAngle{cx, cy, a})
			}
		}
	}
	if len(hs) < 4 || len(vs) < 4 {
		return nil
	}
	spread := func(t []tileAngle) (lo, hi, mean float64) {
		lo, hi = math.Inf(1), math.Inf(-1)
		for _, v := range t {
			lo, hi = min(lo, v.a), max(hi, v.a)
			mean += v.a
		}
		return lo, hi, mean / float64(len(t))
	}
	hl, hh, hm := spread(hs)
	vl, vh, vm := spread(vs)
	// A perspective tilts both families across the page. On a scan the
	// spread comes from noise (traces, text), so without a sheet edge seen
	// (photo) demand a clear tilt in both.
	flat := 0.25 * math.Pi / 180
	if !photo {
		flat = 0.5 * math.Pi / 180
		if hh-hl < flat || vh-vl < flat || len(hs) < 6 || len(vs) < 6 {
			return nil
		}
	}
	if hh-hl < flat && vh-vl < flat && math.Abs(hm-vm) < flat {
		return nil
	}
	// Normalised coordinates: centred, unit half-size.
	s := 2 / float64(max(w, h))
	N := Homography{s, 0, -s * float64(w-1) / 2, 0, s, -s * float64(h-1) / 2, 0, 0, 1}
	vpH, ok1 := vanishingPoint(hs, N, false)
	vpV, ok2 := vanishingPoint(vs, N, true)
	if !ok1 || !ok2 {
		return nil
	}
	linf := cross(vpH, vpV)
	if math.Abs(linf[2]) < 1e-12 {
		return nil
	}
	l := [3]float64{linf[0] / linf[2], linf[1] / linf[2], 1}
	Hp := Homography{1, 0, 0, 0, 1, 0, l[0], l[1], l[2]}
	// The page must lie on one side of the line at infinity, far from it.
	corners := [4]Point{{0, 0}, {float64(w - 1), 0}, {0, float64(h - 1)}, {float64(w - 1), float64(h - 1)}}
	for _, c := range corners {
		x, y := Apply(N, c.X, c.Y)
		if l[0]*x+l[1]*y+1 < 0.2 {
			return nil
		}
	}
	// Family directions after Hp (vanishing points at infinity).
	dh := applyVec(Hp, vpH)
	dv := applyVec(Hp, vpV)
	ux, uy := dh[0], dh[1]
	if ux < 0 {
		ux, uy = -ux, -uy
	}
	vx, vy := dv[0], dv[1]
	if vy < 0 {
		vx, vy = -vx, -vy
	}
	nu, nv := math.Hypot(ux, uy), math.Hypot(vx, vy)
	if nu == 0 || nv == 0 {
		return nil
	}
	ux, uy, vx, vy = ux/nu, uy/nu, vx/nv, vy/nv
	// A maps u → (1,0) and v → (0,1): the inverse of [u v].
	det := ux*vy - vx*uy
	if math.Abs(det) < 0.5 {
		return nil // families far from perpendicular: not a grid
	}
	A := Homography{vy / det, -vx / det, 0, -uy / det, ux / det, 0, 0, 0, 1}
	M := Mul(A, Mul(Hp, N)) // turned work px → rectified (arbitrary scale)
	var mn, mx Point = Point{math.Inf(1), math.Inf(1)}, Point{math.Inf(-1), math.Inf(-1)}
	for _, c := range corners {
		x, y := Apply(M, c.X, c.Y)
		mn.X, mn.Y = min(mn.X, x), min(mn.Y, y)
		mx.X, mx.Y = max(mx.X, x), max(mx.Y, y)
	}
	area := (mx.X - mn.X) * (mx.Y - mn.Y)
	if !(area > 0) {
		return nil
	}
	k := math.Sqrt(float64(w*h) / area)
	T := Homography{k, 0, -k * mn.X, 0, k, -k * mn.Y, 0, 0, 1}
	fwd := Mul(T, M)
	inv, ok := Invert(fwd)
	if !ok {
		return nil
	}
	pw, ph := k*(mx.X-mn.X), k*(mx.Y-mn.Y)
	if pw > 3*float64(w) || ph > 3*float64(h) {
		return nil
	}
	return &perspective{toWork: inv, w: pw, h: ph}
}

// tileDirection finds one family's angle in a tile and checks that the
// sharpness peak stands out from its surroundings.
func tileDirection(p *points, theta, span, step float64, fam family) (float64, bool) {
	// Coarse (4 steps) over the span, then fine around the best.
	a0, _ := p.searchAngle(theta-span, theta+span, 4*step, fam)
	a, best := p.searchAngle(a0-5*step, a0+5*step, step/2, fam)
	buf := make([]float64, 2*p.span+4)
	far := p.sharpness(theta+span, fam, buf) + p.sharpness(theta-span, fam, buf)
	if best < 0.6*far {
		return 0, false
	}
	return a, true
}

// vanishingPoint returns the homogeneous point (in N's coordinates)
// closest, in least squares, to all tile lines: the eigenvector of
// Σ l lᵀ with the smallest eigenvalue.
func vanishingPoint(t []tileAngle, N Homography, vert bool) ([3]float64, bool) {
	var m [9]float64
	for _, v := range t {
		var dx, dy float64
		if vert {
			dx, dy = math.Sin(v.a), math.Cos(v.a)
		} else {
			dx, dy = math.Cos(v.a), -math.Sin(v.a)
		}
		x0, y0 := Apply(N, v.cx, v.cy)
		x1, y1 := Apply(N, v.cx+50*dx, v.cy+50*dy)
		l := cross([3]float64{x0, y0, 1}, [3]float64{x1, y1, 1})
		n := math.Hypot(l[0], l[1])
		if n == 0 {
			continue
		}
		for i := 0; i < 3; i++ {
			for j := 0; j < 3; j++ {
				m[3*i+j] += l[i] * l[j] / (n * n)
			}
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(mat.NewSymDense(3, m[:]), true) {
		return [3]float64{}, false
	}
	var ev mat.Dense
	eig.VectorsTo(&ev)
	vals := eig.Values(nil)
	k := 0
	for i := range vals {
		if vals[i] < vals[k] {
			k = i
		}
	}
	return [3]float64{ev.At(0, k), ev.At(1, k), ev.At(2, k)}, true
}

func cross(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}

func applyVec(h Homography, v [3]float64) [3]float64 {
	return [3]float64{
		h[0]*v[0] + h[1]*v[1] + h[2]*v[2],
		h[3]*v[0] + h[4]*v[1] + h[5]*v[2],
		h[6]*v[0] + h[7]*v[1] + h[8]*v[2],
	}
}
