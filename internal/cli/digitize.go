package cli

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/spf13/cobra"

	"tracelift/ecg"
	"tracelift/imageproc/decode"
	"tracelift/pipeline"
	"tracelift/trace"
)

// outputFormats are the values --format accepts; csv and json are always
// written.
var outputFormats = []string{"csv", "json", "edf", "wfdb", "wfdb212", "aecg", "svg", "png", "pdf"}

// availableFormats are the formats this build can write.
var availableFormats = outputFormats

// pipelineFlags are the digitising options shared by digitize and batch.
type pipelineFlags struct {
	Layout    string  // "auto" or a layout name/description
	SpeedMMS  float64 // 0 = detect (standard 25 mm/s)
	GainMMMV  float64 // 0 = detect from calibration pulses
	DPI       float64 // 0 = from file metadata or the grid
	RateHz    float64 // output sample rate
	Formats   []string
	MaxPixels int64
	formatArg string
}

func (p *pipelineFlags) register(cmd *cobra.Command) {
	f := cmd.Flags()
	f.StringVar(&p.Layout, "layout", "auto", `page layout: auto, 3x4, 3x4+1, 3x4+3, 6x2, 12x1, … (see README)`)
	f.Float64Var(&p.SpeedMMS, "speed", 0, "paper speed in mm/s (default: detect, else 25)")
	f.Float64Var(&p.GainMMMV, "gain", 0, "gain in mm/mV (default: from the calibration pulses, else 10)")
	f.Float64Var(&p.DPI, "dpi", 0, "scan resolution in dots per inch (default: from the grid and file metadata)")
	f.Float64Var(&p.RateHz, "rate", 500, "output sample rate in Hz")
	f.StringVar(&p.formatArg, "format", "csv,json", "outputs, comma list of "+strings.Join(outputFormats, ", ")+" (csv and json are always written)")
	f.Int64Var(&p.MaxPixels, "max-pixels", 200_000_000, "refuse images with more pixels than this")
}

// check validates the flag values; prefix names the command in messages.
func (p *pipelineFlags) check(prefix string) error {
	p.Formats = []string{"csv", "json"}
	for _, f := range strings.Split(p.formatArg, ",") {
		f = strings.ToLower(strings.TrimSpace(f))
		if f == "" {
			continue
		}
		if !hasString(outputFormats, f) {
			return flagErrorf("%s: unknown --format %q (want %s)", prefix, f, strings.Join(outputFormats, ", "))
		}
		if !hasString(availableFormats, f) {
			return flagErrorf("%s: --format %s is not available in this build (available: %s)", prefix, f, strings.Join(availableFormats, ", "))
		}
		if !hasString(p.Formats, f) {
			p.Formats = append(p.Formats, f)
		}
	}
	switch {
	case p.SpeedMMS < 0 || p.SpeedMMS > 1000:
		return flagErrorf("%s: --speed must be a positive paper speed in mm/s (usually 25 or 50), got %g", prefix, p.SpeedMMS)
	case p.GainMMMV < 0 || p.GainMMMV > 1000:
		return flagErrorf("%s: --gain must be a positive gain in mm/mV (usually 10, 5 or 20), got %g", prefix, p.GainMMMV)
	case p.DPI < 0 || p.DPI > 10000:
		return flagErrorf("%s: --dpi must be between 1 and 10000, got %g", prefix, p.DPI)
	case p.RateHz < 50 || p.RateHz > 10000:
		return flagErrorf("%s: --rate must be between 50 and 10000 Hz, got %g", prefix, p.RateHz)
	case p.MaxPixels < 1:
		return flagErrorf("%s: --max-pixels must be positive, got %d", prefix, p.MaxPixels)
	}
	return checkLayout(prefix, p.Layout)
}

func hasString(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// digitizeOptions are the options of `tracelift digitize`.
type digitizeOptions struct {
	Files  []string
	OutDir string
	Quiet  bool
	Pipe   pipelineFlags
}

func newDigitizeCmd(ios *IOStreams, runF func(*digitizeOptions) error) *cobra.Command {
	opts := &digitizeOptions{}
	cmd := &cobra.Command{
		Use:   "digitize FILE... -o DIR",
		Short: "Digitise ECG images (PNG, JPEG, TIFF, BMP, GIF, WebP, PDF) into calibrated data",
		Long: `digitize reads each FILE (every page of a multi-page TIFF or PDF), finds the
grid and calibration, follows every lead's trace and measures the record.
For each page it writes DIR/<name>.csv (samples in mV against seconds) and
DIR/<name>.json (calibration, layout, quality, measurements, beats,
warnings), and any other --format; later pages get -p2, -p3, … in their
names. A short summary per file is printed unless --quiet.

Measurements of a digitised tracing can be wrong and are never a diagnosis:
verify them against the original tracing; clinical decisions rest with
qualified clinicians under local rules and licensed practice.`,
		Example: `  tracelift digitize fax.png -o out/
  tracelift digitize scan.pdf -o out/ --format edf,wfdb,svg --speed 50`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Files = args
			if opts.OutDir == "" {
				return flagErrorf("digitize: the output folder is required (-o DIR)")
			}
			if err := opts.Pipe.check("digitize"); err != nil {
				return err
			}
			if runF != nil {
				return runF(opts)
			}
			return runDigitize(cmd.Context(), ios, opts)
		},
	}
	cmd.Flags().StringVarP(&opts.OutDir, "out", "o", "", "output folder (created if missing)")
	cmd.Flags().BoolVarP(&opts.Quiet, "quiet", "q", false, "print nothing but errors")
	opts.Pipe.register(cmd)
	return cmd
}

// pageOutcome is one page's result, reported as soon as it is done.
type pageOutcome struct {
	File    string // input path
	Index   int    // 1-based page
	Stem    string // output path without extension
	Result  *pipeline.Result
	Outputs []string
	Err     error // nil, partial, or the page's failure
}

func (p *pipelineFlags) config() (pipeline.Config, error) {
	c := pipeline.Config{SpeedMMPerS: p.SpeedMMS, GainMMPerMV: p.GainMMMV, DPI: p.DPI, SampleRate: p.RateHz, MaxPixels: int(p.MaxPixels)}
	if p.Layout != "" && p.Layout != "auto" {
		l, err := trace.ParseLayout(p.Layout)
		if err != nil {
			return c, err
		}
		c.Layout = l
	}
	return c, nil
}

func checkLayout(prefix, s string) error {
	if s == "" || s == "auto" {
		return nil
	}
	if _, err := trace.ParseLayout(s); err != nil {
		return flagErrorf("%s: --layout %q: %v", prefix, s, err)
	}
	return nil
}

// processor returns the real per-file function used by batch.
func (p *pipelineFlags) processor(ios *IOStreams) fileProcessor {
	return func(ctx context.Context, in, outBase string) (fileResult, error) {
		return digitizeFile(ctx, in, outBase, p, nil)
	}
}

// digitizeFile runs the pipeline on every page of inPath, writing each
// page's outputs next to outBase (outBase.csv, outBase-p2.csv, …). onPage,
// if not nil, is called after each page. The error is nil when every page
// succeeded, wraps ecg.ErrPartial when some outputs were written but some
// leads or pages failed, and otherwise wraps the class of the first
// failure.
func digitizeFile(ctx context.Context, inPath, outBase string, pf *pipelineFlags, onPage func(pageOutcome)) (fileResult, error) {
	res := fileResult{First: unknownSummary()}
	cfg, err := pf.config()
	if err != nil {
		return res, &FlagError{Err: err}
	}
	var pageErrs []error
	written := 0
	decErr := decode.Pages(inPath, &decode.Options{MaxPixels: pf.MaxPixels}, func(pg decode.Page) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		stem := outBase
		if pg.Index > 1 {
			stem = fmt.Sprintf("%s-p%d", outBase, pg.Index)
		}
		out := pageOutcome{File: inPath, Index: pg.Index, Stem: stem}
		r, err := pipeline.Run(ctx, pg, cfg)
		out.Result = r
		if err != nil && ctx.Err() != nil {
			return ctx.Err()
		}
		if err == nil || errors.Is(err, ecg.ErrPartial) {
			outs, werr := writeOutputs(stem, inPath, pg, r, pf.Formats, pf.Layout != "" && pf.Layout != "auto")
			out.Outputs = outs
			res.Outputs = append(res.Outputs, outs...)
			if werr != nil {
				err = werr
			} else {
				written++
				if res.Pages == 0 {
					res.First = summarize(r)
				}
				res.Pages++
			}
		}
		if err != nil {
			err = fmt.Errorf("%s%s: %w", filepath.Base(inPath), pageSuffix(pg.Index), err)
			pageErrs = append(pageErrs, err)
		}
		out.Err = err
		if onPage != nil {
			onPage(out)
		}
		if errors.Is(err, ecg.ErrOutput) {
			return err // the output folder is broken: later pages would fail too
		}
		return nil
	})
	if decErr != nil {
		if ctx.Err() != nil {
			return res, ctx.Err()
		}
		if !errors.Is(decErr, ecg.ErrOutput) || len(pageErrs) == 0 {
			if !strings.Contains(decErr.Error(), filepath.Base(inPath)) {
				decErr = fmt.Errorf("%s: %w", filepath.Base(inPath), decErr)
			}
			pageErrs = append(pageErrs, decErr)
		}
	}
	switch {
	case len(pageErrs) == 0:
		return res, nil
	case written > 0:
		// Something usable was written: the file as a whole is partial,
		// unless an output failed.
		worst := worstError(pageErrs)
		if errors.Is(worst, ecg.ErrOutput) {
			return res, worst
		}
		if len(pageErrs) == 1 && errors.Is(worst, ecg.ErrPartial) {
			return res, worst
		}
		return res, fmt.Errorf("%s: %w: %s", filepath.Base(inPath), ecg.ErrPartial, joinMessages(pageErrs))
	default:
		return res, worstError(pageErrs)
	}
}

func pageSuffix(i int) string {
	if i <= 1 {
		return ""
	}
	return fmt.Sprintf(" page %d", i)
}

func joinMessages(errs []error) string {
	var s []string
	for _, e := range errs {
		s = append(s, oneLine(e))
	}
	return strings.Join(s, "; ")
}

// severity ranks exit codes for "the worst class": internal errors first,
// then output, no-ECG, unreadable and partial.
func severity(code int) int {
	switch code {
	case ExitInternal:
		return 6
	case ExitOutput:
		return 5
	case ExitNoECG:
		return 4
	case ExitUnreadable:
		return 3
	case ExitPartial:
		return 2
	case ExitInterrupted:
		return 7
	case ExitUsage:
		return 1
	}
	return 0
}

func worstError(errs []error) error {
	var worst error
	for _, e := range errs {
		if worst == nil || severity(ExitCode(e)) > severity(ExitCode(worst)) {
			worst = e
		}
	}
	return worst
}

// summarize extracts the catalogue's key numbers from a result.
func summarize(r *pipeline.Result) pageSummary {
	s := unknownSummary()
	if r == nil || r.Trace == nil {
		return s
	}
	var q []float64
	for _, sig := range r.Trace.Record.Signals {
		if _, _, ok := sig.ValidSpan(); ok {
			s.Leads = append(s.Leads, sig.Lead.String())
			if v, ok := r.Trace.Quality[sig.Lead]; ok {
				q = append(q, v)
			}
		}
	}
	if len(q) > 0 {
		sum := 0.0
		for _, v := range q {
			sum += v
		}
		s.Quality = sum / float64(len(q))
	}
	if rep := r.Report; rep != nil {
		s.HR, s.PR, s.QRS, s.QT = float64(rep.HeartRateBPM), float64(rep.PRMS), float64(rep.QRSMS), float64(rep.QTMS)
		if v, ok := rep.QTcMS["bazett"]; ok {
			s.QTcB = v
		}
	}
	return s
}

func runDigitize(ctx context.Context, ios *IOStreams, opts *digitizeOptions) error {
	if ctx == nil {
		ctx = context.Background()
	}
	if err := os.MkdirAll(opts.OutDir, 0o755); err != nil {
		return fmt.Errorf("digitize: %s: %w: %v", opts.OutDir, ecg.ErrOutput, err)
	}
	bases := make(map[string]int)
	var errs []error
	failed := 0
	for _, f := range opts.Files {
		stem := strings.TrimSuffix(filepath.Base(f), filepath.Ext(f))
		bases[stem]++
		if bases[stem] > 1 { // two inputs with one name: keep both outputs
			stem = fmt.Sprintf("%s-%d", stem, bases[stem])
		}
		_, err := digitizeFile(ctx, f, filepath.Join(opts.OutDir, stem), &opts.Pipe, func(p pageOutcome) {
			if !opts.Quiet {
				printPageSummary(ios.Out, p)
			}
		})
		if ctx.Err() != nil {
			return fmt.Errorf("digitize: %w", errInterrupted)
		}
		if err != nil {
			errs = append(errs, err)
			if !errors.Is(err, ecg.ErrPartial) {
				failed++
			}
			if len(opts.Files) > 1 {
				fmt.Fprintf(ios.ErrOut, "tracelift: %s\n", oneLine(err))
			}
		}
	}
	switch {
	case len(errs) == 0:
		return nil
	case len(opts.Files) == 1:
		return errs[0]
	}
	w := worstError(errs)
	return fmt.Errorf("digitize: %d of %d files failed, %d partial (see above): %w", failed, len(opts.Files), len(errs)-failed, classOnly(w))
}

// classOnly returns the error class err wraps, for summary messages.
func classOnly(err error) error {
	for _, c := range []error{ecg.ErrOutput, ecg.ErrNoECG, ecg.ErrUnreadable, ecg.ErrPartial} {
		if errors.Is(err, c) {
			return c
		}
	}
	return err
}

// printPageSummary prints a page's short readable summary.
func printPageSummary(w io.Writer, p pageOutcome) {
	name := filepath.Base(p.File) + pageSuffix(p.Index)
	r := p.Result
	if r == nil || r.Trace == nil {
		return // failures are reported as errors
	}
	fmt.Fprintf(w, "%s\n", name)
	s := summarize(r)
	fmt.Fprintf(w, "  leads      %d found: %s\n", len(s.Leads), strings.Join(s.Leads, " "))
	if missing := missingLeads(r.Trace); len(missing) > 0 {
		fmt.Fprintf(w, "  missing    %s\n", strings.Join(missing, " "))
	}
	if crossed := r.Trace.CrossedLeads(); len(crossed) > 0 {
		names := make([]string, len(crossed))
		for i, l := range crossed {
			names[i] = l.String()
		}
		fmt.Fprintf(w, "  crossed    %s (other rows' strokes touch these traces: check them on the tracing)\n", strings.Join(names, " "))
	}
	if c, ok := r.Calibration(); ok {
		fmt.Fprintf(w, "  calibration %.3f × %.3f px/mm (%s), %.4g mm/s (%s), %.4g mm/mV (%s), layout %s\n",
			c.PxPerMMX.V, c.PxPerMMY.V, c.PxPerMMX.Origin, c.SpeedMMPerS.V, c.SpeedMMPerS.Origin,
			c.GainMMPerMV.V, c.GainMMPerMV.Origin, layoutName(&r.Trace.Layout))
	}
	fmt.Fprintf(w, "  measures   HR %s  PR %s  QRS %s  QT %s  QTc(Bazett) %s\n",
		fmtNum(s.HR, "/min"), fmtNum(s.PR, " ms"), fmtNum(s.QRS, " ms"), fmtNum(s.QT, " ms"), fmtNum(s.QTcB, " ms"))
	for _, wr := range r.Warnings {
		fmt.Fprintf(w, "  warning    %s\n", wr)
	}
	if p.Err != nil {
		fmt.Fprintf(w, "  partial    %s\n", oneLine(p.Err))
	}
	if len(p.Outputs) > 0 {
		fmt.Fprintf(w, "  wrote      %s\n", strings.Join(baseNames(p.Outputs), " "))
	}
	fmt.Fprintf(w, "  %s\n", caution)
}

// missingLeads lists the leads the layout prints that were not read.
func missingLeads(t *trace.Result) []string {
	var m []string
	for _, l := range ecg.Standard12 {
		if layoutPrints(t, l) && !hasLead(&t.Record, l) {
			m = append(m, l.String())
		}
	}
	return m
}

func baseNames(ps []string) []string {
	out := make([]string, len(ps))
	for i, p := range ps {
		out[i] = filepath.Base(p)
	}
	sort.Strings(out)
	return out
}

func fmtNum(v float64, unit string) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return fmt.Sprintf("%.0f%s", v, unit)
}

// layoutName is the layout's standard name, or its description.
func layoutName(l *trace.Layout) string {
	if l.Name != "" && l.Name != "custom" {
		return l.Name
	}
	return l.String()
}
