package pipeline

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"tracelift/ecg"
	"tracelift/grid"
	"tracelift/imageproc"
	"tracelift/imageproc/decode"
	"tracelift/measure"
	"tracelift/trace"
)

// Config chooses what Run may not detect by itself. The zero value detects
// everything.
type Config struct {
	// Layout is the page layout; nil means detect it from the page.
	Layout *trace.Layout
	// SpeedMMPerS is the paper speed in mm/s; 0 means detect (else the
	// standard 25 mm/s).
	SpeedMMPerS float64
	// GainMMPerMV is the gain in mm/mV; 0 means measure it from the
	// calibration pulses (else the standard 10 mm/mV).
	GainMMPerMV float64
	// DPI is a scan resolution given by the user, dots per inch (both
	// axes), used where the grid cannot be measured; 0 means none (the
	// file's resolution metadata, carried by the decoded page, is still
	// used as a fallback).
	DPI float64
	// SampleRate is the output sample rate in Hz; 0 means 500 Hz.
	SampleRate float64
	// MaxPixels bounds the page size for the front end; 0 means its
	// default.
	MaxPixels int
}

// Stage names, as used in Result.Timings.
const (
	StagePrepare = "prepare"
	StageGrid    = "grid"
	StageTrace   = "trace"
	StageMeasure = "measure"
)

// Timing is one stage's wall-clock time.
type Timing struct {
	Stage   string
	Elapsed time.Duration
}

// Result keeps every intermediate of a run. Fields of stages that did not
// run are nil.
type Result struct {
	Source   decode.Page     // the input page (Image shared, not copied)
	Page     *imageproc.Page // upright, rectified page with ink and grid separated
	Grid     *grid.Result    // calibration, pulses and grid geometry
	Trace    *trace.Result   // layout, panels, record and quality
	Report   *measure.Report // measurements; nil if measuring failed
	Timings  []Timing        // per stage, in order
	Warnings []string        // every stage's warnings, prefixed with the stage
}

// Record returns the digitised record, or nil before trace extraction.
func (r *Result) Record() *ecg.Record {
	if r == nil || r.Trace == nil {
		return nil
	}
	return &r.Trace.Record
}

// Calibration returns the calibration the record was made with: the
// trace stage's (which may re-read the gain from the rows' pulses) once
// it ran, else the grid stage's; ok is false before the grid stage.
func (r *Result) Calibration() (c grid.Calibration, ok bool) {
	switch {
	case r == nil:
		return c, false
	case r.Trace != nil:
		return r.Trace.Calibration, true
	case r.Grid != nil:
		return r.Grid.Calibration, true
	}
	return c, false
}

// Elapsed returns the total time of the stages that ran.
func (r *Result) Elapsed() time.Duration {
	var d time.Duration
	for _, t := range r.Timings {
		d += t.Elapsed
	}
	return d
}

// Run digitises one decoded page. It returns a non-nil Result with every
// stage that finished even when it fails, so that callers can show what
// was found. Errors wrap the classes of ecg/errors.go: ecg.ErrNoECG when no
// grid, pulse or trace is found; ecg.ErrPartial (with a usable Result)
// when some leads could not be read or measurement failed; ctx's error
// when cancelled between stages.
func Run(ctx context.Context, page decode.Page, cfg Config) (res *Result, err error) {
	c := cfg
	if c.SampleRate <= 0 {
		c.SampleRate = 500
	}
	if ctx == nil {
		ctx = context.Background()
	}
	res = &Result{Source: page}
	stage := ""
	// A panic in a stage is a bug, but one bad page must not bring down a
	// batch of thousands: report it as an internal error of this page.
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("pipeline: internal error in the %s stage (a bug, please report it): %v", stage, r)
		}
	}()
	if page.Image == nil {
		return res, fmt.Errorf("pipeline: %w: page %d has no image", ecg.ErrUnreadable, page.Index)
	}
	step := func(name string, f func() error) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		stage = name
		t0 := time.Now()
		err := f()
		res.Timings = append(res.Timings, Timing{name, time.Since(t0)})
		return err
	}

	err = step(StagePrepare, func() error {
		p, err := imageproc.Prepare(page.Image, &imageproc.Options{DPIX: page.DPIX, DPIY: page.DPIY, MaxPixels: c.MaxPixels})
		res.Page = p
		return err
	})
	if err != nil {
		return res, fmt.Errorf("pipeline: %w", err)
	}
	res.warn(StagePrepare, res.Page.Warnings)

	err = step(StageGrid, func() error {
		g, err := grid.Detect(res.Page, &grid.Options{DPIX: c.DPI, DPIY: c.DPI, SpeedMMPerS: c.SpeedMMPerS, GainMMPerMV: c.GainMMPerMV})
		res.Grid = g
		return err
	})
	if err != nil {
		return res, fmt.Errorf("pipeline: %w", err)
	}
	res.warn(StageGrid, res.Grid.Warnings)
	if err := plausible(res.Grid.Calibration); err != nil {
		return res, fmt.Errorf("pipeline: %w", err)
	}

	var partial error
	layout := atSpeed(c.Layout, res.Grid.Calibration.SpeedMMPerS.V)
	err = step(StageTrace, func() error {
		t, err := trace.Extract(res.Page.Ink, res.Grid.Calibration, res.Grid.Pulses,
			&trace.Options{Layout: layout, SampleRate: c.SampleRate, Bilevel: res.Page.Bilevel})
		res.Trace = t
		return err
	})
	switch {
	case err != nil && errors.Is(err, ecg.ErrPartial) && res.Trace != nil:
		partial = err
	case err != nil:
		return res, fmt.Errorf("pipeline: %w", err)
	}
	res.warn(StageTrace, res.Trace.Warnings)

	err = step(StageMeasure, func() error {
		r, err := measure.Measure(res.Trace.Record, nil)
		res.Report = r
		return err
	})
	if err != nil {
		if ctx.Err() != nil {
			return res, err
		}
		// The samples are still useful without measurements.
		res.warn(StageMeasure, []string{err.Error()})
		partial = errors.Join(partial, fmt.Errorf("%w: measurement failed: %v", ecg.ErrPartial, err))
	} else if res.Report != nil {
		res.warn(StageMeasure, res.Report.Warnings)
	}
	if partial != nil {
		return res, fmt.Errorf("pipeline: %w", partial)
	}
	return res, nil
}

// atSpeed fits a named standard layout to the paper speed: the standard
// layouts are defined at 25 mm/s (10 s over the 250 mm of a page), and at
// another speed the same arrangement covers 250 mm / speed seconds
// (standards.md §1.1–1.2; 5 s at 50 mm/s). Layout descriptions with their
// own seconds ("custom") and nil are returned as they are.
func atSpeed(l *trace.Layout, speedMMPerS float64) *trace.Layout {
	if l == nil || speedMMPerS <= 0 || speedMMPerS == 25 {
		return l
	}
	if _, standard := trace.StandardLayout(l.Name); !standard {
		return l
	}
	k := 25 / speedMMPerS
	out := &trace.Layout{Name: l.Name, Rows: make([]trace.Row, len(l.Rows))}
	for i, r := range l.Rows {
		out.Rows[i] = trace.Row{Rhythm: r.Rhythm, Cells: make([]trace.Cell, len(r.Cells))}
		for j, c := range r.Cells {
			c.T0S *= k
			c.T1S *= k
			out.Rows[i].Cells[j] = c
		}
	}
	return out
}

// MinPxPerMM is the coarsest resolution at which Run accepts a page:
// 2 px/mm (about 50 dpi). A 1 mm grid square then spans 2 px and a 0.1 mV
// step half a pixel; coarser images cannot carry a readable ECG (fax
// standard mode, the coarsest common source, has 3.85 lines/mm; ITU-T
// T.4, standards.md §6.1). A calibration this coarse arises only from
// mistaking something else for a calibration pulse.
const MinPxPerMM = 2.0

// plausible rejects calibrations no ECG page can have.
func plausible(c grid.Calibration) error {
	if c.PxPerMMX.V < MinPxPerMM || c.PxPerMMY.V < MinPxPerMM {
		return fmt.Errorf("%w: scale of %.2g × %.2g px/mm (%s) is too coarse for an ECG page (need ≥ %g px/mm)",
			ecg.ErrNoECG, c.PxPerMMX.V, c.PxPerMMY.V, c.PxPerMMX.Origin, MinPxPerMM)
	}
	return nil
}

func (r *Result) warn(stage string, ws []string) {
	for _, w := range ws {
		if !strings.HasPrefix(w, stage+": ") {
			w = stage + ": " + w
		}
		r.Warnings = append(r.Warnings, w)
	}
}
