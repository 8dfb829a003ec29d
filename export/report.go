package export

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"sort"

	"tracelift/ecg"
	"tracelift/internal/atomicfile"
	"tracelift/measure"
)

// ReportVersion is the version of the JSON report layout written by
// WriteJSON. Readers should refuse versions they do not know.
const ReportVersion = 1

// Caution is the sentence every report carries.
const Caution = "Measurements of a digitised tracing can be wrong and are never a diagnosis. " +
	"Verify them against the original tracing; clinical decisions rest with qualified " +
	"clinicians under local rules and licensed practice."

// Value is a calibration number with where it came from ("grid", "pulse",
// "option", "metadata", "default"; see grid.Origin). A NaN value is
// written as null.
type Value struct {
	Value  measure.Num `json:"value"`
	Origin string      `json:"origin"`
}

// Calibration is the page calibration in plain numbers (the pipeline
// copies it from grid.Calibration; this package imports no image code).
type Calibration struct {
	PxPerMMX    Value `json:"px_per_mm_x"`  // pixels per mm along x (time)
	PxPerMMY    Value `json:"px_per_mm_y"`  // pixels per mm along y (voltage)
	SpeedMMPerS Value `json:"speed_mm_s"`   // paper speed, mm/s
	GainMMPerMV Value `json:"gain_mm_mv"`   // gain, mm/mV
	RotationDeg Value `json:"rotation_deg"` // deskew angle applied, degrees (counter-clockwise positive)
}

// Layout describes how the leads were arranged on the page.
type Layout struct {
	Name        string   `json:"name"`         // e.g. "3x4+1" (3 rows of 4 columns plus 1 rhythm strip)
	Rows        int      `json:"rows"`         // rows of lead panels, rhythm strips excluded
	Columns     int      `json:"columns"`      // columns of lead panels
	RhythmLeads []string `json:"rhythm_leads"` // leads printed as full-width rhythm strips
	Origin      string   `json:"origin"`       // "detected", "option" or "default"
}

// LeadInfo is one lead's coverage and digitising quality.
type LeadInfo struct {
	Lead        string      `json:"lead"`         // standard name ("I", "aVR", "V1"…)
	StartS      measure.Num `json:"start_s"`      // first recorded sample, s on the record's time base
	EndS        measure.Num `json:"end_s"`        // just after the last recorded sample, s
	CoveredS    float64     `json:"covered_s"`    // seconds with a value (NaN samples excluded)
	Quality     measure.Num `json:"quality"`      // 0 (unusable) … 1 (clean), from trace following; null when unknown
	Derived     bool        `json:"derived"`      // computed from other leads (Einthoven/Goldberger), not traced
	Flags       []string    `json:"flags"`        // per-lead flags, e.g. "clipped", "gap", "low_quality"
	SampleHz    float64     `json:"sample_hz"`    // sample rate, Hz
	AmplitudeMV measure.Num `json:"amplitude_mv"` // peak-to-peak over the recorded samples, mV
}

// SelfCheck is the limb-lead consistency residual (ecg.CheckLimb): how
// far the traced limb leads depart from III = II − I and the Goldberger
// relations where three or more overlap.
type SelfCheck struct {
	ResidualUV measure.Num        `json:"residual_uv"` // RMS residual, µV; null when no three limb leads overlap
	PerLeadUV  map[string]float64 `json:"per_lead_uv"` // per-lead RMS residual, µV
	Seconds    float64            `json:"seconds"`     // time over which three or more limb leads overlap, s
}

// Source names the input.
type Source struct {
	File string `json:"file"` // input file name as given
	Page int    `json:"page"` // 1-based page of a multi-page input; 0 if not paged
}

// Flag is a pipeline-level observation (not a measurement flag; those are
// in measurements.flags).
type Flag struct {
	Code    string `json:"code"`
	Message string `json:"message"`
}

// Report is the JSON report of one digitised (or read) record.
type Report struct {
	Version     int          `json:"version"`   // ReportVersion
	Generator   string       `json:"generator"` // program and version, e.g. "tracelift 0.1.0"
	Source      Source       `json:"source"`
	Calibration *Calibration `json:"calibration"` // null when the input was not an image
	Layout      *Layout      `json:"layout"`      // null when the input was not an image
	SampleHz    float64      `json:"sample_hz"`   // common sample rate of the record, Hz
	DurationS   float64      `json:"duration_s"`  // record span, s
	Leads       []LeadInfo   `json:"leads"`
	SelfCheck   SelfCheck    `json:"self_check"`
	// Measurements are the intervals, axes, amplitudes, beats and flags
	// from package measure; null when measurement failed or was not run.
	Measurements *measure.Report `json:"measurements"`
	Flags        []Flag          `json:"flags"`
	Warnings     []string        `json:"warnings"`
	Caution      string          `json:"caution"`
}

// NewReport starts a report for rec: version, caution, source, sample
// rate, span, per-lead coverage and amplitude, and the limb-lead
// self-check. The caller adds calibration, layout, quality, measurements,
// flags and warnings.
func NewReport(rec ecg.Record) *Report {
	r := &Report{
		Version:  ReportVersion,
		Source:   Source{File: rec.Meta.Source, Page: rec.Meta.Page},
		Leads:    []LeadInfo{},
		Flags:    []Flag{},
		Warnings: []string{},
		Caution:  Caution,
	}
	start, end := rec.Span()
	r.DurationS = finite(end - start)
	for _, s := range rec.Signals {
		if s.SampleRate > 0 && !math.IsInf(s.SampleRate, 0) {
			r.SampleHz = math.Max(r.SampleHz, s.SampleRate)
		}
		li := LeadInfo{Lead: s.Lead.String(), StartS: measure.NaN(), EndS: measure.NaN(), Quality: measure.NaN(),
			AmplitudeMV: measure.NaN(), SampleHz: finite(s.SampleRate), Flags: []string{}}
		if first, last, ok := s.ValidSpan(); ok && s.SampleRate > 0 && !math.IsInf(s.SampleRate, 0) && !math.IsNaN(s.Start) && !math.IsInf(s.Start, 0) {
			li.StartS, li.EndS = measure.Num(s.Time(first)), measure.Num(s.Time(last)+1/s.SampleRate)
			lo, hi := math.Inf(1), math.Inf(-1)
			n := 0
			for _, v := range s.Samples[first : last+1] {
				if !math.IsNaN(v) && !math.IsInf(v, 0) {
					lo, hi = math.Min(lo, v), math.Max(hi, v)
					n++
				}
			}
			li.CoveredS = float64(n) / s.SampleRate
			if n > 0 {
				li.AmplitudeMV = measure.Num(hi - lo)
			}
		}
		r.Leads = append(r.Leads, li)
	}
	r.SelfCheck = SelfCheck{ResidualUV: measure.NaN(), PerLeadUV: map[string]float64{}}
	if c, ok := ecg.CheckLimb(&rec); ok {
		r.SelfCheck.ResidualUV = measure.Num(c.ResidualUV)
		r.SelfCheck.Seconds = c.Seconds
		keys := make([]ecg.Lead, 0, len(c.PerLeadUV))
		for l := range c.PerLeadUV {
			keys = append(keys, l)
		}
		sort.Slice(keys, func(i, j int) bool { return keys[i] < keys[j] })
		for _, l := range keys {
			r.SelfCheck.PerLeadUV[l.String()] = c.PerLeadUV[l]
		}
	}
	return r
}

// finite returns v, or 0 when v is NaN or infinite (JSON has neither).
func finite(v float64) float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0
	}
	return v
}

// Lead returns the report's entry for a lead name, or nil.
func (r *Report) Lead(name string) *LeadInfo {
	for i := range r.Leads {
		if r.Leads[i].Lead == name {
			return &r.Leads[i]
		}
	}
	return nil
}

// WriteJSON writes the report as indented JSON. It sets Version and
// Caution if the caller left them empty.
func WriteJSON(w io.Writer, r *Report) error {
	c := *r
	if c.Version == 0 {
		c.Version = ReportVersion
	}
	if c.Caution == "" {
		c.Caution = Caution
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	if err := enc.Encode(&c); err != nil {
		return fmt.Errorf("export: json report: %w: %w", ecg.ErrOutput, err)
	}
	return nil
}

// WriteJSONFile writes the report to path atomically.
func WriteJSONFile(path string, r *Report) error {
	if err := atomicfile.WriteFile(path, func(w io.Writer) error { return WriteJSON(w, r) }); err != nil {
		return fmt.Errorf("export: json report: %w", err)
	}
	return nil
}

// ReadJSON reads a report written by WriteJSON. It refuses versions other
// than ReportVersion. Errors wrap ecg.ErrUnreadable.
func ReadJSON(rd io.Reader) (*Report, error) {
	var r Report
	dec := json.NewDecoder(rd)
	if err := dec.Decode(&r); err != nil {
		return nil, fmt.Errorf("export: json report: %w: %w", ecg.ErrUnreadable, err)
	}
	if r.Version != ReportVersion {
		return nil, fmt.Errorf("export: json report: version %d, this program reads version %d: %w", r.Version, ReportVersion, ecg.ErrUnreadable)
	}
	return &r, nil
}

// ReadJSONFile reads a report file; errors name the file.
func ReadJSONFile(path string) (*Report, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("export: %w: %w", ecg.ErrUnreadable, err)
	}
	defer f.Close()
	r, err := ReadJSON(f)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return r, nil
}
