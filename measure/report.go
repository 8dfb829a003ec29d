package measure

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"tracelift/ecg"
)

// Caution is the sentence every measurement output carries.
const Caution = "These are measurements of a (possibly digitised) tracing, not a diagnosis. " +
	"Verify them against the original tracing; clinical decisions rest with qualified " +
	"clinicians under local rules and licensed practice."

// Num is a measured value whose unit is given by the field that holds it.
// NaN means "not measurable" and is written to JSON as null (JSON has no
// NaN); null reads back as NaN.
type Num float64

// NaN is the "not measurable" Num.
func NaN() Num { return Num(math.NaN()) }

// Valid reports whether n holds a value.
func (n Num) Valid() bool { return !math.IsNaN(float64(n)) && !math.IsInf(float64(n), 0) }

// MarshalJSON writes the value, or null when it is NaN or infinite.
func (n Num) MarshalJSON() ([]byte, error) {
	if !n.Valid() {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, float64(n), 'f', -1, 64), nil
}

// UnmarshalJSON reads a number or null (NaN).
func (n *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*n = NaN()
		return nil
	}
	var f float64
	if err := json.Unmarshal(b, &f); err != nil {
		return err
	}
	*n = Num(f)
	return nil
}

// Axes are frontal-plane electrical axes in degrees (−180…180], from the
// hexaxial relation θ = atan2(2·aVF, √3·I).
type Axes struct {
	PDeg   Num `json:"p_deg"`
	QRSDeg Num `json:"qrs_deg"`
	TDeg   Num `json:"t_deg"`
}

// LeadMeasures are one lead's measurements on its median beat. Amplitudes
// are in mV relative to the PR-segment (isoelectric) level: Q and S are
// ≤ 0, R ≥ 0. Times are in ms relative to the beat's QRS fiducial.
type LeadMeasures struct {
	Lead     string `json:"lead"`
	Beats    int    `json:"beats"` // beats that entered the median beat
	PMV      Num    `json:"p_mv"`
	QMV      Num    `json:"q_mv"`
	RMV      Num    `json:"r_mv"`
	SMV      Num    `json:"s_mv"`
	TMV      Num    `json:"t_mv"`
	STJMV    Num    `json:"st_j_mv"`
	STJ60MV  Num    `json:"st_j60_mv"`
	POnMS    Num    `json:"p_on_ms"`
	POffMS   Num    `json:"p_off_ms"`
	QRSOnMS  Num    `json:"qrs_on_ms"`
	QRSOffMS Num    `json:"qrs_off_ms"`
	TPeakMS  Num    `json:"t_peak_ms"`
	TEndMS   Num    `json:"t_end_ms"`
}

// Beat is one detected beat.
type Beat struct {
	RS      float64 `json:"r_s"`   // QRS fiducial, s on the record's time base
	Class   string  `json:"class"` // N, V, A or Q
	RRMS    Num     `json:"rr_ms"` // RR ending at this beat
	QRSOnS  Num     `json:"qrs_on_s"`
	QRSOffS Num     `json:"qrs_off_s"`
	TEndS   Num     `json:"t_end_s"`
	QRSMS   Num     `json:"qrs_ms"`
	QTMS    Num     `json:"qt_ms"`
}

// Flag is a measurement outside a common adult reference range.
type Flag struct {
	Code    string `json:"code"`
	Message string `json:"message"`
	Source  string `json:"source"`
}

// Report is the result of Measure. Intervals are global (earliest onset
// and latest offset over the leads, see Measure) in ms.
type Report struct {
	BeatCount     int                `json:"beat_count"` // beats detected
	HeartRateBPM  Num                `json:"heart_rate_bpm"`
	RRMS          Num                `json:"rr_ms"`
	RRSDMS        Num                `json:"rr_sd_ms"`
	RMSSDMS       Num                `json:"rmssd_ms"`
	PMS           Num                `json:"p_ms"`
	PRMS          Num                `json:"pr_ms"`
	QRSMS         Num                `json:"qrs_ms"`
	QTMS          Num                `json:"qt_ms"`
	QTcMS         map[string]float64 `json:"qtc_ms"`
	Axes          Axes               `json:"axes"`
	Leads         []LeadMeasures     `json:"leads"`
	SokolowLyonMV *float64           `json:"sokolow_lyon_mv"`
	CornellMV     *float64           `json:"cornell_mv"`
	Beats         []Beat             `json:"beats"`
	Flags         []Flag             `json:"flags"`
	Warnings      []string           `json:"warnings"`
	Caution       string             `json:"caution"`
}

// QTc formulas (QT and RR in ms, HR in bpm), Report.QTcMS keys.
var qtcNames = []string{"bazett", "fridericia", "framingham", "hodges"}

// QTc returns the QT interval qtMS (ms) corrected for the RR interval rrMS
// (ms) by the named formula: "bazett" QT/√RR (Bazett 1920), "fridericia"
// QT/∛RR (Fridericia 1920), "framingham" QT + 154·(1 − RR) (Sagie et al.
// 1992), "hodges" QT + 1.75·(HR − 60) (Hodges et al. 1983), with RR in
// seconds inside the formulas. It returns NaN for an unknown name or
// non-positive RR.
func QTc(formula string, qtMS, rrMS float64) float64 {
	if !(rrMS > 0) {
		return math.NaN()
	}
	rr := rrMS / 1000
	switch formula {
	case "bazett":
		return qtMS / math.Sqrt(rr)
	case "fridericia":
		return qtMS / math.Cbrt(rr)
	case "framingham":
		return qtMS + 154*(1-rr)
	case "hodges":
		return qtMS + 1.75*(60/rr-60)
	}
	return math.NaN()
}

// FrontalAxis returns the frontal-plane axis in degrees from the net
// amplitudes (or areas) of leads I and aVF: θ = atan2(2·aVF, √3·I), exact
// for Einthoven's equilateral triangle (I = E cos θ, aVF = (√3/2) E sin θ).
// It returns NaN when both are zero or either is NaN.
func FrontalAxis(leadI, aVF float64) float64 {
	if (leadI == 0 && aVF == 0) || math.IsNaN(leadI) || math.IsNaN(aVF) {
		return math.NaN()
	}
	return math.Atan2(2*aVF, math.Sqrt(3)*leadI) * 180 / math.Pi
}

// HeartRate returns the heart rate in beats per minute for a mean RR
// interval rrMS in ms (60 000 / RR), NaN for non-positive RR.
func HeartRate(rrMS float64) float64 {
	if !(rrMS > 0) {
		return math.NaN()
	}
	return 60000 / rrMS
}

// WriteSummary writes a short aligned plain-text summary: rate, intervals,
// QTc by each formula, axes, voltages, flags, warnings and the caution.
func (r *Report) WriteSummary(w io.Writer) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	f := func(v Num, unit string, prec int) string {
		if !v.Valid() {
			return "—"
		}
		s := strconv.FormatFloat(float64(v), 'f', prec, 64)
		if unit == "°" {
			return s + unit
		}
		return s + " " + unit
	}
	pv := func(p *float64) Num {
		if p == nil {
			return NaN()
		}
		return Num(*p)
	}
	var q []string
	for _, k := range qtcNames {
		if v, ok := r.QTcMS[k]; ok {
			q = append(q, fmt.Sprintf("%s %.0f", k, v))
		}
	}
	qs := "—"
	if len(q) > 0 {
		qs = strings.Join(q, ", ") + " ms"
	}
	lines := [][2]string{
		{"Heart rate", fmt.Sprintf("%s (%d beats)", f(r.HeartRateBPM, "bpm", 0), r.BeatCount)},
		{"RR mean / SD", f(r.RRMS, "ms", 0) + " / " + f(r.RRSDMS, "ms", 0)},
		{"P duration", f(r.PMS, "ms", 0)},
		{"PR", f(r.PRMS, "ms", 0)},
		{"QRS", f(r.QRSMS, "ms", 0)},
		{"QT", f(r.QTMS, "ms", 0)},
		{"QTc", qs},
		{"Axes P / QRS / T", f(r.Axes.PDeg, "°", 0) + " / " + f(r.Axes.QRSDeg, "°", 0) + " / " + f(r.Axes.TDeg, "°", 0)},
		{"Sokolow–Lyon / Cornell", f(pv(r.SokolowLyonMV), "mV", 2) + " / " + f(pv(r.CornellMV), "mV", 2)},
	}
	for _, l := range lines {
		fmt.Fprintf(tw, "%s\t%s\n", l[0], l[1])
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	for _, fl := range r.Flags {
		fmt.Fprintf(w, "flag %s: %s [%s]\n", fl.Code, fl.Message, fl.Source)
	}
	for _, s := range r.Warnings {
		fmt.Fprintf(w, "warning: %s\n", s)
	}
	_, err := fmt.Fprintf(w, "Caution: %s\n", r.Caution)
	return err
}

// ECGBeats returns the per-beat table as ecg.Beat values — R, class, QRS
// onset and offset and T end in seconds on the record's time base, NaN
// where not measured; P points and T peak are NaN (they are measured on
// the median beats only) — for the annotation exports.
func (r *Report) ECGBeats() []ecg.Beat {
	out := make([]ecg.Beat, len(r.Beats))
	for i, b := range r.Beats {
		c := ecg.BeatUnknown
		if len(b.Class) == 1 {
			c = ecg.BeatClass(b.Class[0])
		}
		e := ecg.NewBeat(c, b.RS)
		e.QRSOn, e.QRSOff, e.TEnd = float64(b.QRSOnS), float64(b.QRSOffS), float64(b.TEndS)
		out[i] = e
	}
	return out
}
