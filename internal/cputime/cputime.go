// Package cputime reads the CPU time the process has used, for benchmarks
// that report it beside the wall time: on a machine shared with other
// work the wall time of a benchmark grows with the load, its CPU time
// much less; with -cpu 1 the CPU time per op is what one core spends.
package cputime

import (
	"bytes"
	"os"
	"strconv"
	"strings"
	"testing"
)

// Seconds returns the CPU time (user + system, all threads, the
// collector's included) the process has used so far, from
// /proc/self/stat in clock ticks of 1/100 s (Linux's USER_HZ); ok is
// false where that file is missing.
func Seconds() (sec float64, ok bool) {
	data, err := os.ReadFile("/proc/self/stat")
	if err != nil {
		return 0, false
	}
	// Fields after the command name (which may hold spaces): state is
	// field 3, utime 14 and stime 15.
	i := bytes.LastIndexByte(data, ')')
	if i < 0 {
		return 0, false
	}
	f := strings.Fields(string(data[i+1:]))
	if len(f) < 13 {
		return 0, false
	}
	ut, err1 := strconv.ParseFloat(f[11], 64)
	st, err2 := strconv.ParseFloat(f[12], 64)
	if err1 != nil || err2 != nil {
		return 0, false
	}
	return (ut + st) / 100, true
}

// Report measures the CPU time of the benchmark loop: call it after
// b.ResetTimer and call the returned function after the loop; it reports
// "cpu-ns/op" where the CPU time can be read.
func Report(b *testing.B) (done func()) {
	c0, ok0 := Seconds()
	return func() {
		if c1, ok := Seconds(); ok && ok0 {
			b.ReportMetric((c1-c0)/float64(b.N)*1e9, "cpu-ns/op")
		}
	}
}
