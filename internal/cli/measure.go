package cli

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strings"

	"github.com/spf13/cobra"

	"tracelift/ecg"
	"tracelift/export"
	"tracelift/internal/atomicfile"
	"tracelift/measure"
)

// measureOptions are the options of `tracelift measure`.
type measureOptions struct {
	Input   string
	Format  string // "text" or "json" (what goes to standard output)
	Out     string // JSON report file; empty: none
	Leads   []ecg.Lead
	Sex     string
	NoBeats bool
	ios     *IOStreams
}

func newMeasureCmd(ios *IOStreams, runF func(*measureOptions) error) *cobra.Command {
	opts := &measureOptions{ios: ios}
	var leads string
	cmd := &cobra.Command{
		Use:   "measure FILE",
		Short: "Measure heart rate, PR, QRS, QT/QTc, axes and amplitudes of a digital ECG record",
		Long: `measure reads a digital ECG record (WFDB .hea, EDF/EDF+, HL7 aECG .xml or
CSV, chosen by extension) and measures it: beats and their classes, heart
rate and RR variability, P duration, PR, QRS, QT and QTc (Bazett,
Fridericia, Framingham, Hodges), frontal P/QRS/T axes, per-lead amplitudes
and ST levels on the median beats, Sokolow–Lyon and Cornell voltages, and
flags against common adult reference ranges, each with its source.

A readable summary goes to standard output (--format json prints the JSON
report instead); -o also writes the JSON report to a file.

These are measurements of a (possibly digitised) tracing, not a diagnosis:
verify them against the original tracing; clinical decisions rest with
qualified clinicians under local rules and licensed practice.`,
		Example: `  tracelift measure record.hea
  tracelift measure page.csv --format json
  tracelift measure record.edf -o report.json --lead II,V5 --sex F`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Input = args[0]
			switch opts.Format {
			case "text", "json":
			default:
				return flagErrorf("measure: --format must be text or json, got %q", opts.Format)
			}
			switch strings.ToUpper(opts.Sex) {
			case "", "F", "M":
				opts.Sex = strings.ToUpper(opts.Sex)
			default:
				return flagErrorf("measure: --sex must be F or M, got %q", opts.Sex)
			}
			if leads != "" {
				for _, name := range strings.Split(leads, ",") {
					l, err := ecg.ParseLead(name)
					if err != nil {
						return flagErrorf("measure: --lead: unknown lead %q", strings.TrimSpace(name))
					}
					opts.Leads = append(opts.Leads, l)
				}
			}
			if runF != nil {
				return runF(opts)
			}
			return runMeasure(opts)
		},
	}
	f := cmd.Flags()
	f.StringVar(&opts.Format, "format", "text", "standard output: text (summary) or json (report)")
	f.StringVarP(&opts.Out, "out", "o", "", "also write the JSON report to this file")
	f.StringVar(&leads, "lead", "", "measure only these leads, comma-separated (e.g. II,V1,V5)")
	f.StringVar(&opts.Sex, "sex", "", "F or M: sex-specific QTc and Cornell thresholds for the flags")
	f.BoolVar(&opts.NoBeats, "no-beats", false, "leave the per-beat table out of the report")
	return cmd
}

// runMeasure reads, measures and writes.
func runMeasure(o *measureOptions) error {
	rec, err := export.ReadRecord(o.Input)
	if err != nil {
		if !errors.Is(err, ecg.ErrUnreadable) && !errors.Is(err, ecg.ErrNoECG) {
			err = fmt.Errorf("%w: %w", ecg.ErrUnreadable, err)
		}
		if !strings.Contains(err.Error(), o.Input) {
			err = fmt.Errorf("%s: %w", o.Input, err)
		}
		return err
	}
	rep, err := measure.Measure(rec, &measure.Options{Leads: o.Leads, Sex: o.Sex, NoBeatTable: o.NoBeats})
	if err != nil {
		return fmt.Errorf("%s: %w", o.Input, err)
	}
	if o.Out != "" {
		if err := writeMeasureReport(o.Out, rep); err != nil {
			return err
		}
	}
	out := o.ios.Out
	if o.Format == "json" {
		enc := json.NewEncoder(out)
		enc.SetIndent("", "  ")
		if err := enc.Encode(rep); err != nil {
			return fmt.Errorf("standard output: %w: %w", ecg.ErrOutput, err)
		}
		return nil
	}
	fmt.Fprintf(out, "%s\n", o.Input)
	if err := rep.WriteSummary(out); err != nil {
		return fmt.Errorf("standard output: %w: %w", ecg.ErrOutput, err)
	}
	if o.Out != "" {
		fmt.Fprintf(out, "wrote %s\n", o.Out)
	}
	return nil
}

// writeMeasureReport writes the JSON report atomically (a temporary file
// renamed into place); errors name the file and wrap ecg.ErrOutput.
func writeMeasureReport(path string, rep *measure.Report) error {
	return atomicfile.WriteFile(path, func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rep)
	})
}
