package measure

import (
	"fmt"
	"strings"
)

// Sources of the reference ranges used by flags. "from memory" marks a
// threshold quoted without the document at hand; confirm before relying
// on it.
const (
	srcRate    = "common practice (AHA/ACCF/HRS 2007 recommendations part II, Mason et al., from memory)"
	srcPR      = "common practice (adult PR 120–200 ms)"
	srcP       = "AHA/ACCF/HRS 2009 recommendations part V, Hancock et al. (P < 120 ms, from memory)"
	srcQRS     = "AHA/ACCF/HRS 2009 recommendations part III, Surawicz et al. (QRS ≥ 120 ms, from memory)"
	srcQTc     = "AHA/ACCF/HRS 2009 recommendations part IV, Rautaharju et al. (QTc ≥ 450 ms men, ≥ 460 ms women, ≤ 390 ms short; from memory)"
	srcAxis    = "AHA/ACCF/HRS 2009 recommendations part III, Surawicz et al. (normal −30° to +90°, from memory)"
	srcSokolow = "Sokolow & Lyon 1949, Am Heart J 37:161 (S V1 + R V5/V6 ≥ 3.5 mV)"
	srcCornell = "Casale et al. 1985, JACC 6:572 (R aVL + S V3 ≥ 2.8 mV men, ≥ 2.0 mV women)"
)

// flags compares a report with common adult reference ranges.
func flags(r *Report, o *Options) []Flag {
	out := []Flag{}
	add := func(code, src, format string, a ...any) {
		out = append(out, Flag{Code: code, Message: fmt.Sprintf(format, a...), Source: src})
	}
	if hr := r.HeartRateBPM; hr.Valid() {
		if hr < 60 {
			add("brady", srcRate, "heart rate %.0f bpm is under 60 bpm", float64(hr))
		} else if hr > 100 {
			add("tachy", srcRate, "heart rate %.0f bpm is over 100 bpm", float64(hr))
		}
	}
	if p := r.PRMS; p.Valid() {
		if p > 200 {
			add("long_pr", srcPR, "PR %.0f ms is over 200 ms", float64(p))
		} else if p < 120 {
			add("short_pr", srcPR, "PR %.0f ms is under 120 ms", float64(p))
		}
	}
	if p := r.PMS; p.Valid() && p >= 120 {
		add("wide_p", srcP, "P duration %.0f ms is 120 ms or more", float64(p))
	}
	if q := r.QRSMS; q.Valid() && q >= 120 {
		add("wide_qrs", srcQRS, "QRS %.0f ms is 120 ms or more", float64(q))
	}
	if qtc, ok := r.QTcMS["bazett"]; ok {
		lim, who := 450.0, "men (sex not given; women 460 ms)"
		if strings.EqualFold(o.Sex, "F") {
			lim, who = 460, "women"
		} else if strings.EqualFold(o.Sex, "M") {
			who = "men"
		}
		if qtc >= lim {
			add("long_qtc", srcQTc, "QTc (Bazett) %.0f ms is %.0f ms or more, the limit for %s", qtc, lim, who)
		} else if qtc <= 390 {
			add("short_qtc", srcQTc, "QTc (Bazett) %.0f ms is 390 ms or less", qtc)
		}
	}
	if ax := r.Axes.QRSDeg; ax.Valid() {
		if ax < -30 && ax > -90 {
			add("lad", srcAxis, "QRS axis %.0f° is left of −30°", float64(ax))
		} else if ax > 90 && ax <= 180 {
			add("rad", srcAxis, "QRS axis %.0f° is right of +90°", float64(ax))
		} else if ax <= -90 {
			add("extreme_axis", srcAxis, "QRS axis %.0f° lies between −90° and −180°", float64(ax))
		}
	}
	if v := r.SokolowLyonMV; v != nil && *v >= 3.5 {
		add("lvh_voltage", srcSokolow, "Sokolow–Lyon voltage %.2f mV is 3.5 mV or more", *v)
	}
	if v := r.CornellMV; v != nil {
		lim, who := 2.0, "women (sex not given; men 2.8 mV)"
		if strings.EqualFold(o.Sex, "M") {
			lim, who = 2.8, "men"
		} else if strings.EqualFold(o.Sex, "F") {
			who = "women"
		}
		if *v >= lim {
			add("lvh_voltage", srcCornell, "Cornell voltage %.2f mV is %.1f mV or more, the limit for %s", *v, lim, who)
		}
	}
	return out
}
