package imageproc

import "math"

// Mesh is a smooth map from upright page pixels to input pixels, sampled
// at nodes every Step pixels and bilinearly interpolated between them. It
// carries what a homography cannot: a lens or paper-curl warp removed by
// the lattice registration of a photo.
type Mesh struct {
	// Step is the node spacing, upright px; node (i, j) sits at upright
	// (i·Step, j·Step).
	Step int
	// NX, NY are the numbers of node columns and rows.
	NX, NY int
	// X, Y are the input-pixel coordinates of node (i, j) at index
	// j·NX + i.
	X, Y []float64
	// LatticePeriod is the period of the major (5 mm) grid lines the
	// page was registered to, upright px, the same on both axes (the
	// registered lattice is square); 0 when unknown, or when the grid
	// area seen, taken at 5 mm per period, would be larger than an ECG
	// sheet (450 mm; then the minor lines were more likely registered).
	LatticePeriod float64
}

// newMesh samples f at the nodes covering a w×h upright page.
func newMesh(w, h, step int, f func(x, y float64) (float64, float64)) *Mesh {
	nx, ny := (w-1)/step+2, (h-1)/step+2
	m := &Mesh{Step: step, NX: nx, NY: ny, X: make([]float64, nx*ny), Y: make([]float64, nx*ny)}
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			m.X[j*nx+i], m.Y[j*nx+i] = f(float64(i*step), float64(j*step))
		}
	}
	return m
}

// At maps an upright point (px) to input px; outside the nodes it
// extrapolates linearly from the border cells.
func (m *Mesh) At(x, y float64) (float64, float64) {
	fx, fy := x/float64(m.Step), y/float64(m.Step)
	i := min(max(int(math.Floor(fx)), 0), m.NX-2)
	j := min(max(int(math.Floor(fy)), 0), m.NY-2)
	ax, ay := fx-float64(i), fy-float64(j)
	k := j*m.NX + i
	bl := func(v []float64) float64 {
		return (1-ay)*((1-ax)*v[k]+ax*v[k+1]) + ay*((1-ax)*v[k+m.NX]+ax*v[k+m.NX+1])
	}
	return bl(m.X), bl(m.Y)
}

// SourcePoint maps an upright page point (px, pixel centres at integer
// coordinates) to the input image's pixels through the page's full
// mapping: the registration mesh when there is one, else ToSource. Use it
// (not ToSource) to draw on the input image.
func (p *Page) SourcePoint(x, y float64) (float64, float64) {
	if p.Mesh != nil {
		return p.Mesh.At(x, y)
	}
	return Apply(p.ToSource, x, y)
}
