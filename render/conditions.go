package render

import (
	"fmt"
	"iter"
	"math/rand/v2"

	"tracelift/ecg"
	"tracelift/scansim"
	"tracelift/synth"
)

// conditionNames are the named evaluation conditions.
var conditionNames = []string{"clean", "scan", "gray", "fax", "photo", "lowres", "penmarks", "overlap"}

// ConditionNames lists the conditions ConditionOptions accepts.
func ConditionNames() []string { return append([]string(nil), conditionNames...) }

// ConditionOptions returns complete render options for a named evaluation
// condition, with the random choices (layout, paper, grid colour and
// style, header, scan parameters) drawn deterministically from seed:
//
//   - clean: 300 dpi, no scan simulation.
//   - scan, gray, fax, photo, lowres, penmarks: 300 dpi, then the scansim
//     preset of the same name (colour scan; grey scan; binarised fax at
//     204 × 98/196 dpi; phone photo with tilt, lens and lighting;
//     100–150 dpi; scan with ballpoint strokes).
//   - overlap: 20 mm/mV on a 3x4+1 or 3x4+3 page so tall complexes run
//     into the neighbouring rows, then the "scan" preset.
//
// Unknown names wrap ErrOption.
func ConditionOptions(name string, seed uint64) (*Options, error) {
	known := false
	for _, c := range conditionNames {
		known = known || c == name
	}
	if !known {
		return nil, fmt.Errorf("%w: unknown condition %q (want one of %v)", ErrOption, name, conditionNames)
	}
	rng := rand.New(rand.NewPCG(seed, seed^0xc0d1710))
	pick := func(s []string) string { return s[rng.IntN(len(s))] }
	layouts := []string{Layout3x4R1, Layout3x4R1, Layout3x4R1, Layout3x4, Layout3x4R3, Layout6x2, Layout12x1, LayoutCabrera3x4}
	o := &Options{
		Paper:     pick([]string{PaperA4, PaperA4, PaperLetter}),
		Layout:    pick(layouts),
		DPI:       300,
		Grid:      Grid{Kind: pick([]string{GridLines, GridLines, GridLines, GridLines, GridDots, GridMajor}), Color: pick(GridColorNames())},
		Condition: name,
	}
	if rng.IntN(4) == 0 {
		o.TraceWidthMM = 0.2 + 0.25*rng.Float64()
	}
	h := DemoHeader(rng.Uint64())
	o.Header = &h
	if name == "overlap" {
		o.GainMMPerMV = 20
		o.Layout = pick([]string{Layout3x4R1, Layout3x4R3})
		o.Grid.Kind = GridLines
	}
	so, err := ConditionScan(name, o.DPI, rng.Uint64())
	if err != nil {
		return nil, err
	}
	o.Scan = so
	return o, nil
}

// ConditionScan returns the scan simulation of a named condition for a
// page rendered at dpi (the scansim preset of the same name; "overlap"
// uses "scan"), or nil for "clean". Use it when changing the DPI of
// options from ConditionOptions, whose presets are drawn for 300 dpi.
func ConditionScan(name string, dpi float64, seed uint64) (*scansim.Options, error) {
	switch name {
	case "clean":
		return nil, nil
	case "overlap":
		name = "scan"
	}
	so, err := scansim.Preset(name, dpi, seed)
	if err != nil {
		return nil, fmt.Errorf("render: condition %s: %w: %w", name, ErrOption, err)
	}
	return &so, nil
}

// CorpusRecord returns a synthetic 10 s 12-lead record with heart rate,
// axis, amplitudes, intervals, rhythm variability, ectopic beats and noise
// drawn from seed (within adult ranges that the synthetic model supports),
// for the evaluation corpus. Tall is for the "overlap" condition: larger
// amplitudes.
func CorpusRecord(seed uint64, tall bool) (ecg.Record, error) {
	rng := rand.New(rand.NewPCG(seed, seed^0x5eed))
	u := func(a, b float64) float64 { return a + (b-a)*rng.Float64() }
	p := synth.Default()
	p.HeartRateBPM = u(48, 130)
	p.AxisDeg = u(-30, 100)
	p.AmplitudeScale = u(0.7, 1.5)
	if tall {
		p.AmplitudeScale = u(1.4, 2.0)
	}
	p.HRVStdMS = u(0, 40)
	p.PRMS = u(130, 210)
	p.QRSMS = u(75, 115)
	if rng.IntN(4) == 0 {
		p.EctopicRate = u(0.05, 0.15)
	}
	p.NoiseMV = u(0, 0.02)
	p.BaselineWanderMV = u(0, 0.1)
	rec, err := synth.Generate(p, rng.Uint64())
	if err != nil {
		return ecg.Record{}, fmt.Errorf("render: corpus record %d: %w", seed, err)
	}
	return rec, nil
}

// CorpusPage renders corpus item i of a condition: the record
// CorpusRecord(seed+i) printed with ConditionOptions(condition, seed+i).
// The same (seed, condition, i) always gives the same page.
func CorpusPage(seed uint64, condition string, i int) (*Page, error) {
	s := seed + uint64(i)*0x9E3779B97F4A7C15
	o, err := ConditionOptions(condition, s)
	if err != nil {
		return nil, err
	}
	rec, err := CorpusRecord(s, condition == "overlap")
	if err != nil {
		return nil, err
	}
	return Render(rec, o)
}

// Corpus yields corpus pages 0 … n−1 of a condition (CorpusPage(seed,
// condition, i)) one at a time, so a caller never holds more than one
// 300-dpi page; it stops early if the caller stops or after an error.
func Corpus(seed uint64, condition string, n int) iter.Seq2[*Page, error] {
	return func(yield func(*Page, error) bool) {
		for i := range n {
			p, err := CorpusPage(seed, condition, i)
			if !yield(p, err) || err != nil {
				return
			}
		}
	}
}
