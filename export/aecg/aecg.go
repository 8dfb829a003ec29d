package aecg

import (
	"bytes"
	"crypto/sha256"
	"encoding/xml"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"time"

	"tracelift/ecg"
	"tracelift/export/internal/frames"
	"tracelift/internal/atomicfile"
	"tracelift/measure"
)

// Code systems.
const (
	NS          = "urn:hl7-org:v3"
	CodeSysMDC  = "2.16.840.1.113883.6.24"
	CodeSysCPT  = "2.16.840.1.113883.6.12"
	CodeSysActC = "2.16.840.1.113883.5.4"
	tsLayout    = "20060102150405.000"
)

// Caution is written as the document's text element.
const Caution = "Digitised from a paper tracing. Measurements of a digitised tracing can be wrong and are never a diagnosis. " +
	"Verify them against the original tracing; clinical decisions rest with qualified clinicians under local rules and licensed practice."

// Options controls Write. A nil *Options means defaults.
type Options struct {
	// SubjectID is the trial subject's id extension; "" writes "X"
	// (anonymous).
	SubjectID string
	// Start is the absolute time of the record's time 0. Zero uses
	// Meta.Acquired, and if that is zero too, 2000-01-01 00:00:00 as a
	// placeholder (the effectiveTime then means "unknown").
	Start time.Time
	// ScaleUV is the value of one digit in µV; 0 means 1 µV (quantisation
	// error at most 0.5 µV).
	ScaleUV float64
	// Created, when not zero, is written as the annotation set's
	// activityTime (when the annotations were made).
	Created time.Time
	// Measurements, when not nil, adds the global heart rate, PR, QRS, QT
	// and QTc (Bazett) to the annotation set.
	Measurements *measure.Report
}

// LeadCode returns the MDC code of a lead ("MDC_ECG_LEAD_AVR" for aVR).
func LeadCode(l ecg.Lead) string {
	switch l {
	case ecg.LeadAVR:
		return "MDC_ECG_LEAD_AVR"
	case ecg.LeadAVL:
		return "MDC_ECG_LEAD_AVL"
	case ecg.LeadAVF:
		return "MDC_ECG_LEAD_AVF"
	}
	return "MDC_ECG_LEAD_" + l.String()
}

// LeadFromCode is the inverse of LeadCode.
func LeadFromCode(code string) (ecg.Lead, bool) {
	const p = "MDC_ECG_LEAD_"
	if len(code) <= len(p) || code[:len(p)] != p {
		return ecg.LeadUnknown, false
	}
	l, err := ecg.ParseLead(code[len(p):])
	return l, err == nil
}

// window is one sequenceSet: rows [from, to) of the grid and its leads.
type window struct {
	from, to int
	cols     []int
}

// windows splits every column into runs of recorded samples and groups
// runs with the same bounds.
func windows(g *frames.Grid) []window {
	idx := map[[2]int]int{}
	var out []window
	for j, col := range g.Cols {
		for k := 0; k < len(col); {
			if math.IsNaN(col[k]) {
				k++
				continue
			}
			e := k
			for e < len(col) && !math.IsNaN(col[e]) {
				e++
			}
			key := [2]int{k, e}
			w, ok := idx[key]
			if !ok {
				w = len(out)
				idx[key] = w
				out = append(out, window{from: k, to: e})
			}
			out[w].cols = append(out[w].cols, j)
			k = e
		}
	}
	sort.SliceStable(out, func(a, b int) bool {
		if out[a].from != out[b].from {
			return out[a].from < out[b].from
		}
		return out[a].to > out[b].to
	})
	return out
}

type xw struct{ bytes.Buffer }

func (b *xw) esc(s string) string {
	var o bytes.Buffer
	xml.EscapeText(&o, []byte(s))
	return o.String()
}

func (b *xw) line(depth int, format string, a ...any) {
	for i := 0; i < depth; i++ {
		b.WriteString("  ")
	}
	fmt.Fprintf(b, format, a...)
	b.WriteByte('\n')
}

// uuidFor derives a name-based UUID (SHA-256 truncated, RFC 4122 variant
// bits, version 5 layout) so that the same record gives the same ids.
func uuidFor(parts ...string) string {
	h := sha256.New()
	for _, p := range parts {
		io.WriteString(h, p)
		h.Write([]byte{0})
	}
	s := h.Sum(nil)
	s[6] = s[6]&0x0F | 0x50
	s[8] = s[8]&0x3F | 0x80
	return fmt.Sprintf("%x-%x-%x-%x-%x", s[0:4], s[4:6], s[6:8], s[8:10], s[10:16])
}

// Write writes rec as an HL7 aECG document.
func Write(w io.Writer, rec ecg.Record, opt *Options) error {
	var o Options
	if opt != nil {
		o = *opt
	}
	if o.ScaleUV == 0 {
		o.ScaleUV = 1
	}
	if !(o.ScaleUV > 0) || math.IsInf(o.ScaleUV, 0) {
		return fmt.Errorf("aecg: scale %g µV: %w", o.ScaleUV, ecg.ErrOutput)
	}
	start := o.Start
	if start.IsZero() {
		start = rec.Meta.Acquired
	}
	if start.IsZero() {
		start = time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC)
	}
	g, err := frames.Align(&rec, nil, 500)
	if err != nil {
		return fmt.Errorf("aecg: %w", err)
	}
	ws := windows(&g)
	if len(ws) == 0 {
		return fmt.Errorf("aecg: record has no recorded samples: %w", ecg.ErrOutput)
	}
	ts := func(t float64) string {
		return start.Add(time.Duration(math.Round(t * 1e9))).Format(tsLayout)
	}
	subject := o.SubjectID
	if subject == "" {
		subject = "X"
	}
	docID := uuidFor("doc", rec.Meta.Source, strconv.Itoa(rec.Meta.Page), start.String(), strconv.Itoa(g.N), strconv.FormatFloat(g.Fs, 'g', -1, 64))
	t0, t1 := g.T0, g.T0+float64(g.N)/g.Fs
	var b xw
	b.WriteString(`<?xml version="1.0" encoding="UTF-8"?>` + "\n")
	b.line(0, `<AnnotatedECG xmlns="%s" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" classCode="OBS" moodCode="EVN">`, NS)
	b.line(1, `<id root="%s"/>`, docID)
	b.line(1, `<code code="93000" codeSystem="%s" codeSystemName="CPT-4" displayName="Routine ECG with at least 12 leads"/>`, CodeSysCPT)
	b.line(1, `<text>%s</text>`, b.esc(Caution))
	b.line(1, `<effectiveTime>`)
	b.line(2, `<low value="%s" inclusive="true"/>`, ts(t0))
	b.line(2, `<high value="%s" inclusive="false"/>`, ts(t1))
	b.line(1, `</effectiveTime>`)
	b.line(1, `<componentOf>`)
	b.line(2, `<timepointEvent>`)
	b.line(3, `<componentOf>`)
	b.line(4, `<subjectAssignment>`)
	b.line(5, `<subject>`)
	b.line(6, `<trialSubject>`)
	b.line(7, `<id root="%s" extension="%s"/>`, uuidFor("subject"), b.esc(subject))
	b.line(6, `</trialSubject>`)
	b.line(5, `</subject>`)
	b.line(5, `<componentOf>`)
	b.line(6, `<clinicalTrial>`)
	b.line(7, `<id root="%s" extension="tracelift"/>`, uuidFor("trial"))
	b.line(6, `</clinicalTrial>`)
	b.line(5, `</componentOf>`)
	b.line(4, `</subjectAssignment>`)
	b.line(3, `</componentOf>`)
	b.line(2, `</timepointEvent>`)
	b.line(1, `</componentOf>`)
	b.line(1, `<component>`)
	b.line(2, `<series>`)
	b.line(3, `<id root="%s"/>`, uuidFor("series", docID))
	b.line(3, `<code code="RHYTHM" codeSystem="%s"/>`, CodeSysActC)
	b.line(3, `<effectiveTime>`)
	b.line(4, `<low value="%s" inclusive="true"/>`, ts(t0))
	b.line(4, `<high value="%s" inclusive="false"/>`, ts(t1))
	b.line(3, `</effectiveTime>`)
	inc := strconv.FormatFloat(1/g.Fs, 'g', 12, 64)
	scale := strconv.FormatFloat(o.ScaleUV, 'g', -1, 64)
	var digits []byte
	for _, win := range ws {
		b.line(3, `<component>`)
		b.line(4, `<sequenceSet>`)
		b.line(5, `<component>`)
		b.line(6, `<sequence>`)
		b.line(7, `<code code="TIME_ABSOLUTE" codeSystem="%s"/>`, CodeSysActC)
		b.line(7, `<value xsi:type="GLIST_TS">`)
		b.line(8, `<head value="%s"/>`, ts(g.Time(win.from)))
		b.line(8, `<increment value="%s" unit="s"/>`, inc)
		b.line(7, `</value>`)
		b.line(6, `</sequence>`)
		b.line(5, `</component>`)
		for _, j := range win.cols {
			b.line(5, `<component>`)
			b.line(6, `<sequence>`)
			b.line(7, `<code code="%s" codeSystem="%s" codeSystemName="MDC"/>`, LeadCode(g.Leads[j]), CodeSysMDC)
			b.line(7, `<value xsi:type="SLIST_PQ">`)
			b.line(8, `<origin value="0" unit="uV"/>`)
			b.line(8, `<scale value="%s" unit="uV"/>`, scale)
			digits = digits[:0]
			for k := win.from; k < win.to; k++ {
				if k > win.from {
					digits = append(digits, ' ')
				}
				d := math.Round(g.Cols[j][k] * 1000 / o.ScaleUV)
				if math.Abs(d) > 1<<53 {
					return fmt.Errorf("aecg: lead %v sample %d (%g mV) is out of range: %w", g.Leads[j], k, g.Cols[j][k], ecg.ErrOutput)
				}
				digits = strconv.AppendInt(digits, int64(d), 10)
			}
			b.line(8, `<digits>%s</digits>`, digits)
			b.line(7, `</value>`)
			b.line(6, `</sequence>`)
			b.line(5, `</component>`)
		}
		b.line(4, `</sequenceSet>`)
		b.line(3, `</component>`)
	}
	writeAnnotations(&b, rec.Beats, o.Measurements, o.Created, ts)
	b.line(2, `</series>`)
	b.line(1, `</component>`)
	b.line(0, `</AnnotatedECG>`)
	if _, err := w.Write(b.Bytes()); err != nil {
		return fmt.Errorf("aecg: %w: %w", ecg.ErrOutput, err)
	}
	return nil
}

// Wave annotation codes (MDC).
const (
	CodePWave   = "MDC_ECG_WAVC_PWAVE"
	CodeQRSWave = "MDC_ECG_WAVC_QRSWAVE"
	CodeTWave   = "MDC_ECG_WAVC_TWAVE"
)

func writeAnnotations(b *xw, beats []ecg.Beat, m *measure.Report, created time.Time, ts func(float64) string) {
	type wave struct {
		code    string
		on, off float64
	}
	var waves []wave
	for _, bt := range beats {
		for _, w := range []wave{{CodePWave, bt.POn, bt.POff}, {CodeQRSWave, bt.QRSOn, bt.QRSOff}, {CodeTWave, math.NaN(), bt.TEnd}} {
			if w.code == CodeTWave {
				// T onset is rarely marked; use the QRS offset (the ST
				// segment is then part of the T annotation) only when
				// both exist.
				w.on = bt.QRSOff
			}
			if !math.IsNaN(w.on) && !math.IsNaN(w.off) && w.off > w.on {
				waves = append(waves, w)
			}
		}
	}
	type gm struct {
		code, unit string
		v          measure.Num
	}
	var globals []gm
	if m != nil {
		globals = []gm{{"MDC_ECG_HEART_RATE", "bpm", m.HeartRateBPM}, {"MDC_ECG_TIME_PD_PR", "ms", m.PRMS},
			{"MDC_ECG_TIME_PD_QRS", "ms", m.QRSMS}, {"MDC_ECG_TIME_PD_QT", "ms", m.QTMS}}
		if v, ok := m.QTcMS["bazett"]; ok {
			globals = append(globals, gm{"MDC_ECG_TIME_PD_QTc", "ms", measure.Num(v)})
		}
	}
	if len(waves) == 0 && len(globals) == 0 {
		return
	}
	b.line(3, `<subjectOf>`)
	b.line(4, `<annotationSet>`)
	if !created.IsZero() {
		b.line(5, `<activityTime value="%s"/>`, created.Format("20060102150405"))
	}
	for _, gv := range globals {
		if !gv.v.Valid() {
			continue
		}
		b.line(5, `<component>`)
		b.line(6, `<annotation>`)
		b.line(7, `<code code="%s" codeSystem="%s"/>`, gv.code, CodeSysMDC)
		b.line(7, `<value xsi:type="PQ" value="%s" unit="%s"/>`, strconv.FormatFloat(float64(gv.v), 'f', -1, 64), gv.unit)
		b.line(6, `</annotation>`)
		b.line(5, `</component>`)
	}
	for _, w := range waves {
		b.line(5, `<component>`)
		b.line(6, `<annotation>`)
		b.line(7, `<code code="MDC_ECG_WAVC" codeSystem="%s"/>`, CodeSysMDC)
		b.line(7, `<value xsi:type="CE" code="%s" codeSystem="%s"/>`, w.code, CodeSysMDC)
		b.line(7, `<support>`)
		b.line(8, `<supportingROI>`)
		b.line(9, `<code code="ROIFULL" codeSystem="%s"/>`, CodeSysActC)
		b.line(9, `<component>`)
		b.line(10, `<boundary>`)
		b.line(11, `<code code="TIME_ABSOLUTE" codeSystem="%s"/>`, CodeSysActC)
		b.line(11, `<value xsi:type="IVL_TS">`)
		b.line(12, `<low value="%s" inclusive="true"/>`, ts(w.on))
		b.line(12, `<high value="%s" inclusive="false"/>`, ts(w.off))
		b.line(11, `</value>`)
		b.line(10, `</boundary>`)
		b.line(9, `</component>`)
		b.line(8, `</supportingROI>`)
		b.line(7, `</support>`)
		b.line(6, `</annotation>`)
		b.line(5, `</component>`)
	}
	b.line(4, `</annotationSet>`)
	b.line(3, `</subjectOf>`)
}

// WriteFile writes rec to path as aECG XML, atomically.
func WriteFile(path string, rec ecg.Record, opt *Options) error {
	if err := atomicfile.WriteFile(path, func(w io.Writer) error { return Write(w, rec, opt) }); err != nil {
		return fmt.Errorf("aecg: %w", err)
	}
	return nil
}
