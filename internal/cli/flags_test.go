package cli

import (
	"bytes"
	"testing"

	"github.com/spf13/cobra"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// execCmd runs one command the way Main runs it under the root command:
// usage and errors silenced, flag parse errors as *FlagError.
func execCmd(cmd *cobra.Command, ios *IOStreams, args ...string) error {
	cmd.SetArgs(args)
	cmd.SetOut(ios.Out)
	cmd.SetErr(ios.ErrOut)
	cmd.SilenceUsage, cmd.SilenceErrors = true, true
	cmd.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return &FlagError{Err: err} })
	return cmd.Execute()
}

// flagCase is one row of a command's flag table: the arguments, and
// either usage (the command line must fail with exit code 2) or a check
// of the options it filled (nil: parsing must only succeed).
type flagCase[O any] struct {
	name  string
	args  []string
	check func(t *testing.T, o *O)
	usage bool
}

// testFlags runs each case through the command newCmd builds, with a run
// function that only keeps the options.
func testFlags[O any](t *testing.T, newCmd func(*IOStreams, func(*O) error) *cobra.Command, cases []flagCase[O]) {
	t.Helper()
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var got *O
			ios := &IOStreams{Out: &bytes.Buffer{}, ErrOut: &bytes.Buffer{}}
			err := execCmd(newCmd(ios, func(o *O) error { got = o; return nil }), ios, tc.args...)
			if tc.usage {
				require.Error(t, err)
				assert.Equal(t, ExitUsage, ExitCode(err), "error: %v", err)
				return
			}
			require.NoError(t, err)
			if tc.check != nil {
				tc.check(t, got)
			}
		})
	}
}
