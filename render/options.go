package render

import (
	"errors"
	"fmt"
	"image/color"
	"math"
	"strconv"
	"strings"
	"time"

	"tracelift/ecg"
	"tracelift/scansim"
)

// Paper names.
const (
	PaperA4     = "A4"     // 297 × 210 mm landscape
	PaperLetter = "Letter" // 279.4 × 215.9 mm landscape
	PaperStrip  = "strip"  // one long single-lead row; width from the record's duration
)

// Layout names.
const (
	Layout3x4        = "3x4"
	Layout3x4R1      = "3x4+1"
	Layout3x4R3      = "3x4+3"
	Layout6x2        = "6x2"
	Layout12x1       = "12x1"
	LayoutCabrera3x4 = "cabrera-3x4"
	LayoutRhythm     = "rhythm"
)

// Grid kinds.
const (
	GridLines = "lines" // 1 mm minor and 5 mm major lines
	GridDots  = "dots"  // dots at the 1 mm intersections, bigger at 5 mm
	GridMajor = "major" // 5 mm lines only
	GridNone  = "none"  // blank paper
)

// LayoutNames lists the layouts Render accepts.
func LayoutNames() []string {
	return []string{Layout3x4, Layout3x4R1, Layout3x4R3, Layout6x2, Layout12x1, LayoutCabrera3x4, LayoutRhythm}
}

// PaperNames lists the papers Render accepts.
func PaperNames() []string { return []string{PaperA4, PaperLetter, PaperStrip} }

// GridColorNames lists the grid colour presets.
func GridColorNames() []string { return []string{"red", "pink", "orange", "green", "blue", "grey"} }

// gridPresets are full-strength grid ink colours; minor lines are printed
// lighter (see gridStyle).
var gridPresets = map[string]color.NRGBA{
	"red":    {0xe0, 0x3a, 0x3a, 0xff},
	"pink":   {0xf0, 0x7c, 0x9a, 0xff},
	"orange": {0xec, 0x8a, 0x30, 0xff},
	"green":  {0x38, 0x9e, 0x5a, 0xff},
	"blue":   {0x3a, 0x74, 0xd0, 0xff},
	"grey":   {0x80, 0x80, 0x80, 0xff},
	"gray":   {0x80, 0x80, 0x80, 0xff},
}

// ErrOption is wrapped by errors about invalid Options values.
var ErrOption = errors.New("render: invalid option")

// Grid describes the printed grid.
type Grid struct {
	// Kind is GridLines, GridDots, GridMajor or GridNone; "" means lines.
	Kind string
	// Color is a preset name (red, pink, orange, green, blue, grey) or
	// "#rrggbb"; "" means red.
	Color string
}

// Header is the text printed above the grid. Every field is free text;
// empty fields are left out.
type Header struct {
	Hidden    bool   // print no header and no footer at all
	Clinic    string // first line, bold
	Name      string // patient name
	ID        string // patient identifier
	Date      string // acquisition date and time as printed
	Device    string // device text
	Extra     string // one more free line (for example "Synthetic record")
	Filter    string // filter setting for the footer, e.g. "0.05–150 Hz"
	FooterTag string // right-hand footer text
}

// Options controls Render and WritePDF. A nil *Options, and every zero
// field, means the default.
type Options struct {
	Paper        string  // PaperA4 (default), PaperLetter or PaperStrip
	Layout       string  // one of LayoutNames(); default "3x4+1" (ignored for strips)
	SpeedMMPerS  float64 // paper speed, mm/s; default 25
	GainMMPerMV  float64 // gain, mm/mV; default 10
	DPI          float64 // raster resolution, dots per inch; default 300
	Grid         Grid
	TraceWidthMM float64     // trace stroke width, mm; default 0.3
	TraceColor   color.Color // default near-black
	// Header is the printed header; nil means one built from the record's
	// metadata (HeaderFromMeta).
	Header *Header
	// RhythmLead is the lead of the "rhythm" layout and of strips;
	// LeadUnknown means II (or the record's first lead if II is absent).
	RhythmLead ecg.Lead
	// Scan, if set, is applied last to the finished page by the scan
	// simulation (scansim.Apply); the truth geometry (PaperToImage,
	// PxPerMM, RotationDeg, size) includes its homography.
	Scan *scansim.Options
	// Condition is a name recorded in the truth (e.g. "clean", "fax").
	Condition string
}

// resolved holds validated options with defaults filled in.
type resolved struct {
	paper, layout    string
	speed, gain, dpi float64
	gridKind         string
	gridColor        color.NRGBA
	traceWidth       float64
	traceColor       color.NRGBA
	header           Header
	rhythmLead       ecg.Lead
	scan             *scansim.Options
	condition        string
}

func resolve(rec *ecg.Record, opt *Options) (resolved, error) {
	var o Options
	if opt != nil {
		o = *opt
	}
	r := resolved{
		paper: o.Paper, layout: o.Layout, speed: o.SpeedMMPerS, gain: o.GainMMPerMV,
		dpi: o.DPI, gridKind: o.Grid.Kind, traceWidth: o.TraceWidthMM,
		rhythmLead: o.RhythmLead, scan: o.Scan, condition: o.Condition,
	}
	switch strings.ToLower(r.paper) {
	case "", "a4":
		r.paper = PaperA4
	case "letter":
		r.paper = PaperLetter
	case "strip":
		r.paper = PaperStrip
	default:
		return r, fmt.Errorf("%w: unknown paper %q (want A4, Letter or strip)", ErrOption, o.Paper)
	}
	if r.layout == "" {
		r.layout = Layout3x4R1
	}
	if !validLayout(r.layout) {
		return r, fmt.Errorf("%w: unknown layout %q (want one of %s)", ErrOption, r.layout, strings.Join(LayoutNames(), ", "))
	}
	if r.paper == PaperStrip {
		r.layout = LayoutRhythm
	}
	if r.speed == 0 {
		r.speed = 25
	}
	if r.gain == 0 {
		r.gain = 10
	}
	if r.dpi == 0 {
		r.dpi = 300
	}
	if r.traceWidth == 0 {
		r.traceWidth = 0.3
	}
	if !(r.speed >= 5 && r.speed <= 200) {
		return r, fmt.Errorf("%w: speed %g mm/s out of range 5–200", ErrOption, r.speed)
	}
	if !(r.gain >= 1 && r.gain <= 100) {
		return r, fmt.Errorf("%w: gain %g mm/mV out of range 1–100", ErrOption, r.gain)
	}
	if !(r.dpi >= 50 && r.dpi <= 1200) {
		return r, fmt.Errorf("%w: dpi %g out of range 50–1200", ErrOption, r.dpi)
	}
	if !(r.traceWidth > 0 && r.traceWidth <= 3) {
		return r, fmt.Errorf("%w: trace width %g mm out of range (0, 3]", ErrOption, r.traceWidth)
	}
	switch r.gridKind {
	case "":
		r.gridKind = GridLines
	case GridLines, GridDots, GridMajor, GridNone:
	default:
		return r, fmt.Errorf("%w: unknown grid kind %q (want lines, dots, major or none)", ErrOption, r.gridKind)
	}
	c, err := parseColor(o.Grid.Color)
	if err != nil {
		return r, err
	}
	r.gridColor = c
	r.traceColor = color.NRGBA{0x1a, 0x1a, 0x1e, 0xff}
	if o.TraceColor != nil {
		r.traceColor = color.NRGBAModel.Convert(o.TraceColor).(color.NRGBA)
		r.traceColor.A = 0xff
	}
	if o.Header != nil {
		r.header = *o.Header
	} else {
		r.header = HeaderFromMeta(rec.Meta)
	}
	if r.rhythmLead == ecg.LeadUnknown {
		r.rhythmLead = ecg.LeadII
		if rec.Signal(ecg.LeadII) == nil && len(rec.Signals) > 0 {
			r.rhythmLead = rec.Signals[0].Lead
		}
	}
	return r, nil
}

func validLayout(s string) bool {
	for _, l := range LayoutNames() {
		if s == l {
			return true
		}
	}
	return false
}

// parseColor reads a preset name or "#rrggbb"; "" is red.
func parseColor(s string) (color.NRGBA, error) {
	if s == "" {
		return gridPresets["red"], nil
	}
	if c, ok := gridPresets[strings.ToLower(s)]; ok {
		return c, nil
	}
	if len(s) == 7 && s[0] == '#' {
		v, err := strconv.ParseUint(s[1:], 16, 32)
		if err == nil {
			return color.NRGBA{uint8(v >> 16), uint8(v >> 8), uint8(v), 0xff}, nil
		}
	}
	return color.NRGBA{}, fmt.Errorf("%w: unknown grid colour %q (want a preset or #rrggbb)", ErrOption, s)
}

func hexColor(c color.NRGBA) string { return fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B) }

// HeaderFromMeta builds a header from a record's metadata.
func HeaderFromMeta(m ecg.Metadata) Header {
	h := Header{Clinic: m.Institution, Name: m.PatientName, ID: m.PatientID, Device: m.Device, Filter: m.Filter}
	if !m.Acquired.IsZero() {
		h.Date = m.Acquired.Format("2006-01-02 15:04")
	}
	if m.Source == "synthetic" {
		h.Extra = "Synthetic record — not from a patient"
	}
	return h
}

// DemoHeader returns a header with invented, fictional metadata (clinic,
// patient, date) chosen by seed, for demo pages and the synthetic corpus.
// No real person or institution is meant.
func DemoHeader(seed uint64) Header {
	clinics := []string{"Harbourside Community Clinic", "Northvale Heart Centre", "Juniper Street Health Practice", "Lakemont Cardiology Unit"}
	first := []string{"Ada", "Bram", "Coral", "Dev", "Elin", "Faro", "Gwen", "Hollis", "Ines", "Jory"}
	last := []string{"Quillfeather", "Marchbank", "Osterly", "Penhallow", "Rudd-Vane", "Tamsworth", "Ellery", "Brightwater"}
	x := seed*0x9E3779B97F4A7C15 + 0x632BE59BD9B4E019
	pick := func(n int) int {
		x ^= x >> 29
		x *= 0xBF58476D1CE4E5B9
		x ^= x >> 32
		return int(x % uint64(n))
	}
	day := time.Date(2026, 1, 5, 8, 30, 0, 0, time.UTC).Add(time.Duration(pick(300*24*4)) * 15 * time.Minute)
	return Header{
		Clinic: clinics[pick(len(clinics))],
		Name:   last[pick(len(last))] + ", " + first[pick(len(first))] + " (demo)",
		ID:     fmt.Sprintf("DEMO-%06d", pick(1000000)),
		Date:   day.Format("2006-01-02 15:04"),
		Device: "tracelift render — synthetic 12-lead",
		Extra:  "Fictional demo patient — not a real person",
		Filter: "0.05–150 Hz",
	}
}

// pxPerMM returns dpi/25.4.
func pxPerMM(dpi float64) float64 { return dpi / 25.4 }

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
