package export

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"regexp"
	"strings"

	"tracelift/ecg"
	"tracelift/export/aecg"
	"tracelift/export/edf"
	"tracelift/export/wfdb"
)

// Format names accepted by WriteFormats.
const (
	FormatCSV     = "csv"     // <stem>.csv
	FormatJSON    = "json"    // <stem>.json (needs Outputs.Report)
	FormatEDF     = "edf"     // <stem>.edf, EDF+C
	FormatWFDB    = "wfdb"    // <stem>.hea + .dat (format 16), .atr beats and .wave boundaries when the record has beats
	FormatWFDB212 = "wfdb212" // the same in format 212
	FormatAECG    = "aecg"    // <stem>.xml, HL7 aECG
)

// FormatNames lists the formats WriteFormats accepts.
func FormatNames() []string {
	return []string{FormatCSV, FormatJSON, FormatEDF, FormatWFDB, FormatWFDB212, FormatAECG}
}

// Outputs carries the optional inputs of WriteFormats. A nil *Outputs
// means defaults (and no JSON report).
type Outputs struct {
	Report *Report            // the JSON report; required for "json"
	EDF    *edf.Options       // nil: anonymous EDF+C with beats
	WFDB   *wfdb.WriteOptions // nil: automatic gains; Format is set by the format name
	AECG   *aecg.Options      // nil: anonymous; Measurements taken from Report when nil
}

var wfdbUnsafe = regexp.MustCompile(`[^A-Za-z0-9_]`)

// WFDBName turns a file stem into a valid WFDB record name (letters,
// digits and '_'; other characters become '_').
func WFDBName(stem string) string {
	n := wfdbUnsafe.ReplaceAllString(stem, "_")
	if n == "" {
		n = "record"
	}
	return n
}

// WriteFormats writes rec in each named format into dir, files named
// after stem (WFDB files after WFDBName(stem)), each file atomically. It
// keeps going after a failure and returns the paths written and the
// failures joined (each wrapping ecg.ErrOutput). An unknown format name
// is a failure too.
func WriteFormats(dir, stem string, formats []string, rec ecg.Record, out *Outputs) ([]string, error) {
	var o Outputs
	if out != nil {
		o = *out
	}
	var written []string
	var errs []error
	base := filepath.Join(dir, stem)
	for _, f := range formats {
		switch strings.ToLower(strings.TrimSpace(f)) {
		case FormatCSV:
			if err := WriteCSVFile(base+".csv", rec); err != nil {
				errs = append(errs, err)
			} else {
				written = append(written, base+".csv")
			}
		case FormatJSON:
			if o.Report == nil {
				errs = append(errs, fmt.Errorf("export: json: no report given: %w", ecg.ErrOutput))
				continue
			}
			if err := WriteJSONFile(base+".json", o.Report); err != nil {
				errs = append(errs, err)
			} else {
				written = append(written, base+".json")
			}
		case FormatEDF:
			if err := edf.WriteFile(base+".edf", rec, o.EDF); err != nil {
				errs = append(errs, err)
			} else {
				written = append(written, base+".edf")
			}
		case FormatWFDB, FormatWFDB212:
			var wo wfdb.WriteOptions
			if o.WFDB != nil {
				wo = *o.WFDB
			}
			wo.Format = 16
			if strings.EqualFold(strings.TrimSpace(f), FormatWFDB212) {
				wo.Format = 212
			}
			name := WFDBName(stem)
			h, err := wfdb.WriteRecord(dir, name, rec, &wo)
			if err != nil {
				errs = append(errs, err)
				continue
			}
			p := filepath.Join(dir, name)
			written = append(written, p+".hea", p+".dat")
			if len(rec.Beats) == 0 {
				continue
			}
			start, _ := rec.Span()
			t0 := math.Floor(start*h.Fs+1e-6) / h.Fs // frame 0, as frames.Align places it
			if err := wfdb.WriteAnnotationsFile(p+".atr", wfdb.BeatAnnotations(rec.Beats, h.Fs, t0)); err != nil {
				errs = append(errs, err)
			} else {
				written = append(written, p+".atr")
			}
			if err := wfdb.WriteAnnotationsFile(p+".wave", wfdb.WaveAnnotations(rec.Beats, h.Fs, t0)); err != nil {
				errs = append(errs, err)
			} else {
				written = append(written, p+".wave")
			}
		case FormatAECG:
			ao := o.AECG
			if ao == nil && o.Report != nil && o.Report.Measurements != nil {
				ao = &aecg.Options{Measurements: o.Report.Measurements}
			}
			if err := aecg.WriteFile(base+".xml", rec, ao); err != nil {
				errs = append(errs, err)
			} else {
				written = append(written, base+".xml")
			}
		default:
			errs = append(errs, fmt.Errorf("export: unknown format %q (known: %s): %w", f, strings.Join(FormatNames(), ", "), ecg.ErrOutput))
		}
	}
	return written, errors.Join(errs...)
}
