package cli

import (
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"strings"

	"github.com/spf13/cobra"

	"tracelift/ecg"
	"tracelift/export"
	"tracelift/internal/atomicfile"
	"tracelift/render"
	"tracelift/synth"
)

// renderOptions are the options of `tracelift render`.
type renderOptions struct {
	Input     string // record file (.hea); "" with Synthetic
	Synthetic bool

	// Synthetic record parameters (see synth.Params).
	HR, Axis, PR, QRS, QT float64
	DurationS, NoiseMV    float64
	HRVms, Ectopic        float64
	Amplitude             float64
	Seed                  uint64

	Out, PDF, Truth string

	Layout, Paper, Grid, GridColor, Condition, RhythmLead string
	Speed, Gain, DPI, TraceWidthMM                        float64
	NoHeader                                              bool
	Quiet                                                 bool
}

func newRenderCmd(ios *IOStreams, runF func(*renderOptions) error) *cobra.Command {
	o := &renderOptions{}
	cmd := &cobra.Command{
		Use:   "render [RECORD] -o PAGE.png",
		Short: "Print a digital or synthetic ECG on ECG paper (PNG, PDF) with a truth sidecar",
		Long: `render prints an ECG record onto a picture of ECG paper: a 1 mm / 5 mm grid,
a 1 mV calibration pulse at the start of every row, lead labels, column
ticks and a header. The record is a file (CSV with a time column, WFDB
.hea, EDF/EDF+ .edf, HL7 aECG .xml) or, with --synthetic, a seeded
synthetic 12-lead ECG.

-o writes a PNG raster, --pdf a PDF with vector traces and grid, --truth a
JSON sidecar saying exactly where every lead, time window and pulse was
printed (the ground truth for testing a digitiser; see README).

--condition adds a simulated scan, fax or phone photo to the PNG:
` + strings.Join(render.ConditionNames(), ", ") + `.
"overlap" also sets 20 mm/mV unless --gain is given.

Layouts: ` + strings.Join(render.LayoutNames(), ", ") + `.
Synthetic records and demo headers describe fictional patients.`,
		Example: `  tracelift render --synthetic --hr 88 --axis -20 -o page.png --truth page.json
  tracelift render --synthetic --layout 6x2 --grid green --pdf page.pdf
  tracelift render --synthetic --condition fax --seed 4 -o fax.png --truth fax.json
  tracelift render record.hea --layout rhythm --lead V5 -o strip.png`,
		Args: cobra.MaximumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if len(args) == 1 {
				o.Input = args[0]
			}
			if err := o.check(cmd); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return runRender(ios, o)
		},
	}
	f := cmd.Flags()
	f.BoolVar(&o.Synthetic, "synthetic", false, "print a synthetic 12-lead record instead of a file")
	f.Float64Var(&o.HR, "hr", 70, "synthetic heart rate, beats/min")
	f.Float64Var(&o.Axis, "axis", 60, "synthetic frontal QRS axis, degrees")
	f.Float64Var(&o.PR, "pr", 0, "synthetic PR interval, ms (0 = 160)")
	f.Float64Var(&o.QRS, "qrs", 0, "synthetic QRS duration, ms (0 = 90)")
	f.Float64Var(&o.QT, "qt", 0, "synthetic QT interval, ms (0 = QTc 400 ms by Fridericia)")
	f.Float64Var(&o.DurationS, "duration", 10, "synthetic record length, s")
	f.Float64Var(&o.NoiseMV, "noise", 0, "synthetic white noise, mV RMS")
	f.Float64Var(&o.HRVms, "hrv", 0, "synthetic RR variability, ms SD")
	f.Float64Var(&o.Ectopic, "ectopic", 0, "synthetic fraction of ectopic beats (0–0.3)")
	f.Float64Var(&o.Amplitude, "amplitude", 1, "synthetic amplitude scale")
	f.Uint64Var(&o.Seed, "seed", 1, "seed of the synthetic record, demo header and scan simulation")
	f.StringVarP(&o.Out, "out", "o", "", "PNG page to write")
	f.StringVar(&o.PDF, "pdf", "", "PDF page to write (vector traces)")
	f.StringVar(&o.Truth, "truth", "", "truth sidecar (JSON) to write")
	f.StringVar(&o.Layout, "layout", render.Layout3x4R1, "page layout: "+strings.Join(render.LayoutNames(), ", "))
	f.StringVar(&o.Paper, "paper", render.PaperA4, "paper: A4, Letter or strip (one long row)")
	f.Float64Var(&o.Speed, "speed", 25, "paper speed, mm/s (25 or 50)")
	f.Float64Var(&o.Gain, "gain", 10, "gain, mm/mV (5, 10 or 20)")
	f.Float64Var(&o.DPI, "dpi", 300, "PNG resolution, dots per inch")
	f.StringVar(&o.Grid, "grid", "red", "grid: a colour (red, pink, orange, green, blue, grey) or a style (lines, dots, major, none)")
	f.StringVar(&o.GridColor, "grid-color", "", "grid colour for --grid dots/major/lines: a preset or #rrggbb")
	f.StringVar(&o.Condition, "condition", "", "simulated capture: "+strings.Join(render.ConditionNames(), ", "))
	f.StringVar(&o.RhythmLead, "lead", "II", "lead of the rhythm layout and of strips")
	f.Float64Var(&o.TraceWidthMM, "trace-width", 0.3, "trace stroke width, mm")
	f.BoolVar(&o.NoHeader, "no-header", false, "print no header or footer text")
	f.BoolVarP(&o.Quiet, "quiet", "q", false, "print nothing but errors")
	return cmd
}

// check validates flag values and combinations.
func (o *renderOptions) check(cmd *cobra.Command) error {
	switch {
	case o.Synthetic && o.Input != "":
		return flagErrorf("render: give a record file or --synthetic, not both")
	case !o.Synthetic && o.Input == "":
		return flagErrorf("render: give a record file (CSV, .hea, .edf, aECG .xml) or --synthetic")
	case o.Out == "" && o.PDF == "" && o.Truth == "":
		return flagErrorf("render: nothing to write: give -o PAGE.png, --pdf PAGE.pdf or --truth PAGE.json")
	case o.Out != "" && !strings.EqualFold(filepath.Ext(o.Out), ".png"):
		// -o writes PNG bytes; a .jpg or .tif name would mislabel them.
		return flagErrorf("render: -o %s: the page is written as PNG, so its name must end in .png (use --pdf for PDF)", o.Out)
	}
	if !hasString(render.LayoutNames(), o.Layout) {
		return flagErrorf("render: unknown --layout %q (want %s)", o.Layout, strings.Join(render.LayoutNames(), ", "))
	}
	if !hasString([]string{"a4", "letter", "strip"}, strings.ToLower(o.Paper)) {
		return flagErrorf("render: unknown --paper %q (want A4, Letter or strip)", o.Paper)
	}
	if _, err := o.grid(); err != nil {
		return err
	}
	if o.Condition != "" && !hasString(render.ConditionNames(), o.Condition) {
		return flagErrorf("render: unknown --condition %q (want %s)", o.Condition, strings.Join(render.ConditionNames(), ", "))
	}
	if o.Condition == "overlap" && !cmd.Flags().Changed("gain") {
		o.Gain = 20
	}
	if _, err := ecg.ParseLead(o.RhythmLead); err != nil {
		return flagErrorf("render: unknown --lead %q", o.RhythmLead)
	}
	switch {
	case o.Speed < 5 || o.Speed > 200:
		return flagErrorf("render: --speed must be between 5 and 200 mm/s (usually 25 or 50), got %g", o.Speed)
	case o.Gain < 1 || o.Gain > 100:
		return flagErrorf("render: --gain must be between 1 and 100 mm/mV (usually 5, 10 or 20), got %g", o.Gain)
	case o.DPI < 50 || o.DPI > 1200:
		return flagErrorf("render: --dpi must be between 50 and 1200, got %g", o.DPI)
	case o.TraceWidthMM <= 0 || o.TraceWidthMM > 3:
		return flagErrorf("render: --trace-width must be in (0, 3] mm, got %g", o.TraceWidthMM)
	case o.Synthetic && (o.DurationS <= 0 || o.DurationS > 3600):
		return flagErrorf("render: --duration must be in (0, 3600] s, got %g", o.DurationS)
	}
	return nil
}

// grid turns --grid and --grid-color into a render.Grid.
func (o *renderOptions) grid() (render.Grid, error) {
	g := render.Grid{Kind: render.GridLines, Color: o.GridColor}
	v := strings.ToLower(o.Grid)
	switch {
	case hasString([]string{render.GridLines, render.GridDots, render.GridMajor, render.GridNone}, v):
		g.Kind = v
	case hasString(render.GridColorNames(), v) || v == "gray":
		if g.Color == "" {
			g.Color = v
		}
	default:
		return g, flagErrorf("render: unknown --grid %q (want a colour: %s; or a style: lines, dots, major, none)",
			o.Grid, strings.Join(render.GridColorNames(), ", "))
	}
	if g.Color != "" && !hasString(render.GridColorNames(), strings.ToLower(g.Color)) && strings.ToLower(g.Color) != "gray" &&
		!(len(g.Color) == 7 && g.Color[0] == '#') {
		return g, flagErrorf("render: unknown --grid-color %q (want %s or #rrggbb)", g.Color, strings.Join(render.GridColorNames(), ", "))
	}
	return g, nil
}

// options builds the render options.
func (o *renderOptions) options(rec *ecg.Record) (*render.Options, error) {
	g, err := o.grid()
	if err != nil {
		return nil, err
	}
	lead, _ := ecg.ParseLead(o.RhythmLead)
	ro := &render.Options{
		Paper: o.Paper, Layout: o.Layout, SpeedMMPerS: o.Speed, GainMMPerMV: o.Gain, DPI: o.DPI,
		Grid: g, TraceWidthMM: o.TraceWidthMM, RhythmLead: lead, Condition: o.Condition,
	}
	var h render.Header
	if o.Synthetic {
		h = render.DemoHeader(o.Seed)
	} else {
		h = render.HeaderFromMeta(rec.Meta)
		if h.Extra == "" && rec.Meta.Source != "" {
			h.Extra = "Record " + rec.Meta.Source
		}
	}
	h.Hidden = o.NoHeader
	ro.Header = &h
	if o.Condition != "" {
		sc, err := render.ConditionScan(o.Condition, o.DPI, o.Seed)
		if err != nil {
			return nil, &FlagError{Err: err}
		}
		ro.Scan = sc
	}
	return ro, nil
}

// record reads or generates the record to print.
func (o *renderOptions) record() (ecg.Record, error) {
	if o.Synthetic {
		p := synth.Default()
		p.HeartRateBPM, p.AxisDeg, p.PRMS, p.QRSMS, p.QTMS = o.HR, o.Axis, o.PR, o.QRS, o.QT
		p.DurationS, p.NoiseMV, p.HRVStdMS, p.EctopicRate, p.AmplitudeScale = o.DurationS, o.NoiseMV, o.HRVms, o.Ectopic, o.Amplitude
		rec, err := synth.Generate(p, o.Seed)
		if err != nil {
			if errors.Is(err, synth.ErrParams) {
				return rec, &FlagError{Err: fmt.Errorf("render: %w", err)}
			}
			return rec, fmt.Errorf("render: %w", err)
		}
		return rec, nil
	}
	rec, err := export.ReadRecord(o.Input)
	if err != nil {
		if !errors.Is(err, ecg.ErrUnreadable) && !errors.Is(err, ecg.ErrNoECG) {
			err = fmt.Errorf("%w: %w", ecg.ErrUnreadable, err)
		}
		return rec, fmt.Errorf("render: %w", err)
	}
	return rec, nil
}

func runRender(ios *IOStreams, o *renderOptions) error {
	rec, err := o.record()
	if err != nil {
		return err
	}
	ro, err := o.options(&rec)
	if err != nil {
		return err
	}
	var page *render.Page
	if o.Out != "" || o.Truth != "" {
		page, err = render.Render(rec, ro)
		if err != nil {
			return renderErr(o, err)
		}
	}
	if o.Out != "" {
		if err := writeRenderFile(o.Out, page.WritePNG); err != nil {
			return err
		}
	}
	if o.PDF != "" {
		if err := writeRenderFile(o.PDF, func(w io.Writer) error { return render.WritePDF(w, rec, ro) }); err != nil {
			return renderErr(o, err)
		}
	}
	if o.Truth != "" {
		if err := writeRenderFile(o.Truth, page.WriteTruth); err != nil {
			return err
		}
	}
	if !o.Quiet {
		for _, p := range []string{o.Out, o.PDF, o.Truth} {
			if p != "" {
				fmt.Fprintf(ios.Out, "wrote %s\n", p)
			}
		}
		if page != nil {
			t := page.Truth
			fmt.Fprintf(ios.Out, "%s %s, %d×%d px, %g mm/s, %g mm/mV, %d panels\n", t.Paper, t.Layout, t.WidthPx, t.HeightPx, t.SpeedMMPerS, t.GainMMPerMV, len(t.Panels))
		}
	}
	return nil
}

// renderErr turns invalid-option errors into usage errors.
func renderErr(o *renderOptions, err error) error {
	if errors.Is(err, render.ErrOption) {
		return &FlagError{Err: err}
	}
	if o.Input != "" {
		return fmt.Errorf("%s: %w", o.Input, err)
	}
	return err
}

// writeRenderFile writes path atomically (a temporary file renamed into
// place), so a failure never leaves a half-written file. Errors name the
// file and wrap ecg.ErrOutput, except an invalid render option, which is
// returned as it is: the page could not be made, nothing failed to write.
func writeRenderFile(path string, write func(io.Writer) error) error {
	var optErr error
	err := atomicfile.WriteFile(path, func(w io.Writer) error {
		err := write(w)
		if errors.Is(err, render.ErrOption) {
			optErr = err
		}
		return err
	})
	if optErr != nil {
		return optErr
	}
	return err
}
