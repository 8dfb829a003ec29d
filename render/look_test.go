package render

import (
	"os"
	"path/filepath"
	"testing"

	"tracelift/ecg"
	"tracelift/synth"
)

// TestLook writes sample pages for visual inspection when
// TRACELIFT_RENDER_LOOK names a folder; it checks nothing else.
func TestLook(t *testing.T) {
	dir := os.Getenv("TRACELIFT_RENDER_LOOK")
	if dir == "" {
		t.Skip("set TRACELIFT_RENDER_LOOK to a folder to write sample pages")
	}
	p := synth.Default()
	p.HRVStdMS = 30
	p.NoiseMV = 0.01
	p.BaselineWanderMV = 0.05
	rec, err := synth.Generate(p, 3)
	if err != nil {
		t.Fatal(err)
	}
	p.DurationS = 90
	long, err := synth.Generate(p, 4)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		rec  ecg.Record
		o    Options
	}{
		{"3x4+1-red", rec, Options{Layout: "3x4+1"}},
		{"3x4-pink-letter", rec, Options{Layout: "3x4", Paper: PaperLetter, Grid: Grid{Color: "pink"}}},
		{"3x4+3-orange", rec, Options{Layout: "3x4+3", Grid: Grid{Color: "orange"}}},
		{"6x2-green-dots", rec, Options{Layout: "6x2", Grid: Grid{Kind: GridDots, Color: "green"}}},
		{"12x1-blue-major", rec, Options{Layout: "12x1", Grid: Grid{Kind: GridMajor, Color: "blue"}, GainMMPerMV: 5}},
		{"cabrera-grey", rec, Options{Layout: "cabrera-3x4", Grid: Grid{Color: "grey"}}},
		{"rhythm-none", long, Options{Layout: "rhythm", Grid: Grid{Kind: GridNone}}},
		{"3x4+1-50mms-20mmmV", rec, Options{Layout: "3x4+1", SpeedMMPerS: 50, GainMMPerMV: 20}},
		{"strip", rec, Options{Paper: PaperStrip}},
	}
	for _, c := range cases {
		h := DemoHeader(uint64(len(c.name)))
		c.o.Header = &h
		if c.o.DPI == 0 {
			c.o.DPI = 150
		}
		pg, err := Render(c.rec, &c.o)
		if err != nil {
			t.Fatal(err)
		}
		f, err := os.Create(filepath.Join(dir, c.name+".png"))
		if err != nil {
			t.Fatal(err)
		}
		if err := pg.WritePNG(f); err != nil {
			t.Fatal(err)
		}
		f.Close()
	}
}
