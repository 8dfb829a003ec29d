package cli

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"tracelift/accuracy"
	"tracelift/ecg"
	"tracelift/export"
	"tracelift/internal/atomicfile"
	"tracelift/pipeline"
	"tracelift/render"
	"tracelift/synth"
)

// The demo's fictional scenario: an invented clinic and patient. Any
// resemblance to real people or places is accidental.
const (
	demoClinic  = "Kestrel Bay Community Clinic"
	demoPatient = "Wrenfield, Tamsin"
	demoID      = "KBC-0417-D"
	demoStem    = "wrenfield-2026-03-14"
	demoSeed    = 2026
)

// demoOptions are the options of `tracelift demo`.
type demoOptions struct {
	OutDir string
	Seed   uint64
}

func newDemoCmd(ios *IOStreams, runF func(*demoOptions) error) *cobra.Command {
	opts := &demoOptions{}
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Print a fictional patient's ECG as a scanned page, digitise it and show every output",
		Long: `demo needs no data: it synthesises a 10 s 12-lead ECG for a fictional patient
of an invented clinic, prints it on ECG paper as a slightly skewed colour
scan (the renderer's "scan" condition), digitises that page exactly as
'tracelift digitize' would, and writes every output — CSV, JSON, EDF+, WFDB,
HL7 aECG, overlay pictures, a re-plotted PDF — together with the scanned
page and its truth into the output folder. It then prints the summary and
how close the result came to the truth.`,
		Example: `  tracelift demo
  tracelift demo -o /tmp/demo`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if runF != nil {
				return runF(opts)
			}
			return runDemo(cmd.Context(), ios, opts)
		},
	}
	cmd.Flags().StringVarP(&opts.OutDir, "out", "o", "tracelift-demo", "output folder")
	cmd.Flags().Uint64Var(&opts.Seed, "seed", demoSeed, "seed of the synthetic record and the scan simulation")
	return cmd
}

// demoRecord is the fictional patient's synthetic record.
func demoRecord(seed uint64) (ecg.Record, error) {
	p := synth.Default()
	p.HeartRateBPM = 66
	p.AxisDeg = 48
	p.PRMS = 168
	p.QRSMS = 94
	p.HRVStdMS = 25
	p.NoiseMV = 0.008
	p.BaselineWanderMV = 0.04
	rec, err := synth.Generate(p, seed)
	if err != nil {
		return rec, err
	}
	rec.Meta.PatientName = demoPatient
	rec.Meta.PatientID = demoID
	rec.Meta.Sex = "F"
	rec.Meta.Institution = demoClinic
	rec.Meta.Acquired = time.Date(2026, 3, 14, 9, 42, 0, 0, time.UTC)
	rec.Meta.Notes = []string{"Fictional demo patient, synthetic record — not a real person"}
	return rec, nil
}

func runDemo(ctx context.Context, ios *IOStreams, opts *demoOptions) error {
	if ctx == nil {
		ctx = context.Background()
	}
	start := time.Now()
	if err := os.MkdirAll(opts.OutDir, 0o755); err != nil {
		return fmt.Errorf("demo: %s: %w: %v", opts.OutDir, ecg.ErrOutput, err)
	}
	rec, err := demoRecord(opts.Seed)
	if err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	ropt, err := render.ConditionOptions("scan", opts.Seed)
	if err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	ropt.Layout = render.Layout3x4R1
	ropt.Paper = render.PaperA4
	ropt.Grid = render.Grid{Kind: render.GridLines, Color: "red"}
	ropt.Header = &render.Header{
		Clinic: demoClinic,
		Name:   demoPatient + " (fictional)",
		ID:     demoID,
		Date:   rec.Meta.Acquired.Format("2006-01-02 15:04"),
		Device: "tracelift demo — synthetic 12-lead",
		Extra:  "Fictional demo patient — not a real person",
		Filter: "0.05–150 Hz",
	}
	page, err := render.Render(rec, ropt)
	if err != nil {
		return fmt.Errorf("demo: render: %w", err)
	}
	scanPath := filepath.Join(opts.OutDir, "scanned-page.png")
	truthFile := filepath.Join(opts.OutDir, "scanned-page.truth.json")
	if err := atomicfile.WriteFile(scanPath, func(f io.Writer) error { return page.WritePNG(f) }); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	if err := atomicfile.WriteFile(truthFile, func(f io.Writer) error { return page.WriteTruth(f) }); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	rendered := time.Since(start)

	pf := &pipelineFlags{Layout: "auto", RateHz: 500, MaxPixels: 200_000_000,
		Formats: []string{"csv", "json", "edf", "wfdb", "aecg", "svg", "png", "pdf"}}
	var outcome pageOutcome
	t0 := time.Now()
	_, derr := digitizeFile(ctx, scanPath, filepath.Join(opts.OutDir, demoStem), pf, func(p pageOutcome) { outcome = p })
	if ctx.Err() != nil {
		return fmt.Errorf("demo: %w", errInterrupted)
	}
	digitised := time.Since(t0)

	w := ios.Out
	fmt.Fprintf(w, "tracelift demo — %s, patient %s (%s). Both are invented; the ECG is synthetic.\n\n", demoClinic, demoPatient, demoID)
	fmt.Fprintf(w, "Printed a 10 s 12-lead ECG as a 300-dpi colour scan (%.1f s), then digitised it (%.1f s):\n\n", rendered.Seconds(), digitised.Seconds())
	printPageSummary(w, outcome)
	if outcome.Result != nil {
		fmt.Fprintln(w)
		printDemoAccuracy(w, outcome.Result, derr, &page.Truth, &rec)
	}
	fmt.Fprintf(w, "\nEverything is in %s/:\n", opts.OutDir)
	describe := map[string]string{
		"scanned-page.png":        "the scanned page (the input)",
		"scanned-page.truth.json": "what was really printed, and where (the truth)",
		".csv":                    "samples in mV against seconds, one column per lead",
		".json":                   "calibration, layout, quality, measurements, beats, warnings",
		".edf":                    "EDF+ for viewers and analysis software",
		".hea":                    "WFDB header (with .dat samples, .atr beats, .wave boundaries)",
		".xml":                    "HL7 aECG",
		"-overlay.svg":            "the page with the traces that were read drawn over it",
		"-overlay.png":            "the same overlay as a picture",
		".pdf":                    "the digitised record re-plotted on clean paper",
	}
	files := append([]string{scanPath, truthFile}, outcome.Outputs...)
	for _, f := range files {
		b := filepath.Base(f)
		d := describe[b]
		if d == "" {
			for suffix, text := range describe {
				if strings.HasPrefix(suffix, ".") || strings.HasPrefix(suffix, "-") {
					if strings.HasSuffix(b, suffix) && (strings.HasPrefix(b, demoStem) || strings.HasPrefix(b, export.WFDBName(demoStem))) {
						d = text
					}
				}
			}
		}
		if d == "" {
			continue // .dat and .atr are covered by the .hea line
		}
		fmt.Fprintf(w, "  %-34s %s\n", b, d)
	}
	fmt.Fprintf(w, "\nNext: tracelift digitize %s -o out/   (your own scans work the same way)\n", scanPath)
	if derr != nil {
		return fmt.Errorf("demo: %w", derr)
	}
	return nil
}

// printDemoAccuracy compares the digitised page with the truth.
func printDemoAccuracy(w io.Writer, res *pipeline.Result, err error, truth *render.Truth, rec *ecg.Record) {
	p := accuracy.Score(res, err, truth, rec)
	med, p10 := accuracy.SNRStats(p.SNRdB)
	smed, _ := accuracy.SNRStats(p.StrictSNRdB)
	fmt.Fprintf(w, "Accuracy against the truth:\n")
	fmt.Fprintf(w, "  leads       %d of %d printed leads read, %d swapped\n", p.LeadsFound, p.LeadsPrinted, p.Swaps)
	fmt.Fprintf(w, "  signal      median SNR %.1f dB (10th percentile %.1f dB); strict Challenge-2024 SNR %.1f dB\n", med, p10, smed)
	fmt.Fprintf(w, "  calibration px/mm error x %+.2f %%, y %+.2f %%; skew error %+.2f°; gain %s\n",
		float64(p.PxPerMMXErrPct), float64(p.PxPerMMYErrPct), float64(p.SkewErrDeg), map[bool]string{true: "correct", false: "WRONG"}[p.GainCorrect])
	iv := accuracy.TrueIntervals(rec.Beats)
	m := func(name string, truth, errv float64, unit string) {
		if math.IsNaN(errv) {
			fmt.Fprintf(w, "  %-11s true %.0f %s, not measured\n", name, truth, unit)
			return
		}
		fmt.Fprintf(w, "  %-11s true %.0f %s, measured %.0f %s (%+.0f)\n", name, truth, unit, truth+errv, unit, errv)
	}
	m("heart rate", iv.HRBPM, float64(p.HRErrBPM), "/min")
	m("PR", iv.PRMS, float64(p.PRErrMS), "ms")
	m("QRS", iv.QRSMS, float64(p.QRSErrMS), "ms")
	m("QT", iv.QTMS, float64(p.QTErrMS), "ms")
	fmt.Fprintf(w, "  (SNR: 10·log10 of signal over error power; 20 dB means the error is a tenth of the signal's amplitude)\n")
}
