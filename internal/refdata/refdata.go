// Package refdata locates the open reference ECG databases that tests read
// in place (MIT-BIH Arrhythmia, PTB Diagnostic, LUDB, QT Database, all from
// PhysioNet under ODC-By 1.0). They are never copied into the repository.
package refdata

import (
	"os"
	"path/filepath"
	"testing"
)

// sources says where each dataset can be downloaded, for skip messages.
var sources = map[string]string{
	"mitdb": "MIT-BIH Arrhythmia Database 1.0.0, record 100 (https://physionet.org/content/mitdb/1.0.0/)",
	"ptbdb": "PTB Diagnostic ECG Database 1.0.0, patient001/s0010_re (https://physionet.org/content/ptbdb/1.0.0/)",
	"ludb":  "Lobachevsky University Electrocardiography Database 1.0.1 (https://physionet.org/content/ludb/1.0.1/)",
	"qtdb":  "QT Database 1.0.0 (https://physionet.org/content/qtdb/1.0.0/)",
}

// Root returns the folder holding the datasets: $TRACELIFT_DATA if set,
// else ../shared/data beside the module root. ok is false if neither
// exists.
func Root() (string, bool) {
	if d := os.Getenv("TRACELIFT_DATA"); d != "" {
		if st, err := os.Stat(d); err == nil && st.IsDir() {
			return d, true
		}
		return d, false
	}
	dir, err := os.Getwd()
	if err != nil {
		return "", false
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			d := filepath.Join(dir, "..", "shared", "data")
			if st, err := os.Stat(d); err == nil && st.IsDir() {
				return d, true
			}
			return d, false
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			return "", false
		}
		dir = parent
	}
}

// Dir returns the folder of one dataset ("mitdb", "ptbdb", "ludb",
// "qtdb"), or skips the test with a message naming the dataset and where
// to get it.
func Dir(tb testing.TB, name string) string {
	tb.Helper()
	root, ok := Root()
	if ok {
		d := filepath.Join(root, name)
		if st, err := os.Stat(d); err == nil && st.IsDir() {
			return d
		}
	}
	tb.Skipf("reference data %q not found: download %s and set TRACELIFT_DATA to the folder that holds %s/", name, sources[name], name)
	return ""
}
