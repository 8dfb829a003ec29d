package export

import (
	"errors"
	"strings"
	"testing"

	"tracelift/ecg"
)

// Any text reads without panicking; failures wrap ErrUnreadable or
// ErrNoECG.
func FuzzReadCSV(f *testing.F) {
	f.Add("time_s,I,II\n0,1,2\n0.002,,3\n", 0.0)
	f.Add("time;V1\n0,5;1\n", 250.0)
	f.Add("I [uV]\tV6 (mV)\n1\t2\n", 500.0)
	f.Add("\"time_ms\",\"aVR\"\n0,\"1\"\n4,\"2\n", 0.0)
	f.Fuzz(func(t *testing.T, text string, fs float64) {
		_, err := ReadCSV(strings.NewReader(text), &CSVOptions{SampleRate: fs})
		if err != nil && !errors.Is(err, ecg.ErrUnreadable) && !errors.Is(err, ecg.ErrNoECG) {
			t.Fatalf("error %v wraps no error class", err)
		}
	})
}
