package cli

// writeOutputs writes one page's files next to stem; see digitize.go.

import (
	"fmt"
	"os"
	"path/filepath"

	"tracelift/catalog"
	"tracelift/ecg"
	"tracelift/export"
	"tracelift/export/aecg"
	"tracelift/export/edf"
	"tracelift/export/wfdb"
	"tracelift/grid"
	"tracelift/imageproc/decode"
	"tracelift/measure"
	"tracelift/pipeline"
	"tracelift/render"
	"tracelift/trace"
)

// pageRecord returns the digitised record with its metadata and the
// measured beats, ready for the file formats.
func pageRecord(srcPath string, pg decode.Page, r *pipeline.Result) ecg.Record {
	rec := r.Trace.Record.Clone()
	rec.Meta.Source = filepath.Base(srcPath)
	rec.Meta.Page = pg.Index
	if r.Grid != nil {
		rec.Meta.SpeedMMPerS = r.Grid.Calibration.SpeedMMPerS.V
		rec.Meta.GainMMPerMV = r.Grid.Calibration.GainMMPerMV.V
	}
	if r.Report != nil {
		rec.Beats = rec.Beats[:0]
		for _, b := range r.Report.Beats {
			eb := ecg.NewBeat(ecg.BeatUnknown, b.RS)
			if len(b.Class) == 1 {
				eb.Class = ecg.BeatClass(b.Class[0])
			}
			eb.QRSOn, eb.QRSOff, eb.TEnd = float64(b.QRSOnS), float64(b.QRSOffS), float64(b.TEndS)
			rec.Beats = append(rec.Beats, eb)
		}
	}
	return rec
}

// pageReport builds the JSON report of a page.
func pageReport(rec ecg.Record, r *pipeline.Result, layoutGiven bool) *export.Report {
	rep := export.NewReport(rec)
	rep.Generator = "tracelift " + Version
	if g := r.Grid; g != nil {
		c := g.Calibration
		v := func(x grid.Value) export.Value {
			return export.Value{Value: measure.Num(x.V), Origin: string(x.Origin)}
		}
		cal := &export.Calibration{PxPerMMX: v(c.PxPerMMX), PxPerMMY: v(c.PxPerMMY), SpeedMMPerS: v(c.SpeedMMPerS), GainMMPerMV: v(c.GainMMPerMV)}
		if r.Page != nil {
			cal.RotationDeg = export.Value{Value: measure.Num(r.Page.RotationDeg), Origin: "detected"}
		}
		rep.Calibration = cal
	}
	if t := r.Trace; t != nil {
		l := &export.Layout{Name: t.Layout.Name, Origin: "detected", RhythmLeads: []string{}}
		if layoutGiven {
			l.Origin = "option"
		}
		for _, row := range t.Layout.Rows {
			if row.Rhythm {
				for _, c := range row.Cells {
					l.RhythmLeads = append(l.RhythmLeads, c.Lead.String())
				}
				continue
			}
			l.Rows++
			l.Columns = max(l.Columns, len(row.Cells))
		}
		rep.Layout = l
		for lead, q := range t.Quality {
			if li := rep.Lead(lead.String()); li != nil {
				li.Quality = measure.Num(q)
			}
		}
		for _, lead := range t.Flagged {
			if li := rep.Lead(lead.String()); li != nil {
				li.Flags = append(li.Flags, "self_check")
			}
		}
		for _, lead := range ecg.Standard12 {
			if !hasLead(&t.Record, lead) && layoutPrints(t, lead) {
				rep.Flags = append(rep.Flags, export.Flag{Code: "lead_missing", Message: "lead " + lead.String() + " is printed on the page but could not be read"})
			}
		}
	}
	rep.Measurements = r.Report
	rep.Warnings = append(rep.Warnings, r.Warnings...)
	return rep
}

func hasLead(rec *ecg.Record, l ecg.Lead) bool {
	s := rec.Signal(l)
	if s == nil {
		return false
	}
	_, _, ok := s.ValidSpan()
	return ok
}

// writeOutputs writes the page's files: stem.csv and stem.json always,
// then every other requested format. It returns the files written; on
// error the files already written stay (each is complete) and the error
// wraps ecg.ErrOutput.
func writeOutputs(stem, srcPath string, pg decode.Page, r *pipeline.Result, formats []string, layoutGiven bool) ([]string, error) {
	rec := pageRecord(srcPath, pg, r)
	var out []string
	add := func(p string, err error) error {
		if err != nil {
			return fmt.Errorf("%s: %w", p, err)
		}
		out = append(out, p)
		return nil
	}
	for _, f := range formats {
		var err error
		switch f {
		case "csv":
			p := stem + ".csv"
			err = add(p, export.WriteCSVFile(p, rec))
		case "json":
			p := stem + ".json"
			err = add(p, export.WriteJSONFile(p, pageReport(rec, r, layoutGiven)))
		case "edf":
			p := stem + ".edf"
			err = add(p, edf.WriteFile(p, rec, nil))
		case "wfdb":
			dir, name := filepath.Split(stem)
			if dir == "" {
				dir = "."
			}
			name = wfdbName(name)
			base := filepath.Join(dir, name)
			h, werr := wfdb.WriteRecord(dir, name, rec, &wfdb.WriteOptions{Comments: []string{"digitised by tracelift " + Version + " from " + rec.Meta.Source}})
			if err = add(base+".hea", werr); err == nil {
				out = append(out, base+".dat")
				if len(rec.Beats) > 0 {
					start, _ := rec.Span()
					err = add(base+".atr", wfdb.WriteAnnotationsFile(base+".atr", wfdb.BeatAnnotations(rec.Beats, h.Fs, start)))
				}
			}
		case "aecg":
			p := stem + ".xml"
			err = add(p, aecg.WriteFile(p, rec, &aecg.Options{Measurements: r.Report}))
		case "pdf":
			p := stem + ".pdf"
			err = add(p, catalog.WriteFileAtomic(p, func(f *os.File) error {
				return render.WritePDF(f, rec, pdfOptions(rec))
			}))
		default:
			err = fmt.Errorf("%s: %w: format %q is not available in this build", stem, ecg.ErrOutput, f)
		}
		if err != nil {
			return out, err
		}
	}
	return out, nil
}

// pdfOptions re-plots the digitised record on clean paper at its own speed
// and gain.
func pdfOptions(rec ecg.Record) *render.Options {
	o := &render.Options{SpeedMMPerS: rec.Meta.SpeedMMPerS, GainMMPerMV: rec.Meta.GainMMPerMV}
	h := render.Header{Clinic: "Re-plotted by tracelift " + Version, Extra: "Digitised from " + rec.Meta.Source + " — " + caution}
	o.Header = &h
	return o
}

// layoutPrints reports whether the page's layout prints lead l.
func layoutPrints(t *trace.Result, l ecg.Lead) bool {
	for _, row := range t.Layout.Rows {
		for _, c := range row.Cells {
			if c.Lead == l {
				return true
			}
		}
	}
	return false
}

// wfdbName turns a file stem into a WFDB record name, which may hold only
// letters, digits and '_' (header(5)): other characters become '_'.
func wfdbName(s string) string {
	b := []byte(s)
	for i, c := range b {
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '_') {
			b[i] = '_'
		}
	}
	if len(b) == 0 {
		return "record"
	}
	return string(b)
}
