package trace

import (
	"testing"

	"github.com/stretchr/testify/assert"
)

// TestDropExcursions: a path's stretches past the half-way limits are kept
// while they are as short as a complex (maxLen) and, at either end of the
// path, only while they are as short as a complex cut by the column's edge
// (endLen); a stretch that runs to the end of the path longer than that
// stayed on the neighbouring row's trace.
func TestDropExcursions(t *testing.T) {
	const base, lim, maxLen, endLen = 100.0, 50.0, 60.0, 24.0
	// path: x = 0 … n−1 at base, except far (y = 20, 80 px above) over
	// the given x intervals [a, b).
	path := func(n int, far ...[2]int) []Point {
		pts := make([]Point, n)
		for x := range pts {
			pts[x] = Point{float64(x), base}
			for _, f := range far {
				if x >= f[0] && x < f[1] {
					pts[x].Y = base - 80
				}
			}
		}
		return pts
	}
	cases := []struct {
		name    string
		pts     []Point
		dropped int
	}{
		{"complex in the middle kept", path(200, [2]int{80, 120}), 0},
		{"long stay in the middle dropped", path(200, [2]int{50, 150}), 100},
		{"short stretch at the end kept", path(200, [2]int{190, 200}), 0},
		{"long stretch at the end dropped", path(200, [2]int{160, 200}), 40},
		{"long stretch at the start dropped", path(200, [2]int{0, 40}), 40},
		{"short stretch at the start kept", path(200, [2]int{0, 10}), 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			out, onInk := dropExcursions(c.pts, len(c.pts), base, lim, lim, maxLen, endLen)
			assert.Len(t, out, len(c.pts)-c.dropped)
			assert.Equal(t, len(c.pts)-c.dropped, onInk)
			for _, p := range out {
				if c.dropped > 0 {
					assert.Equal(t, base, p.Y, "x %v: every far point dropped", p.X)
				}
			}
		})
	}
}
