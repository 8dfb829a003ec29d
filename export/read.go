package export

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"tracelift/ecg"
	"tracelift/export/aecg"
	"tracelift/export/edf"
	"tracelift/export/wfdb"
)

// ReadRecord reads a digital ECG record, choosing the reader by extension
// and, failing that, by content:
//
//   - .hea (or a .dat with a .hea beside it): WFDB (export/wfdb), with beat
//     annotations from a ".atr" file of the same name when one exists;
//   - .edf, .rec or content starting with the EDF version field "0" and
//     seven spaces: EDF/EDF+ (export/edf);
//   - .xml or content holding "<AnnotatedECG": HL7 aECG rhythm waveforms
//     (export/aecg);
//   - .csv, .txt, .tsv or anything else that parses as a table with a
//     header row: CSV (ReadCSV; the time column is required).
//
// Errors name the file and wrap ecg.ErrUnreadable (or ecg.ErrNoECG when
// the file holds no lead).
func ReadRecord(path string) (ecg.Record, error) {
	ext := strings.ToLower(filepath.Ext(path))
	switch ext {
	case ".hea":
		return readWFDB(path)
	case ".dat":
		hea := strings.TrimSuffix(path, filepath.Ext(path)) + ".hea"
		if _, err := os.Stat(hea); err == nil {
			return readWFDB(hea)
		}
	case ".edf", ".rec":
		rec, _, err := edf.ReadRecord(path)
		return rec, err
	case ".csv", ".txt", ".tsv":
		return ReadCSVFile(path, nil)
	case ".xml":
		return readAECG(path)
	}
	f, err := os.Open(path)
	if err != nil {
		return ecg.Record{}, fmt.Errorf("export: %w: %w", ecg.ErrUnreadable, err)
	}
	head := make([]byte, 256)
	n, _ := io.ReadFull(f, head)
	f.Close()
	head = head[:n]
	switch {
	case n == 0:
		return ecg.Record{}, fmt.Errorf("export: %s: empty file: %w", path, ecg.ErrUnreadable)
	case bytes.HasPrefix(head, []byte("0       ")):
		rec, _, err := edf.ReadRecord(path)
		return rec, err
	case bytes.Contains(head, []byte("<AnnotatedECG")) || bytes.HasPrefix(bytes.TrimSpace(head), []byte("<?xml")):
		return readAECG(path)
	case looksLikeText(head):
		return ReadCSVFile(path, nil)
	}
	return ecg.Record{}, fmt.Errorf("export: %s: not a CSV, WFDB or EDF record: %w", path, ecg.ErrUnreadable)
}

func readAECG(path string) (ecg.Record, error) {
	f, err := os.Open(path)
	if err != nil {
		return ecg.Record{}, fmt.Errorf("export: %w: %w", ecg.ErrUnreadable, err)
	}
	defer f.Close()
	rec, err := aecg.Read(f)
	if err != nil {
		return rec, fmt.Errorf("export: %s: %w", path, err)
	}
	rec.Meta.Source = filepath.Base(path)
	return rec, nil
}

func readWFDB(hea string) (ecg.Record, error) {
	rec, h, err := wfdb.ReadRecord(hea)
	if err != nil {
		return rec, err
	}
	if len(rec.Signals) == 0 {
		return rec, fmt.Errorf("export: %s: no signal is named after an ECG lead: %w", hea, ecg.ErrNoECG)
	}
	atr := strings.TrimSuffix(hea, filepath.Ext(hea)) + ".atr"
	if _, err := os.Stat(atr); err == nil {
		anns, err := wfdb.ReadAnnotations(atr, h.Fs)
		if err != nil {
			return rec, err
		}
		rec.Beats = wfdb.Beats(anns, h.Fs)
	}
	return rec, nil
}

func looksLikeText(b []byte) bool {
	for _, c := range b {
		if c == 0 || (c < 32 && c != '\n' && c != '\r' && c != '\t') {
			return false
		}
	}
	return true
}
