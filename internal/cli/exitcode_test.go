package cli

import (
	"fmt"
	"testing"

	"github.com/stretchr/testify/assert"

	"tracelift/ecg"
)

// An error class decides the exit code even when the message happens to
// contain words of cobra's usage errors (here, a file name).
func TestExitCodeClassBeforeText(t *testing.T) {
	err := fmt.Errorf("who accepts this.png: truncated PNG: %w", ecg.ErrUnreadable)
	assert.Equal(t, ExitUnreadable, ExitCode(err))
	err = fmt.Errorf("invalid argument folder: %w", ecg.ErrOutput)
	assert.Equal(t, ExitOutput, ExitCode(err))
	// cobra's own plain usage errors still map to the usage code.
	assert.Equal(t, ExitUsage, ExitCode(fmt.Errorf(`unknown flag: --colour`)))
}
