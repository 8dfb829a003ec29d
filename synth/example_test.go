package synth_test

import (
	"fmt"

	"tracelift/synth"
)

// A 10 s record at 60 bpm with a long PR: the true fiducials of each beat
// come with it.
func ExampleGenerate() {
	p := synth.Default()
	p.HeartRateBPM, p.PRMS = 60, 220
	rec, err := synth.Generate(p, 1)
	if err != nil {
		fmt.Println(err)
		return
	}
	b := rec.Beats[2]
	fmt.Printf("%d leads, %d beats, %.0f Hz\n", len(rec.Signals), len(rec.Beats), rec.Signals[0].SampleRate)
	fmt.Printf("PR %.0f ms, QRS %.0f ms, QT %.0f ms\n", 1000*(b.QRSOn-b.POn), 1000*(b.QRSOff-b.QRSOn), 1000*(b.TEnd-b.QRSOn))
	// Output:
	// 12 leads, 10 beats, 500 Hz
	// PR 220 ms, QRS 90 ms, QT 400 ms
}
