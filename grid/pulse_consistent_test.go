package grid

import (
	"testing"
	"tracelift/imageproc"
	"tracelift/render"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

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

// TestPulseNotFromGridLines: on a colour page, consecutive R waves whose
// tops and feet fall on dark red major lines are not a calibration pulse.
// A 125 bpm rhythm strip (corpus record 3) was read at 4.2 mm/mV from two
// such "pulses", which outvoted the real 10 mm one.
func TestPulseNotFromGridLines(t *testing.T) {
	if testing.Short() {
		t.Skip("renders a full page")
	}
	rec, err := render.CorpusRecord(3, false)
	require.NoError(t, err)
	o, err := render.ConditionOptions("clean", 3)
	require.NoError(t, err)
	o.Layout = "rhythm"
	pg, err := render.Render(rec, o)
	require.NoError(t, err)
	p, err := imageproc.Prepare(pg.Image, nil)
	require.NoError(t, err)
	r, err := Detect(p, nil)
	require.NoError(t, err)
	assert.Equal(t, FromPulse, r.Calibration.GainMMPerMV.Origin)
	assert.InDelta(t, pg.Truth.GainMMPerMV, r.Calibration.GainMMPerMV.V, 0.01)
	for _, q := range r.Pulses {
		assert.InDelta(t, 10, q.HeightMM, 0.3, "pulse at x %.0f px", q.X0)
	}
}
