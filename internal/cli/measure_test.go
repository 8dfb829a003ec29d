package cli

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/ecg"
	"tracelift/export"
	"tracelift/measure"
	"tracelift/synth"
)

// TestMeasureFlags checks how the command line fills measureOptions.
func TestMeasureFlags(t *testing.T) {
	testFlags(t, newMeasureCmd, []flagCase[measureOptions]{
		{"defaults", []string{"r.hea"}, func(t *testing.T, o *measureOptions) {
			assert.Equal(t, "r.hea", o.Input)
			assert.Equal(t, "text", o.Format)
			assert.Empty(t, o.Out)
			assert.Empty(t, o.Leads)
			assert.False(t, o.NoBeats)
		}, false},
		{"all", []string{"r.csv", "--format", "json", "-o", "m.json", "--lead", "II, v5", "--sex", "f", "--no-beats"}, func(t *testing.T, o *measureOptions) {
			assert.Equal(t, "json", o.Format)
			assert.Equal(t, "m.json", o.Out)
			assert.Equal(t, []ecg.Lead{ecg.LeadII, ecg.LeadV5}, o.Leads)
			assert.Equal(t, "F", o.Sex)
			assert.True(t, o.NoBeats)
		}, false},
		{"bad format", []string{"r.hea", "--format", "xml"}, nil, true},
		{"bad lead", []string{"r.hea", "--lead", "II,V9x"}, nil, true},
		{"bad sex", []string{"r.hea", "--sex", "x"}, nil, true},
		{"no file", nil, nil, true},
		{"two files", []string{"a.hea", "b.hea"}, nil, true},
	})
}

// TestMeasureRun measures a synthetic record written as CSV through Main:
// summary on standard output, JSON report to -o, JSON on standard output
// with --format json, and the error exit codes.
func TestMeasureRun(t *testing.T) {
	dir := t.TempDir()
	p := synth.Default()
	p.HeartRateBPM = 55
	rec, err := synth.Generate(p, 5)
	require.NoError(t, err)
	csv := filepath.Join(dir, "rec.csv")
	require.NoError(t, export.WriteCSVFile(csv, rec))

	var out, errOut bytes.Buffer
	js := filepath.Join(dir, "m.json")
	code := Main([]string{"measure", csv, "-o", js}, nil, &out, &errOut)
	require.Equal(t, ExitOK, code, "stderr: %s", errOut.String())
	s := out.String()
	for _, k := range []string{"Heart rate", "55 bpm", "QTc", "bazett", "flag brady", "Caution: These are measurements", "wrote " + js} {
		assert.Contains(t, s, k)
	}
	b, err := os.ReadFile(js)
	require.NoError(t, err)
	var rep measure.Report
	require.NoError(t, json.Unmarshal(b, &rep))
	assert.InDelta(t, 55, float64(rep.HeartRateBPM), 1)
	assert.Len(t, rep.Leads, 12)
	assert.Equal(t, measure.Caution, rep.Caution)
	ents, err := os.ReadDir(dir)
	require.NoError(t, err)
	assert.Len(t, ents, 2, "no temporary files left behind")

	out.Reset()
	code = Main([]string{"measure", csv, "--format", "json", "--lead", "II", "--no-beats"}, nil, &out, &errOut)
	require.Equal(t, ExitOK, code, "stderr: %s", errOut.String())
	var rep2 measure.Report
	require.NoError(t, json.Unmarshal(out.Bytes(), &rep2))
	require.Len(t, rep2.Leads, 1)
	assert.Equal(t, "II", rep2.Leads[0].Lead)
	assert.Empty(t, rep2.Beats)

	// Missing file: exit 3, one line naming the file.
	errOut.Reset()
	missing := filepath.Join(dir, "nope.hea")
	code = Main([]string{"measure", missing}, nil, &out, &errOut)
	assert.Equal(t, ExitUnreadable, code)
	assert.Contains(t, errOut.String(), "nope.hea")
	assert.Equal(t, 1, strings.Count(strings.TrimSpace(errOut.String()), "\n")+1, "one-line error")

	// A flat record: read fine, no beats → exit 4.
	flat := ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 250, Samples: make([]float64, 2500)}}}
	flatCSV := filepath.Join(dir, "flat.csv")
	require.NoError(t, export.WriteCSVFile(flatCSV, flat))
	errOut.Reset()
	code = Main([]string{"measure", flatCSV}, nil, &out, &errOut)
	assert.Equal(t, ExitNoECG, code, "stderr: %s", errOut.String())
	assert.Contains(t, errOut.String(), "flat.csv")

	// Two samples 1e9 s apart: a sample rate of 1e-9 Hz, refused as
	// unreadable (exit 3) instead of hanging the beat detector.
	slowCSV := filepath.Join(dir, "slow.csv")
	require.NoError(t, os.WriteFile(slowCSV, []byte("time_s,II\n0,1\n1e9,2\n"), 0o644))
	errOut.Reset()
	code = Main([]string{"measure", slowCSV}, nil, &out, &errOut)
	assert.Equal(t, ExitUnreadable, code, "stderr: %s", errOut.String())
	assert.Contains(t, errOut.String(), "slow.csv")
	assert.Contains(t, errOut.String(), "sample rate")

	// Unwritable report: exit 6, nothing left.
	errOut.Reset()
	code = Main([]string{"measure", csv, "-o", filepath.Join(dir, "missing", "m.json")}, nil, &out, &errOut)
	assert.Equal(t, ExitOutput, code, "stderr: %s", errOut.String())
}
