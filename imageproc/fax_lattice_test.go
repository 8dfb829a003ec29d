package imageproc

import (
	"math"
	"testing"
)

// TestKeepLattice: line flags of one family (two segments of 600 px) are
// kept only where they form runs of lines at one pitch. Cases seen on
// binarised fax pages (flagLines): dashed 5 mm vertical lines with QRS
// stroke columns between them; trace baselines 15 mm apart on a page
// without horizontal lines; QRS up- and down-strokes 3–5 px apart.
func TestKeepLattice(t *testing.T) {
	const n = 600
	for _, tc := range []struct {
		name      string
		lines     []float64 // line centres (each flagged 2 px thick) in both segments
		want      []bool    // kept, per line
		wantPitch float64   // 0: no lattice
	}{
		{
			name:      "5 mm lattice at 40.15 px with strokes between",
			lines:     []float64{20, 60.15, 72, 100.3, 140.45, 153, 180.6, 220.75, 260.9, 301.05, 333, 341.2},
			want:      []bool{true, true, false, true, true, false, true, true, true, true, false, true},
			wantPitch: 40.15,
		},
		{
			name:  "trace baselines 15 mm apart",
			lines: []float64{40, 160, 281, 400, 520},
			want:  []bool{false, false, false, false, false},
		},
		{
			name:  "QRS stroke triplets",
			lines: []float64{100, 103, 107, 210, 213, 216, 330, 334, 337},
			want:  make([]bool, 9),
		},
	} {
		t.Run(tc.name, func(t *testing.T) {
			line := make([]bool, 2*n)
			for s := 0; s < 2; s++ {
				for _, c := range tc.lines {
					i := int(math.Floor(c))
					line[s*n+i], line[s*n+i+1] = true, true
				}
			}
			pitch := keepLattice(line, n, 64)
			if tc.wantPitch == 0 && pitch != 0 || tc.wantPitch != 0 && math.Abs(pitch-tc.wantPitch) > 0.3 {
				t.Errorf("pitch %.2f, want %.2f", pitch, tc.wantPitch)
			}
			for s := 0; s < 2; s++ {
				for k, c := range tc.lines {
					i := int(math.Floor(c))
					if got := line[s*n+i] && line[s*n+i+1]; got != tc.want[k] {
						t.Errorf("segment %d line at %.1f: kept %v, want %v", s, c, got, tc.want[k])
					}
				}
			}
		})
	}
}
