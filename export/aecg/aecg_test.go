package aecg

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"errors"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"tracelift/ecg"
	"tracelift/internal/biosig"
	"tracelift/internal/testrecord"
	"tracelift/measure"
)

// page3x4 is an invented 3 × 4 + rhythm-strip record at 500 Hz: each
// column of leads covers 2.5 s, lead II covers the full 10 s.
func page3x4(seed uint64) ecg.Record {
	rec := testrecord.Build(testrecord.Spec{Seed: seed, Seconds: 10, Amp: 0.9, Omega: 2 * math.Pi * 1.1, Noise: 0.02,
		Gap: testrecord.Columns3x4, Meta: ecg.Metadata{Source: "demo.png", Acquired: time.Date(2025, 5, 4, 9, 30, 0, 0, time.UTC)}})
	b := ecg.NewBeat(ecg.BeatNormal, 0.7)
	b.POn, b.POff, b.QRSOn, b.QRSOff, b.TEnd = 0.5, 0.6, 0.66, 0.75, 1.05
	rec.Beats = []ecg.Beat{b}
	return rec
}

type node struct {
	XMLName xml.Name
	Attrs   []xml.Attr `xml:",any,attr"`
	Nodes   []node     `xml:",any"`
	Text    string     `xml:",chardata"`
}

func (n *node) attr(name string) string {
	for _, a := range n.Attrs {
		if a.Name.Local == name {
			return a.Value
		}
	}
	return ""
}

func (n *node) find(path ...string) []*node {
	if len(path) == 0 {
		return []*node{n}
	}
	var out []*node
	for i := range n.Nodes {
		if n.Nodes[i].XMLName.Local == path[0] {
			out = append(out, n.Nodes[i].find(path[1:]...)...)
		}
	}
	return out
}

// The document is well-formed XML with the published structure
// (standards.md §5.3): AnnotatedECG in urn:hl7-org:v3, code 93000, the
// subject chain, a RHYTHM series, sequence sets with a TIME_ABSOLUTE
// GLIST_TS and SLIST_PQ leads with MDC codes; one sequence set per
// recording window (4 columns + the rhythm strip = 5 here).
func TestStructure(t *testing.T) {
	rec := page3x4(1)
	var b bytes.Buffer
	if err := Write(&b, rec, &Options{Measurements: &measure.Report{HeartRateBPM: 66, PRMS: 160, QRSMS: 90, QTMS: 400, QTcMS: map[string]float64{"bazett": 419}}}); err != nil {
		t.Fatal(err)
	}
	var root node
	if err := xml.Unmarshal(b.Bytes(), &root); err != nil {
		t.Fatalf("not well-formed: %v", err)
	}
	if root.XMLName.Space != NS || root.XMLName.Local != "AnnotatedECG" {
		t.Fatalf("root %v", root.XMLName)
	}
	if c := root.find("code"); len(c) != 1 || c[0].attr("code") != "93000" {
		t.Errorf("code %v", c)
	}
	if s := root.find("componentOf", "timepointEvent", "componentOf", "subjectAssignment", "subject", "trialSubject", "id"); len(s) != 1 || s[0].attr("extension") != "X" {
		t.Errorf("anonymous trial subject missing: %v", s)
	}
	series := root.find("component", "series")
	if len(series) != 1 || series[0].find("code")[0].attr("code") != "RHYTHM" {
		t.Fatalf("series %v", series)
	}
	sets := series[0].find("component", "sequenceSet")
	if len(sets) != 5 {
		t.Fatalf("%d sequence sets, want 5", len(sets))
	}
	leadsSeen := map[string]int{}
	for i, set := range sets {
		seqs := set.find("component", "sequence")
		if seqs[0].find("code")[0].attr("code") != "TIME_ABSOLUTE" {
			t.Errorf("set %d does not start with the time sequence", i)
		}
		v := seqs[0].find("value")[0]
		if v.attr("type") != "GLIST_TS" || v.find("increment")[0].attr("value") != "0.002" {
			t.Errorf("set %d time value %+v", i, v.Attrs)
		}
		for _, q := range seqs[1:] {
			c := q.find("code")[0]
			if c.attr("codeSystem") != CodeSysMDC || !strings.HasPrefix(c.attr("code"), "MDC_ECG_LEAD_") {
				t.Errorf("lead code %v", c.Attrs)
			}
			val := q.find("value")[0]
			n := len(strings.Fields(val.find("digits")[0].Text))
			want := 1250
			if c.attr("code") == "MDC_ECG_LEAD_II" {
				want = 5000
			}
			if val.attr("type") != "SLIST_PQ" || n != want || val.find("scale")[0].attr("unit") != "uV" {
				t.Errorf("%s: type %s, %d digits (want %d)", c.attr("code"), val.attr("type"), n, want)
			}
			leadsSeen[c.attr("code")]++
		}
	}
	if len(leadsSeen) != 12 || leadsSeen["MDC_ECG_LEAD_AVR"] != 1 {
		t.Errorf("leads %v", leadsSeen)
	}
	anns := series[0].find("subjectOf", "annotationSet", "component", "annotation")
	codes := map[string]bool{}
	for _, a := range anns {
		codes[a.find("code")[0].attr("code")] = true
		for _, v := range a.find("value") {
			codes[v.attr("code")] = true
		}
	}
	for _, c := range []string{"MDC_ECG_HEART_RATE", "MDC_ECG_TIME_PD_QT", CodePWave, CodeQRSWave, CodeTWave} {
		if !codes[c] {
			t.Errorf("annotation %s missing (have %v)", c, codes)
		}
	}
}

// Write → Read: each recorded sample back within half a digit (0.5 µV),
// windows at their times, unrecorded samples NaN.
func TestRoundTrip(t *testing.T) {
	rec := page3x4(2)
	var b bytes.Buffer
	if err := Write(&b, rec, nil); err != nil {
		t.Fatal(err)
	}
	back, err := Read(&b)
	if err != nil {
		t.Fatal(err)
	}
	if !back.Meta.Acquired.Equal(rec.Meta.Acquired) {
		t.Errorf("start %v", back.Meta.Acquired)
	}
	worst := 0.0
	for _, s := range rec.Signals {
		g := back.Signal(s.Lead)
		if g == nil || g.SampleRate != 500 {
			t.Fatalf("lead %v: %+v", s.Lead, g)
		}
		for k, v := range s.Samples {
			gv := math.NaN()
			if k < len(g.Samples) {
				gv = g.Samples[k]
			}
			if math.IsNaN(v) != math.IsNaN(gv) {
				t.Fatalf("%v[%d]: %g vs %g", s.Lead, k, v, gv)
			}
			if !math.IsNaN(v) {
				worst = math.Max(worst, math.Abs(v-gv))
			}
		}
	}
	t.Logf("aECG worst error %.3f µV", worst*1000)
	if worst > 0.0005+1e-12 {
		t.Errorf("error %g mV above half a digit", worst)
	}
}

func TestReadErrors(t *testing.T) {
	for name, doc := range map[string]string{
		"not xml":    "hello",
		"wrong root": `<foo xmlns="urn:hl7-org:v3"/>`,
		"bad digits": `<AnnotatedECG xmlns="urn:hl7-org:v3" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance"><component><series><component><sequenceSet><component><sequence><code code="TIME_ABSOLUTE"/><value xsi:type="GLIST_TS"><head value="20000101000000"/><increment value="0.002" unit="s"/></value></sequence></component><component><sequence><code code="MDC_ECG_LEAD_I"/><value xsi:type="SLIST_PQ"><origin value="0" unit="uV"/><scale value="1" unit="uV"/><digits>1 x 3</digits></value></sequence></component></sequenceSet></component></series></component></AnnotatedECG>`,
		"truncated":  `<AnnotatedECG xmlns="urn:hl7-org:v3"><component>`,
	} {
		if _, err := Read(strings.NewReader(doc)); !errors.Is(err, ecg.ErrUnreadable) {
			t.Errorf("%s: err = %v", name, err)
		}
	}
}

// biosig's save2gdf (Debian biosig-tools) reads the document as HL7aECG
// (standards.md §5.6: 12 leads at 500 Hz read back). We check the channel
// count and rate on a record whose 12 leads share one window.
func TestBiosigReadsAECG(t *testing.T) {
	biosig.Tool(t)
	rec := page3x4(3)
	for i := range rec.Signals { // fill the gaps: one window for all leads
		for k, v := range rec.Signals[i].Samples {
			if math.IsNaN(v) {
				rec.Signals[i].Samples[k] = 0.1
			}
		}
	}
	dir := t.TempDir()
	if err := WriteFile(filepath.Join(dir, "demo.xml"), rec, nil); err != nil {
		t.Fatal(err)
	}
	out := biosig.JSON(t, dir, "demo.xml")
	var doc struct {
		TYPE             string
		NumberOfChannels int
		Samplingrate     float64
		NumberOfSamples  int
	}
	if err := json.Unmarshal(out, &doc); err != nil {
		t.Fatalf("JSON: %v\n%s", err, out)
	}
	if doc.NumberOfChannels != 12 || doc.Samplingrate != 500 || doc.NumberOfSamples != 5000 {
		t.Errorf("biosig read %+v", doc)
	}
	lines := biosig.CSV(t, dir, "demo.xml", "demo.csv")
	if len(lines) < 5000 {
		t.Fatalf("biosig CSV has %d lines", len(lines))
	}
	if !strings.Contains(lines[0], "I [uV]") {
		t.Fatalf("biosig CSV header %q, expected µV columns", lines[0])
	}
	checked := 0
	for k, line := range lines[len(lines)-5000:] {
		f := strings.Split(strings.TrimSpace(line), ",")
		for j, s := range rec.Signals {
			got, err := strconv.ParseFloat(strings.TrimSpace(f[j]), 64)
			if err != nil {
				t.Fatalf("row %d col %d %q: %v", k, j, f[j], err)
			}
			got /= 1000 // biosig reports this file in µV ("I [uV]")
			if math.Abs(got-s.Samples[k]) > 0.0005+1e-9 {
				t.Fatalf("row %d lead %v: biosig %g, written %g", k, s.Lead, got, s.Samples[k])
			}
			checked++
		}
	}
	t.Logf("biosig agreed on %d samples", checked)
}
