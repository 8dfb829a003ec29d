package grid

import "testing"

// Four real pulses (10 mm tall, 5 mm wide at 11.81 px/mm) among as many
// pulse-like candidates of another shape (pairs of QRS complexes whose
// tops run along a grid line): the real pulses must survive, though the
// median width belongs to the impostors. Case seen on a rendered 3x4+1
// page (clean condition, seed 3).
func TestConsistentKeepsLargestGroup(t *testing.T) {
	var ps []Pulse
	for r := range 4 {
		y := 600 + 520*float64(r)
		ps = append(ps, Pulse{X0: 247.5, X1: 306.5, TopY: y - 118, BaseY: y})
	}
	for _, c := range [][3]float64{{431, 575, 30}, {444, 588, 37}, {576, 726, 34}, {725, 873, 25.5}} {
		ps = append(ps, Pulse{X0: c[0], X1: c[1], TopY: 2000 - c[2], BaseY: 2000})
	}
	got := consistent(ps)
	if len(got) != 4 {
		t.Fatalf("kept %d pulses, want the 4 real ones: %+v", len(got), got)
	}
	for _, p := range got {
		if p.X0 != 247.5 {
			t.Errorf("kept an impostor %+v", p)
		}
	}
}
