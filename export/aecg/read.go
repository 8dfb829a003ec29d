package aecg

import (
	"encoding/xml"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"tracelift/ecg"
)

type xDoc struct {
	XMLName   xml.Name `xml:"urn:hl7-org:v3 AnnotatedECG"`
	Code      xCode    `xml:"code"`
	Effective struct {
		Low xVal `xml:"low"`
	} `xml:"effectiveTime"`
	Component []xSeries `xml:"component"`
}

type xCode struct {
	Code       string `xml:"code,attr"`
	CodeSystem string `xml:"codeSystem,attr"`
}

type xSeries struct {
	Series struct {
		Code      xCode `xml:"code"`
		Component []struct {
			SequenceSet struct {
				Component []struct {
					Sequence struct {
						Code  xCode `xml:"code"`
						Value struct {
							Type      string `xml:"http://www.w3.org/2001/XMLSchema-instance type,attr"`
							Head      xVal   `xml:"head"`
							Increment xVal   `xml:"increment"`
							Origin    xVal   `xml:"origin"`
							Scale     xVal   `xml:"scale"`
							Digits    string `xml:"digits"`
						} `xml:"value"`
					} `xml:"sequence"`
				} `xml:"component"`
			} `xml:"sequenceSet"`
		} `xml:"component"`
	} `xml:"series"`
}

type xVal struct {
	Value string `xml:"value,attr"`
	Unit  string `xml:"unit,attr"`
}

// maxDigits bounds the samples read from one document.
const maxDigits = 100_000_000

// Read reads the rhythm waveforms of an aECG document (the subset Write
// produces: TIME_ABSOLUTE GLIST_TS time sequences and SLIST_PQ lead
// sequences with MDC_ECG_LEAD_* codes, origin/scale in µV, mV or V). Each
// sequenceSet is placed on the record's time base by its head time
// relative to the earliest head; samples outside every window are NaN.
// Errors wrap ecg.ErrUnreadable.
func Read(r io.Reader) (ecg.Record, error) {
	var d xDoc
	dec := xml.NewDecoder(io.LimitReader(r, 1<<31))
	if err := dec.Decode(&d); err != nil {
		return ecg.Record{}, fmt.Errorf("aecg: %w: %w", ecg.ErrUnreadable, err)
	}
	type part struct {
		lead ecg.Lead
		head time.Time
		inc  float64
		vals []float64
	}
	var parts []part
	var first time.Time
	total := 0
	for _, c := range d.Component {
		for _, sc := range c.Series.Component {
			var head time.Time
			inc := 0.0
			for _, q := range sc.SequenceSet.Component {
				s := q.Sequence
				switch {
				case s.Code.Code == "TIME_ABSOLUTE":
					t, err := parseTS(s.Value.Head.Value)
					if err != nil {
						return ecg.Record{}, fmt.Errorf("aecg: time head %q: %w", s.Value.Head.Value, ecg.ErrUnreadable)
					}
					head = t
					inc, err = strconv.ParseFloat(s.Value.Increment.Value, 64)
					if err != nil || !(inc > 0) || math.IsInf(inc, 0) {
						return ecg.Record{}, fmt.Errorf("aecg: time increment %q: %w", s.Value.Increment.Value, ecg.ErrUnreadable)
					}
					switch s.Value.Increment.Unit {
					case "ms":
						inc /= 1000
					case "s", "":
					default:
						return ecg.Record{}, fmt.Errorf("aecg: time increment unit %q: %w", s.Value.Increment.Unit, ecg.ErrUnreadable)
					}
				default:
					l, ok := LeadFromCode(s.Code.Code)
					if !ok {
						continue
					}
					if !(inc > 0) {
						return ecg.Record{}, fmt.Errorf("aecg: lead %s before its time sequence: %w", s.Code.Code, ecg.ErrUnreadable)
					}
					org, err1 := strconv.ParseFloat(orZero(s.Value.Origin.Value), 64)
					scale, err2 := strconv.ParseFloat(s.Value.Scale.Value, 64)
					uo, ok1 := unitToMV(s.Value.Origin.Unit)
					us, ok2 := unitToMV(s.Value.Scale.Unit)
					if err1 != nil || err2 != nil || !ok1 || !ok2 || scale == 0 {
						return ecg.Record{}, fmt.Errorf("aecg: lead %s: bad origin/scale: %w", s.Code.Code, ecg.ErrUnreadable)
					}
					f := strings.Fields(s.Value.Digits)
					total += len(f)
					if total > maxDigits {
						return ecg.Record{}, fmt.Errorf("aecg: more than %d samples: %w", maxDigits, ecg.ErrUnreadable)
					}
					v := make([]float64, len(f))
					for k, x := range f {
						n, err := strconv.ParseFloat(x, 64)
						if err != nil {
							return ecg.Record{}, fmt.Errorf("aecg: lead %s digit %d %q: %w", s.Code.Code, k, x, ecg.ErrUnreadable)
						}
						v[k] = org*uo + n*scale*us
					}
					parts = append(parts, part{lead: l, head: head, inc: inc, vals: v})
					if first.IsZero() || head.Before(first) {
						first = head
					}
				}
			}
		}
	}
	if len(parts) == 0 {
		return ecg.Record{}, fmt.Errorf("aecg: no lead waveforms: %w", ecg.ErrNoECG)
	}
	// The document's effectiveTime is time 0 when it is not after the
	// first window.
	if t, err := parseTS(d.Effective.Low.Value); err == nil && !t.After(first) {
		first = t
	}
	var rec ecg.Record
	rec.Meta.Acquired = first
	for _, p := range parts {
		fs := 1 / p.inc
		if r := math.Round(fs); math.Abs(fs-r) < 1e-6*fs {
			fs = r
		}
		offF := math.Round(p.head.Sub(first).Seconds() * fs)
		// Windows far apart would blow a small document up into a huge
		// record: refuse offsets beyond 4 × the samples present + 10^6.
		if offF < 0 || offF > float64(4*total+1_000_000) {
			return ecg.Record{}, fmt.Errorf("aecg: window starts %g samples after the first, far beyond the %d samples present: %w", offF, total, ecg.ErrUnreadable)
		}
		off := int(offF)
		s := rec.Signal(p.lead)
		if s == nil {
			rec.Set(ecg.Signal{Lead: p.lead, SampleRate: fs})
			s = rec.Signal(p.lead)
		}
		if s.SampleRate != fs {
			return ecg.Record{}, fmt.Errorf("aecg: lead %v at two sample rates: %w", p.lead, ecg.ErrUnreadable)
		}
		if n := off + len(p.vals); len(s.Samples) < n {
			grown := make([]float64, n)
			copy(grown, s.Samples)
			for k := len(s.Samples); k < n; k++ {
				grown[k] = math.NaN()
			}
			s.Samples = grown
		}
		copy(s.Samples[off:], p.vals)
	}
	return rec, nil
}

func orZero(s string) string {
	if s == "" {
		return "0"
	}
	return s
}

func unitToMV(u string) (float64, bool) {
	switch u {
	case "uV", "µV":
		return 1e-3, true
	case "mV", "":
		return 1, true
	case "V":
		return 1e3, true
	}
	return 0, false
}

// parseTS reads an HL7 TS value: YYYYMMDDHHMMSS[.fff…], shorter forms
// allowed, an optional time-zone suffix ignored.
func parseTS(s string) (time.Time, error) {
	if i := strings.IndexAny(s, "+-"); i > 0 {
		s = s[:i]
	}
	frac := ""
	if i := strings.IndexByte(s, '.'); i >= 0 {
		s, frac = s[:i], s[i:]
	}
	layouts := map[int]string{4: "2006", 6: "200601", 8: "20060102", 10: "2006010215", 12: "200601021504", 14: "20060102150405"}
	l, ok := layouts[len(s)]
	if !ok {
		return time.Time{}, fmt.Errorf("bad timestamp %q", s)
	}
	t, err := time.Parse(l, s)
	if err != nil {
		return t, err
	}
	if frac != "" {
		f, err := strconv.ParseFloat("0"+frac, 64)
		if err != nil {
			return t, err
		}
		t = t.Add(time.Duration(math.Round(f * 1e9)))
	}
	return t, nil
}
