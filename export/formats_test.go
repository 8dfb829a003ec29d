package export

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"tracelift/ecg"
	"tracelift/export/wfdb"
)

func TestWriteFormats(t *testing.T) {
	rec := demoRecord(5, 4)
	b := ecg.NewBeat(ecg.BeatNormal, 1.0)
	b.QRSOn, b.QRSOff, b.TEnd = 0.96, 1.05, 1.35
	rec.Beats = []ecg.Beat{b, ecg.NewBeat(ecg.BeatVentricular, 2.0)}
	dir := t.TempDir()
	rep := NewReport(rec)
	paths, err := WriteFormats(dir, "demo-page.1", FormatNames(), rec, &Outputs{Report: rep})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"demo-page.1.csv", "demo-page.1.json", "demo-page.1.edf", "demo_page_1.hea", "demo_page_1.dat",
		"demo_page_1.atr", "demo_page_1.wave", "demo-page.1.xml"}
	for _, w := range want {
		found := false
		for _, p := range paths {
			found = found || filepath.Base(p) == w
		}
		if !found {
			t.Errorf("%s not written (got %v)", w, paths)
		}
	}
	for _, n := range []string{"demo-page.1.csv", "demo-page.1.edf", "demo_page_1.hea", "demo-page.1.xml"} {
		got, err := ReadRecord(filepath.Join(dir, n))
		if err != nil {
			t.Errorf("%s: %v", n, err)
			continue
		}
		if len(got.Signals) != len(rec.Signals) {
			t.Errorf("%s: %d leads", n, len(got.Signals))
		}
	}
	anns, err := wfdb.ReadAnnotations(filepath.Join(dir, "demo_page_1.atr"), 500)
	if err != nil || len(anns) != 2 || anns[0].Sample != 500 || anns[1].Symbol != "V" {
		t.Errorf("atr: %v %+v", err, anns)
	}
	wave, err := wfdb.ReadAnnotations(filepath.Join(dir, "demo_page_1.wave"), 500)
	if err != nil {
		t.Fatal(err)
	}
	beats := wfdb.Beats(wave, 500)
	if len(beats) != 2 || math.Abs(beats[0].QRSOn-0.96) > 1e-9 || math.Abs(beats[0].TEnd-1.35) > 1e-9 {
		t.Errorf("wave beats %+v", beats)
	}
	if r, err := ReadJSONFile(filepath.Join(dir, "demo-page.1.json")); err != nil || r.Caution != Caution {
		t.Errorf("json: %v", err)
	}
	_, err = WriteFormats(dir, "x", []string{"csv", "gif"}, rec, nil)
	if !errors.Is(err, ecg.ErrOutput) || !strings.Contains(err.Error(), "gif") {
		t.Errorf("unknown format: %v", err)
	}
	missing := filepath.Join(dir, "no", "such", "folder")
	paths, err = WriteFormats(missing, "x", []string{"csv", "edf", "wfdb"}, rec, nil)
	if !errors.Is(err, ecg.ErrOutput) || len(paths) != 0 {
		t.Errorf("missing folder: %v %v", paths, err)
	}
	// No temporary files left behind after the failures above.
	ents, _ := os.ReadDir(dir)
	for _, e := range ents {
		if strings.Contains(e.Name(), ".tmp") {
			t.Errorf("temporary file left: %s", e.Name())
		}
	}
}
