package render

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"

	"tracelift/ecg"
	"tracelift/homography"
)

// TruthVersion is the current sidecar version.
const TruthVersion = 1

// Truth is the ground-truth sidecar of a rendered page: everything needed
// to map the printed record to image pixels and back. Distances are in
// millimetres on the paper (x right, y down, origin at the paper's top-left
// corner), times in seconds on the record's time base, image coordinates
// in pixels with pixel (i, j) centred on (i, j).
type Truth struct {
	Version   int     `json:"version"` // TruthVersion
	Condition string  `json:"condition"`
	WidthPx   int     `json:"width_px"`  // final image width
	HeightPx  int     `json:"height_px"` // final image height
	DPI       float64 `json:"dpi"`       // render resolution before any scan simulation
	// PxPerMMX and PxPerMMY are the final image's pixels per millimetre
	// along the image's x and y axes, as the scanning device sampled the
	// (possibly rotated) sheet: DPI/25.4 times the scan simulation's scale,
	// measured at the paper's centre. Without rotation they are the scale
	// along the paper's x and y axes.
	PxPerMMX float64 `json:"px_per_mm_x"`
	PxPerMMY float64 `json:"px_per_mm_y"`
	// RotationDeg is the rotation applied by the scan simulation,
	// counter-clockwise as seen on the image positive.
	RotationDeg float64 `json:"rotation_deg"`
	// PaperToImage is the row-major homography from paper mm to final
	// image px: [u v w]ᵀ = H·[x y 1]ᵀ, pixel = (u/w, v/w). Exact except for
	// a lens warp of the scan simulation.
	PaperToImage  [9]float64    `json:"paper_to_image"`
	SpeedMMPerS   float64       `json:"speed_mm_s"`
	GainMMPerMV   float64       `json:"gain_mm_mv"`
	Paper         string        `json:"paper"` // "A4", "Letter", "strip"
	PaperWidthMM  float64       `json:"paper_width_mm"`
	PaperHeightMM float64       `json:"paper_height_mm"`
	Layout        string        `json:"layout"`
	Grid          TruthGrid     `json:"grid"`
	Panels        []TruthPanel  `json:"panels"`          // one per printed lead segment
	Pulses        []TruthPulse  `json:"pulses"`          // one per row
	Signals       []TruthSignal `json:"signals"`         // the record that was printed, over the printed time span
	Beats         []TruthBeat   `json:"beats,omitempty"` // the record's beats whose R lies on the printed span
	// TraceWidthMM is the stroke width of the traces.
	TraceWidthMM float64 `json:"trace_width_mm"`
	// GridRectMM is the gridded area [x0, y0, x1, y1] in mm.
	GridRectMM [4]float64 `json:"grid_rect_mm"`
	// Ticks are the column separator ticks [x, y0, y1] in mm.
	Ticks [][3]float64 `json:"ticks,omitempty"`
	// Texts are the printed texts (header, footer, lead labels) with their
	// boxes, so tests can tell text ink from trace ink.
	Texts []TruthText `json:"texts,omitempty"`
	// Lens is the radial lens warp the scan simulation applied after the
	// homography (photos), nil if none. PaperToPx and PxToPaper include
	// it; PaperToImage alone does not.
	Lens *TruthLens `json:"lens,omitempty"`
}

// TruthLens is a radial warp of the final image about a centre: a pixel q
// shows what the homography puts at q' = c + (q − c)(1 + K1·|q − c|²/R2).
type TruthLens struct {
	K1      float64 `json:"k1"`
	CenterX float64 `json:"center_x_px"`
	CenterY float64 `json:"center_y_px"`
	R2      float64 `json:"r2_px2"` // normalising squared radius, px²
}

// distort maps an image point q to the homography's point q'.
func (l *TruthLens) distort(u, v float64) (float64, float64) {
	dx, dy := u-l.CenterX, v-l.CenterY
	f := 1 + l.K1*(dx*dx+dy*dy)/l.R2
	return l.CenterX + dx*f, l.CenterY + dy*f
}

// undistort inverts distort by Newton's method on the radius.
func (l *TruthLens) undistort(u, v float64) (float64, float64) {
	dx, dy := u-l.CenterX, v-l.CenterY
	dp := math.Hypot(dx, dy)
	if dp == 0 {
		return u, v
	}
	d := dp
	for range 20 {
		f := d + l.K1*d*d*d/l.R2 - dp
		fp := 1 + 3*l.K1*d*d/l.R2
		if fp <= 0 {
			break
		}
		step := f / fp
		d -= step
		if math.Abs(step) < 1e-10 {
			break
		}
	}
	r := d / dp
	return l.CenterX + dx*r, l.CenterY + dy*r
}

// TruthText is one printed text and its box [x0, y0, x1, y1] in paper mm
// (from the font's ascent to its descent).
type TruthText struct {
	Text  string     `json:"text"`
	Label bool       `json:"label"` // a lead label (else header or footer)
	BoxMM [4]float64 `json:"box_mm"`
}

// TruthGrid describes the printed grid.
type TruthGrid struct {
	Kind    string  `json:"kind"`     // "lines", "dots", "major" or "none"
	Color   string  `json:"color"`    // full-strength grid colour, "#rrggbb"
	MinorMM float64 `json:"minor_mm"` // 1
	MajorMM float64 `json:"major_mm"` // 5
	X0MM    float64 `json:"x0_mm"`    // x of a major line (the grid's left edge)
	Y0MM    float64 `json:"y0_mm"`    // y of a major line (the grid's top edge)
}

// TruthPanel is one printed lead segment.
type TruthPanel struct {
	Lead        string  `json:"lead"` // standard name; "-aVR" for the inverted Cabrera lead
	Row         int     `json:"row"`
	Col         int     `json:"col"`
	T0          float64 `json:"t0_s"` // window on the record's time base, s
	T1          float64 `json:"t1_s"`
	X0MM        float64 `json:"x0_mm"` // where the window starts and ends on the paper
	X1MM        float64 `json:"x1_mm"`
	BaselineYMM float64 `json:"baseline_y_mm"` // the 0 mV line
	Rhythm      bool    `json:"rhythm"`        // a full-width rhythm row
}

// TruthPulse is one calibration pulse: the rectangle from X0MM to X1MM,
// rising HeightMM above BaselineYMM.
type TruthPulse struct {
	Row         int     `json:"row"`
	X0MM        float64 `json:"x0_mm"`
	X1MM        float64 `json:"x1_mm"`
	BaselineYMM float64 `json:"baseline_y_mm"`
	HeightMM    float64 `json:"height_mm"`
}

// TruthSignal is one lead of the printed record.
type TruthSignal struct {
	Lead       string  `json:"lead"`
	SampleRate float64 `json:"sample_rate"` // Hz
	StartS     float64 `json:"start_s"`
	SamplesMV  Samples `json:"samples_mv"` // NaN written as null
}

// Samples is a float slice whose JSON form writes NaN (and ±Inf) as null
// with 7 significant digits, and reads null back as NaN.
type Samples []float64

// MarshalJSON implements json.Marshaler.
func (s Samples) MarshalJSON() ([]byte, error) {
	b := make([]byte, 0, 2+len(s)*10)
	b = append(b, '[')
	for i, v := range s {
		if i > 0 {
			b = append(b, ',')
		}
		if !finite(v) {
			b = append(b, "null"...)
			continue
		}
		b = strconv.AppendFloat(b, v, 'g', 7, 64)
	}
	return append(b, ']'), nil
}

// UnmarshalJSON implements json.Unmarshaler.
func (s *Samples) UnmarshalJSON(b []byte) error {
	var raw []*float64
	if err := json.Unmarshal(b, &raw); err != nil {
		return err
	}
	out := make([]float64, len(raw))
	for i, p := range raw {
		if p == nil {
			out[i] = math.NaN()
		} else {
			out[i] = *p
		}
	}
	*s = out
	return nil
}

// TruthBeat is one beat's fiducials in seconds (NaN = absent, null in
// JSON).
type TruthBeat struct {
	Class  string
	R      float64
	POn    float64
	PPeak  float64
	POff   float64
	QRSOn  float64
	QRSOff float64
	TPeak  float64
	TEnd   float64
}

type truthBeatJSON struct {
	Class  string   `json:"class"`
	R      *float64 `json:"r_s"`
	POn    *float64 `json:"p_on_s"`
	PPeak  *float64 `json:"p_peak_s"`
	POff   *float64 `json:"p_off_s"`
	QRSOn  *float64 `json:"qrs_on_s"`
	QRSOff *float64 `json:"qrs_off_s"`
	TPeak  *float64 `json:"t_peak_s"`
	TEnd   *float64 `json:"t_end_s"`
}

func optF(v float64) *float64 {
	if !finite(v) {
		return nil
	}
	return &v
}

func fromOpt(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

// MarshalJSON implements json.Marshaler (NaN as null).
func (b TruthBeat) MarshalJSON() ([]byte, error) {
	return json.Marshal(truthBeatJSON{b.Class, optF(b.R), optF(b.POn), optF(b.PPeak), optF(b.POff),
		optF(b.QRSOn), optF(b.QRSOff), optF(b.TPeak), optF(b.TEnd)})
}

// UnmarshalJSON implements json.Unmarshaler (null as NaN).
func (b *TruthBeat) UnmarshalJSON(data []byte) error {
	var j truthBeatJSON
	if err := json.Unmarshal(data, &j); err != nil {
		return err
	}
	*b = TruthBeat{j.Class, fromOpt(j.R), fromOpt(j.POn), fromOpt(j.PPeak), fromOpt(j.POff),
		fromOpt(j.QRSOn), fromOpt(j.QRSOff), fromOpt(j.TPeak), fromOpt(j.TEnd)}
	return nil
}

// WriteTruth writes the page's truth as indented JSON.
func (p *Page) WriteTruth(w io.Writer) error { return WriteTruth(w, p.Truth) }

// WriteTruth writes t as JSON.
func WriteTruth(w io.Writer, t Truth) error {
	b, err := json.MarshalIndent(t, "", " ")
	if err != nil {
		return fmt.Errorf("render: truth: %w", err)
	}
	b = append(b, '\n')
	if _, err := w.Write(b); err != nil {
		return fmt.Errorf("render: write truth: %w: %w", ecg.ErrOutput, err)
	}
	return nil
}

// ReadTruth reads a truth sidecar written by WriteTruth. It rejects
// malformed JSON and unknown versions (wrapping ecg.ErrUnreadable).
func ReadTruth(r io.Reader) (Truth, error) {
	var t Truth
	dec := json.NewDecoder(r)
	if err := dec.Decode(&t); err != nil {
		return Truth{}, fmt.Errorf("render: read truth: %w: %w", ecg.ErrUnreadable, err)
	}
	if t.Version != TruthVersion {
		return Truth{}, fmt.Errorf("render: read truth: version %d not supported (want %d): %w", t.Version, TruthVersion, ecg.ErrUnreadable)
	}
	return t, nil
}

// Record returns the printed record from the truth's signals and beats.
// Lead names that are not standard are skipped.
func (t *Truth) Record() ecg.Record {
	var rec ecg.Record
	for _, s := range t.Signals {
		l, err := ecg.ParseLead(s.Lead)
		if err != nil {
			continue
		}
		rec.Set(ecg.Signal{Lead: l, SampleRate: s.SampleRate, Start: s.StartS, Samples: append([]float64(nil), s.SamplesMV...)})
	}
	for _, b := range t.Beats {
		c := ecg.BeatUnknown
		if len(b.Class) == 1 {
			c = ecg.BeatClass(b.Class[0])
		}
		rec.Beats = append(rec.Beats, ecg.Beat{Class: c, R: b.R, POn: b.POn, PPeak: b.PPeak, POff: b.POff,
			QRSOn: b.QRSOn, QRSOff: b.QRSOff, TPeak: b.TPeak, TEnd: b.TEnd})
	}
	return rec
}

// PaperToPx maps a paper point (mm) to final image pixels with the truth's
// homography and, if present, its lens warp.
func (t *Truth) PaperToPx(xMM, yMM float64) (u, v float64) {
	u, v = homography.Apply(t.PaperToImage, xMM, yMM)
	if t.Lens != nil && t.Lens.K1 != 0 {
		u, v = t.Lens.undistort(u, v)
	}
	return u, v
}

// PxToPaper maps a final image pixel back to paper mm through the lens
// warp (if any) and the inverse of the truth's homography (ok=false if it
// is singular).
func (t *Truth) PxToPaper(u, v float64) (xMM, yMM float64, ok bool) {
	inv, ok := homography.Invert(t.PaperToImage)
	if !ok {
		return 0, 0, false
	}
	if t.Lens != nil && t.Lens.K1 != 0 {
		u, v = t.Lens.distort(u, v)
	}
	x, y := homography.Apply(inv, u, v)
	return x, y, true
}

// Resolution returns the resolution, in dots per inch along x and y, that
// a scanner or fax program would record in the page's file: for flat
// pages, also rotated or with different x and y resolution (fax); ok is
// false for phone photos, whose perspective or lens warp leaves no single
// resolution. WritePNG stores it; evaluations hand it to the pipeline as
// the decoder would.
func (t *Truth) Resolution() (dpiX, dpiY float64, ok bool) {
	flat := t.PaperToImage[6] == 0 && t.PaperToImage[7] == 0 && (t.Lens == nil || t.Lens.K1 == 0)
	if !flat || t.PxPerMMX <= 0 || t.PxPerMMY <= 0 {
		return 0, 0, false
	}
	return t.PxPerMMX * 25.4, t.PxPerMMY * 25.4, true
}

// PanelPoint returns the paper position (mm) of value vMV at time tS on
// panel p (honouring the inverted "-aVR" panel).
func (t *Truth) PanelPoint(p TruthPanel, tS, vMV float64) (xMM, yMM float64) {
	sign := 1.0
	if len(p.Lead) > 0 && p.Lead[0] == '-' {
		sign = -1
	}
	return p.X0MM + (tS-p.T0)*t.SpeedMMPerS, p.BaselineYMM - sign*vMV*t.GainMMPerMV
}

// buildTruth fills the geometry-independent parts of the truth.
func buildTruth(rec *ecg.Record, sh *sheet) Truth {
	o := sh.o
	s := pxPerMM(o.dpi)
	t := Truth{
		Version: TruthVersion, Condition: o.condition, DPI: o.dpi,
		PxPerMMX: s, PxPerMMY: s,
		PaperToImage: [9]float64{s, 0, -0.5, 0, s, -0.5, 0, 0, 1},
		SpeedMMPerS:  o.speed, GainMMPerMV: o.gain,
		Paper: o.paper, PaperWidthMM: sh.wMM, PaperHeightMM: sh.hMM, Layout: o.layout,
		Grid:         TruthGrid{Kind: o.gridKind, Color: hexColor(o.gridColor), MinorMM: 1, MajorMM: 5, X0MM: sh.gx0, Y0MM: sh.gy0},
		TraceWidthMM: o.traceWidth,
		GridRectMM:   [4]float64{sh.gx0, sh.gy0, sh.gx0 + sh.gw, sh.gy0 + sh.gh},
		Ticks:        sh.ticks,
		Texts:        sh.texts,
	}
	if o.gridKind == GridNone {
		t.Grid.Color = ""
	}
	for _, p := range sh.panels {
		t.Panels = append(t.Panels, TruthPanel{Lead: p.label(), Row: p.row, Col: p.col, T0: p.t0, T1: p.t1,
			X0MM: p.x0, X1MM: p.x1, BaselineYMM: p.baseline, Rhythm: p.rhythm})
	}
	for _, p := range sh.pulses {
		t.Pulses = append(t.Pulses, TruthPulse{Row: p.row, X0MM: p.x0, X1MM: p.x1, BaselineYMM: p.baseline, HeightMM: p.height})
	}
	// Signals: each lead over the printed time span (the union of all
	// panel windows), so a long record printed on one page does not carry
	// hours of unprinted samples.
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range sh.panels {
		lo, hi = math.Min(lo, p.t0), math.Max(hi, p.t1)
	}
	for _, sg := range rec.Signals {
		i0 := max(0, int(math.Floor((lo-sg.Start)*sg.SampleRate+1e-6)))
		i1 := min(len(sg.Samples), int(math.Ceil((hi-sg.Start)*sg.SampleRate-1e-6))+1)
		if i1 <= i0 {
			continue
		}
		t.Signals = append(t.Signals, TruthSignal{Lead: sg.Lead.String(), SampleRate: sg.SampleRate,
			StartS: sg.Start + float64(i0)/sg.SampleRate, SamplesMV: append(Samples(nil), sg.Samples[i0:i1]...)})
	}
	for _, b := range rec.Beats {
		if b.R < lo || b.R > hi {
			continue // only beats on the printed span
		}
		cls := ""
		if b.Class != 0 {
			cls = string(rune(b.Class))
		}
		t.Beats = append(t.Beats, TruthBeat{Class: cls, R: b.R, POn: b.POn, PPeak: b.PPeak, POff: b.POff,
			QRSOn: b.QRSOn, QRSOff: b.QRSOff, TPeak: b.TPeak, TEnd: b.TEnd})
	}
	return t
}
