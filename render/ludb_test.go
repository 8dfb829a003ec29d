package render

import (
	"image"
	"math"
	"path/filepath"
	"testing"

	"tracelift/export/wfdb"
	"tracelift/internal/refdata"
)

// TestTraceCoverageLUDB prints a real 12-lead record (LUDB record 1,
// 500 Hz, 10 s; Kalyakulina et al., PhysioNet LUDB 1.0.1) on a 3x4+1
// page and checks every column of every panel: the rows inked at least
// half-way must be exactly those whose centre lies within half the stroke
// width of the record's polyline, as mapped by the truth (distance computed
// here independently of the renderer's rasteriser). The top and bottom ink
// edges must agree within 1 px in ≥ 99 % of columns and within 2 px in all.
// Sharp QRS complexes make this a much harder check than the sine test.
func TestTraceCoverageLUDB(t *testing.T) {
	dir := refdata.Dir(t, "ludb")
	rec, _, err := wfdb.ReadRecord(filepath.Join(dir, "1.hea"))
	if err != nil {
		t.Fatal(err)
	}
	p, err := Render(rec, &Options{Layout: Layout3x4R1, DPI: 200})
	if err != nil {
		t.Fatal(err)
	}
	img := p.Image.(*image.RGBA)
	tr := p.Truth
	h := tr.TraceWidthMM * tr.PxPerMMX / 2
	lines := panelPolylines(t, tr, rec) // the record has no NaN samples
	inside := func(u, v float64) bool {
		for _, l := range lines {
			if len(l) == 0 || u < l[0][0]-h-1 || u > l[len(l)-1][0]+h+1 {
				continue
			}
			// Segments near column u (x increases along the polyline).
			lo := 0
			for lo+1 < len(l) && l[lo+1][0] < u-h {
				lo++
			}
			for i := lo; i+1 < len(l) && l[i][0] <= u+h; i++ {
				if segDist(u, v, l[i], l[i+1]) < h {
					return true
				}
			}
		}
		return false
	}
	var cols, within1 int
	var worst float64
	for k, pn := range tr.Panels {
		l := lines[k]
		u0, _ := tr.PaperToPx(pn.X0MM+8, 0) // clear of the lead label
		u1, _ := tr.PaperToPx(pn.X1MM-1, 0) // clear of the column tick
		for u := int(math.Ceil(u0)); u <= int(u1); u++ {
			// Expected inked rows near this panel's trace.
			ymin, ymax := math.Inf(1), math.Inf(-1)
			for _, q := range l {
				if math.Abs(q[0]-float64(u)) <= h+1 {
					ymin, ymax = math.Min(ymin, q[1]), math.Max(ymax, q[1])
				}
			}
			if math.IsInf(ymin, 0) {
				continue
			}
			y0, y1 := int(ymin-h-6), int(ymax+h+6)
			et, eb, mt, mb := -1, -1, -1, -1
			for y := y0; y <= y1; y++ {
				if inside(float64(u), float64(y)) {
					if et < 0 {
						et = y
					}
					eb = y
				}
				if ink(img, u, y) > 112 {
					if mt < 0 {
						mt = y
					}
					mb = y
				}
			}
			if et < 0 || mt < 0 {
				t.Fatalf("%s column %d: expected rows %d–%d, inked %d–%d", pn.Lead, u, et, eb, mt, mb)
			}
			d := math.Max(math.Abs(float64(et-mt)), math.Abs(float64(eb-mb)))
			worst = math.Max(worst, d)
			if d <= 1 {
				within1++
			}
			cols++
		}
	}
	frac := float64(within1) / float64(cols)
	t.Logf("LUDB 1 at 200 dpi: %d columns, %.2f %% with ink edges within 1 px, worst %.0f px", cols, 100*frac, worst)
	if frac < 0.99 || worst > 2 {
		t.Errorf("ink edges: %.2f %% within 1 px (want ≥ 99 %%), worst %.0f px (want ≤ 2)", 100*frac, worst)
	}
}

// segDist is the distance from (x, y) to segment ab.
func segDist(x, y float64, a, b [2]float64) float64 {
	dx, dy := b[0]-a[0], b[1]-a[1]
	l2 := dx*dx + dy*dy
	f := 0.0
	if l2 > 0 {
		f = math.Max(0, math.Min(1, ((x-a[0])*dx+(y-a[1])*dy)/l2))
	}
	return math.Hypot(x-a[0]-f*dx, y-a[1]-f*dy)
}
