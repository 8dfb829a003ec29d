//go:build !unix

package measure

import "time"

// processCPU is unavailable on this platform; benchmarks report 0.
func processCPU() time.Duration { return 0 }
