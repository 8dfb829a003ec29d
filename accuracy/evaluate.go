package accuracy

import (
	"context"
	"errors"
	"math"

	"tracelift/ecg"
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
	p.PxPerMMXErrPct, p.PxPerMMYErrPct, p.SkewErrDeg, p.Seconds = nan, nan, nan, nan
	p.HRErrBPM, p.PRErrMS, p.QRSErrMS, p.QTErrMS = nan, nan, nan, nan
	if err != nil {
		p.Class, p.Error = classOf(err), err.Error()
	}
	est := &ecg.Record{}
	if res != nil && res.Trace != nil {
		est = &res.Trace.Record
	}
	ScoreSignals(&p, &printed, full, est)
	if res == nil {
		return p
	}
	p.Seconds = F(res.Elapsed().Seconds())
	if res.Page != nil {
		p.SkewErrDeg = F(res.Page.RotationDeg - truth.RotationDeg)
	}
	if res.Grid != nil {
		c := res.Grid.Calibration
		p.PxPerMMXErrPct = F(100 * (c.PxPerMMX.V/truth.PxPerMMX - 1))
		p.PxPerMMYErrPct = F(100 * (c.PxPerMMY.V/truth.PxPerMMY - 1))
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
