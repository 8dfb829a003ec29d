// Package cli holds tracelift's cobra commands. It is a thin layer: each
// command fills an options struct, checks flag combinations and calls
// library code; exit codes are decided in one place, Main.
package cli

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"

	"github.com/spf13/cobra"

	"tracelift/ecg"
)

// Version is the program version, set at build time with
// -ldflags "-X tracelift/internal/cli.Version=…".
var Version = "0.1.0-dev"

// Exit codes, documented in the README.
const (
	ExitOK         = 0 // success
	ExitInternal   = 1 // internal error (a bug): please report it
	ExitUsage      = 2 // wrong command, option or option value
	ExitUnreadable = 3 // an input could not be read or decoded
	ExitNoECG      = 4 // an input was read but no ECG was found on it
	ExitPartial    = 5 // results written, but some leads or files failed
	ExitOutput     = 6 // an output file or folder could not be written
	// ExitInterrupted: stopped by Ctrl-C (SIGINT); finished work is kept
	// (128 + SIGINT, common practice for shells).
	ExitInterrupted = 130
)

// errInterrupted marks a run stopped by the user.
var errInterrupted = errors.New("interrupted")

// caution is printed with every output that carries measurements.
const caution = "Caution: measurements of a digitised tracing can be wrong and are never a diagnosis; " +
	"verify them against the original tracing. Clinical decisions rest with qualified clinicians " +
	"under local rules and licensed practice."

// IOStreams are the command's standard streams; tests pass buffers.
type IOStreams struct {
	In     io.Reader
	Out    io.Writer
	ErrOut io.Writer
	// IsTerminal reports whether ErrOut is an interactive terminal (for
	// progress bars).
	IsTerminal bool
}

// FlagError is a usage error: the command line itself is wrong. Only
// FlagErrors print the usage hint.
type FlagError struct{ Err error }

func (e *FlagError) Error() string { return e.Err.Error() }
func (e *FlagError) Unwrap() error { return e.Err }

// flagErrorf returns a *FlagError with a formatted message.
func flagErrorf(format string, a ...any) error {
	return &FlagError{Err: fmt.Errorf(format, a...)}
}

// Main runs the command line and returns the process exit code.
func Main(args []string, in io.Reader, out, errOut io.Writer) int {
	ios := &IOStreams{In: in, Out: out, ErrOut: errOut, IsTerminal: isTerminal(errOut)}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	root := NewRootCmd(ios)
	root.SetArgs(args)
	err := root.ExecuteContext(ctx)
	return report(ios, root, err)
}

// report prints err (one line) and maps it to an exit code.
func report(ios *IOStreams, root *cobra.Command, err error) int {
	if err == nil {
		return ExitOK
	}
	code := ExitCode(err)
	msg := strings.ReplaceAll(err.Error(), "\n", "; ")
	fmt.Fprintf(ios.ErrOut, "tracelift: %s\n", msg)
	if code == ExitUsage {
		fmt.Fprintf(ios.ErrOut, "Run 'tracelift --help' for usage.\n")
	}
	return code
}

// ExitCode maps an error to its documented exit code.
func ExitCode(err error) int {
	var fe *FlagError
	switch {
	case err == nil:
		return ExitOK
	case errors.As(err, &fe):
		return ExitUsage
	case errors.Is(err, errInterrupted), errors.Is(err, context.Canceled):
		return ExitInterrupted
	// The error classes come before cobra's text-matched usage errors, so
	// a file named "who accepts this.png" cannot turn a read error into a
	// usage error.
	case errors.Is(err, ecg.ErrOutput):
		return ExitOutput
	case errors.Is(err, ecg.ErrPartial):
		return ExitPartial
	case errors.Is(err, ecg.ErrNoECG):
		return ExitNoECG
	case errors.Is(err, ecg.ErrUnreadable):
		return ExitUnreadable
	case isCobraUsage(err):
		return ExitUsage
	default:
		return ExitInternal
	}
}

// isCobraUsage recognises cobra's own argument and flag errors, which are
// plain errors.
func isCobraUsage(err error) bool {
	s := err.Error()
	for _, p := range []string{"unknown command", "unknown flag", "unknown shorthand flag",
		"flag needs an argument", "invalid argument", "accepts ", "requires at least", "required flag"} {
		if strings.Contains(s, p) {
			return true
		}
	}
	return false
}

// NewRootCmd builds the command tree.
func NewRootCmd(ios *IOStreams) *cobra.Command {
	root := &cobra.Command{
		Use:   "tracelift",
		Short: "Turn paper electrocardiograms back into data",
		Long: `tracelift reads scans, faxes and photos of printed 12-lead ECGs, finds the
millimetre grid, follows each lead's trace into calibrated samples (mV
against seconds), measures heart rate, PR, QRS, QT/QTc, axes and amplitudes,
and writes open formats (CSV, JSON, EDF+, WFDB, HL7 aECG) with overlay
pictures that show its work.

Measurements of a digitised tracing can be wrong and are never a diagnosis:
verify them against the original tracing; clinical decisions rest with
qualified clinicians under local rules and licensed practice.`,
		Version:       Version,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.SetOut(ios.Out)
	root.SetErr(ios.ErrOut)
	root.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return &FlagError{Err: err} })
	// One line per subcommand; each lives in its own file.
	root.AddCommand(
		newDigitizeCmd(ios, nil),
		newBatchCmd(ios, nil),
		newRenderCmd(ios, nil),
		newEvalCmd(ios, nil),
		newDemoCmd(ios, nil),
		newMeasureCmd(ios, nil),
	)
	return root
}
