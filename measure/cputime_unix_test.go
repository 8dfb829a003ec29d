//go:build unix

package measure

import (
	"syscall"
	"time"
)

// processCPU returns the user + system CPU time used by the process so
// far; benchmarks report it per operation because wall time on a shared,
// loaded machine says little.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
