package cli

// writeOutputs writes one page's files next to stem; see digitize.go.

import (
	"fmt"
	"io"
	"math"
	"path/filepath"

	"tracelift/ecg"
	"tracelift/export"
	"tracelift/export/overlay"
	"tracelift/export/wfdb"
	"tracelift/grid"
	"tracelift/imageproc/decode"
	"tracelift/internal/atomicfile"
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
	if c, ok := r.Calibration(); ok {
		rec.Meta.SpeedMMPerS = c.SpeedMMPerS.V
		rec.Meta.GainMMPerMV = c.GainMMPerMV.V
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
	if c, ok := r.Calibration(); ok {
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
		for _, lead := range t.CrossedLeads() {
			if li := rep.Lead(lead.String()); li != nil {
				li.Flags = append(li.Flags, "crossed")
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
	dir, name := filepath.Split(stem)
	if dir == "" {
		dir = "."
	}
	var data, pictures []string
	for _, f := range formats {
		if hasString(export.FormatNames(), f) {
			data = append(data, f)
		} else {
			pictures = append(pictures, f)
		}
	}
	out, err := export.WriteFormats(dir, name, data, rec, &export.Outputs{
		Report: pageReport(rec, r, layoutGiven),
		WFDB:   &wfdb.WriteOptions{Comments: []string{"digitised by tracelift " + Version + " from " + rec.Meta.Source}},
	})
	if err != nil {
		return out, fmt.Errorf("%s: %w", filepath.Base(stem), err)
	}
	for _, f := range pictures {
		var p string
		var err error
		switch f {
		case "svg":
			p = stem + "-overlay.svg"
			err = overlay.WriteSVGFile(p, pg.Image, overlaySegments(r), overlayOptions(rec, r))
		case "png":
			p = stem + "-overlay.png"
			err = overlay.WritePNGFile(p, pg.Image, overlaySegments(r), overlayOptions(rec, r))
		case "pdf":
			p = stem + ".pdf"
			err = atomicfile.WriteFile(p, func(w io.Writer) error {
				return render.WritePDF(w, rec, pdfOptions(rec))
			})
		default:
			err = fmt.Errorf("%w: format %q is not available in this build", ecg.ErrOutput, f)
		}
		if err != nil {
			return out, fmt.Errorf("%s: %w", filepath.Base(p), err)
		}
		out = append(out, p)
	}
	return out, nil
}

// overlaySegments draws, for every printed panel, the signal the record
// returns for its lead over the panel's window, mapped from the upright
// page back to source-image pixels: what was withheld shows as a gap and
// what the self-checks re-read shows where it was re-read, so the picture
// is the record, not the path followed before the checks. A lead printed
// twice shows its merged signal on both copies.
func overlaySegments(r *pipeline.Result) []overlay.Segment {
	if r.Trace == nil || r.Page == nil {
		return nil
	}
	rec := r.Record()
	segs := make([]overlay.Segment, 0, len(r.Trace.Panels))
	for _, p := range r.Trace.Panels {
		s := overlay.Segment{Lead: p.Lead.String(), Quality: p.Quality}
		if p.Negated {
			s.Lead = "-" + s.Lead
		}
		sig := rec.Signal(p.Lead)
		if sig == nil || p.PxPerS == 0 {
			continue
		}
		// One point per image column of the window.
		n := int(math.Ceil(math.Abs((p.T1 - p.T0) * p.PxPerS)))
		s.Points = make([][2]float64, 0, n+1)
		for i := 0; i <= n; i++ {
			t := p.T0 + (p.T1-p.T0)*float64(i)/float64(max(n, 1))
			v := sig.At(t)
			if math.IsNaN(v) {
				s.Points = append(s.Points, [2]float64{math.NaN(), math.NaN()})
				continue
			}
			pt := p.Point(t, v)
			x, y := r.Page.SourcePoint(pt.X, pt.Y)
			s.Points = append(s.Points, [2]float64{x, y})
		}
		segs = append(segs, s)
	}
	return segs
}

func overlayOptions(rec ecg.Record, r *pipeline.Result) *overlay.Options {
	c := "tracelift " + Version + " — " + rec.Meta.Source
	if k, ok := r.Calibration(); ok {
		c += fmt.Sprintf(" — %.2f px/mm (%s), %.4g mm/s, %.4g mm/mV", k.PxPerMMX.V, k.PxPerMMX.Origin,
			k.SpeedMMPerS.V, k.GainMMPerMV.V)
	}
	return &overlay.Options{Caption: c + " — verify against the original tracing"}
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
