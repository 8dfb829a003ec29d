package accuracy

import (
	"context"
	"errors"
	"math"

	"tracelift/ecg"
	"tracelift/grid"
	"tracelift/imageproc/decode"
	"tracelift/pipeline"
	"tracelift/render"
)

// Evaluate digitises page with cfg and scores the result against truth;
// full is the complete source record (nil: the truth's record). It always
// returns a scored Page (a failed page scores 0 dB on every printed lead)
// and the pipeline result, which may be partial or nil.
func Evaluate(ctx context.Context, page decode.Page, truth *render.Truth, full *ecg.Record, cfg pipeline.Config) (Page, *pipeline.Result) {
	res, err := pipeline.Run(ctx, page, cfg)
	return Score(res, err, truth, full), res
}

// Score scores a pipeline result (possibly partial or nil, with the error
// Run returned) against truth; full is the complete source record (nil:
// the truth's record).
func Score(res *pipeline.Result, err error, truth *render.Truth, full *ecg.Record) Page {
	printed := PrintedRecord(truth)
	if full == nil {
		r := truth.Record()
		full = &r
	}
	p := Page{Condition: truth.Condition, Layout: truth.Layout}
	nan := F(math.NaN())
	p.PxPerMMXErrPct, p.PxPerMMYErrPct, p.SkewErrDeg, p.ResidualMM, p.Seconds = nan, nan, nan, nan, nan
	p.HRErrBPM, p.PRErrMS, p.QRSErrMS, p.QTErrMS = nan, nan, nan, nan
	if err != nil {
		p.Class, p.Error = classOf(err), err.Error()
	}
	est := &ecg.Record{}
	if res != nil && res.Trace != nil {
		est = &res.Trace.Record
	}
	ScoreSignals(&p, &printed, full, est)
	if res != nil && res.Trace != nil {
		// The digitiser's own confidence in each printed lead it
		// returned, beside its SNR: how well the one predicts the other
		// is part of what eval measures.
		p.Quality = make(map[string]F)
		for name := range p.SNRdB {
			if l, err := ecg.ParseLead(name); err == nil {
				if q, ok := res.Trace.Quality[l]; ok {
					p.Quality[name] = F(q)
				}
			}
		}
	}
	if res == nil {
		return p
	}
	p.Seconds = F(res.Elapsed().Seconds())
	if res.Page != nil && res.Grid != nil {
		// Calibration and skew through the page's full mapping (upright
		// px → input px, a photo's registration mesh included) against
		// the truth's full mapping (input px → paper mm, lens included):
		// the upright page's px/mm is what the later stages use, so the
		// input image's px/mm (which a photo's rectification changes) is
		// not the reference.
		s := grid.Evaluate(res.Page, res.Grid, gridReference(truth))
		p.PxPerMMXErrPct, p.PxPerMMYErrPct = F(100*s.PxPerMMErrX), F(100*s.PxPerMMErrY)
		p.SkewErrDeg, p.ResidualMM = F(s.SkewErrDeg), F(s.ResidualMM)
	}
	if c, ok := res.Calibration(); ok {
		p.GainCorrect = math.Abs(c.GainMMPerMV.V/truth.GainMMPerMV-1) < 0.02
		p.GainFromPulse = string(c.GainMMPerMV.Origin) == "pulse"
		p.SpeedCorrect = math.Abs(c.SpeedMMPerS.V/truth.SpeedMMPerS-1) < 0.02
	}
	if res.Report != nil {
		r := res.Report
		m := Intervals{HRBPM: float64(r.HeartRateBPM), PRMS: float64(r.PRMS), QRSMS: float64(r.QRSMS), QTMS: float64(r.QTMS)}
		d := m.Diff(TrueIntervals(full.Beats))
		p.HRErrBPM, p.PRErrMS, p.QRSErrMS, p.QTErrMS = F(d.HRBPM), F(d.PRMS), F(d.QRSMS), F(d.QTMS)
	}
	return p
}

// gridReference is the truth's geometry as grid.Evaluate takes it: the
// paper → image homography and the full image → paper map (lens included,
// render.Truth.PxToPaper).
func gridReference(t *render.Truth) grid.Reference {
	return grid.Reference{PaperToImage: t.PaperToImage, ImageToPaper: t.PxToPaper, GridRectMM: t.GridRectMM,
		RotationDeg: t.RotationDeg, GainMMPerMV: t.GainMMPerMV, SpeedMMPerS: t.SpeedMMPerS}
}

// classOf names an error's class like the catalogue does.
func classOf(err error) string {
	switch {
	case err == nil:
		return ""
	case errors.Is(err, ecg.ErrPartial):
		return "partial"
	case errors.Is(err, ecg.ErrNoECG):
		return "no-ecg"
	case errors.Is(err, ecg.ErrUnreadable):
		return "unreadable"
	}
	return "internal"
}
