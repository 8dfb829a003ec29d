package export_test

import (
	"math"
	"os"

	"tracelift/ecg"
	"tracelift/export"
)

// Two samples of lead II at 250 Hz, the second one not recorded: the CSV
// still has all twelve standard columns, empty where nothing was recorded.
func ExampleWriteCSV() {
	var rec ecg.Record
	rec.Set(ecg.Signal{Lead: ecg.LeadII, SampleRate: 250, Samples: []float64{0.125, math.NaN()}})
	export.WriteCSV(os.Stdout, rec)
	// Output:
	// time_s,I,II,III,aVR,aVL,aVF,V1,V2,V3,V4,V5,V6
	// 0.000000,,0.1250,,,,,,,,,,
	// 0.004000,,,,,,,,,,,,
}
