package export

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"tracelift/ecg"
	"tracelift/export/internal/frames"
	"tracelift/internal/atomicfile"
)

// CSVLeads returns the column order WriteCSV uses for rec: the twelve
// standard leads, then any other leads of rec in conventional order.
func CSVLeads(rec *ecg.Record) []ecg.Lead {
	leads := append([]ecg.Lead(nil), ecg.Standard12...)
	for _, l := range rec.Leads() {
		if l.Index() < 0 {
			leads = append(leads, l)
		}
	}
	return leads
}

// WriteCSV writes rec as CSV: a header row "time_s,I,II,…,V6[,extra
// leads]", then one row per sample of the record's common grid (the
// highest sample rate among its leads; slower leads are resampled), time
// in seconds with 6 decimals and values in mV with 4 decimals. A lead not
// recorded at a moment, or not recorded at all, gives an empty cell.
func WriteCSV(w io.Writer, rec ecg.Record) error {
	g, err := frames.Align(&rec, CSVLeads(&rec), 500)
	if err != nil {
		return fmt.Errorf("export: csv: %w", err)
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	bw.WriteString("time_s")
	for _, l := range g.Leads {
		bw.WriteByte(',')
		bw.WriteString(l.String())
	}
	bw.WriteByte('\n')
	var num []byte
	for k := 0; k < g.N; k++ {
		num = strconv.AppendFloat(num[:0], g.Time(k), 'f', 6, 64)
		bw.Write(num)
		for j := range g.Leads {
			bw.WriteByte(',')
			if v := g.Cols[j][k]; !math.IsNaN(v) && !math.IsInf(v, 0) {
				num = strconv.AppendFloat(num[:0], v, 'f', 4, 64)
				if string(num) == "-0.0000" {
					num = append(num[:0], "0.0000"...)
				}
				bw.Write(num)
			}
		}
		bw.WriteByte('\n')
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("export: csv: %w: %w", ecg.ErrOutput, err)
	}
	return nil
}

// WriteCSVFile writes rec to path as CSV, atomically.
func WriteCSVFile(path string, rec ecg.Record) error {
	if err := atomicfile.WriteFile(path, func(w io.Writer) error { return WriteCSV(w, rec) }); err != nil {
		return fmt.Errorf("export: csv: %w", err)
	}
	return nil
}

// CSVOptions controls ReadCSV. A nil *CSVOptions means defaults.
type CSVOptions struct {
	// SampleRate (Hz) is required when the file has no time column and
	// ignored otherwise.
	SampleRate float64
}

// maxCSVRows bounds the rows read from one CSV file (24 h at 1000 Hz).
const maxCSVRows = 86_400_000

// ReadCSV reads a CSV table of lead samples: a header row naming the
// columns, separated by commas, semicolons or tabs (whichever the header
// row holds most of; with semicolons a decimal comma is accepted). A column named time_s, time, t, seconds or sec gives times in
// seconds (time_ms: milliseconds); it must be uniform within 1 % of the
// median step. Other columns are read as leads with ecg.ParseLead, unit
// suffixes like "I [mV]" or "V1 (uV)" accepted; columns that name no
// lead are skipped and listed in Meta.Notes. Empty cells and NaN read as
// NaN; leads with no value at all are left out of the record. Errors wrap
// ecg.ErrUnreadable.
func ReadCSV(r io.Reader, opt *CSVOptions) (ecg.Record, error) {
	var o CSVOptions
	if opt != nil {
		o = *opt
	}
	br := bufio.NewReaderSize(r, 1<<16)
	head, err := br.Peek(4096)
	if err != nil && err != io.EOF && !errors.Is(err, bufio.ErrBufferFull) {
		return ecg.Record{}, fmt.Errorf("csv: %w: %w", ecg.ErrUnreadable, err)
	}
	first := string(head)
	if i := strings.IndexAny(first, "\r\n"); i >= 0 {
		first = first[:i]
	}
	cr := csv.NewReader(br)
	cr.Comma = ','
	best := strings.Count(first, ",")
	for _, c := range []rune{';', '\t'} {
		if n := strings.Count(first, string(c)); n > best {
			cr.Comma, best = c, n
		}
	}
	cr.Comment = '#'
	cr.FieldsPerRecord = -1
	cr.LazyQuotes = true
	cr.ReuseRecord = true
	hdr, err := cr.Read()
	if err != nil {
		return ecg.Record{}, fmt.Errorf("csv: no header row: %w", ecg.ErrUnreadable)
	}
	timeCol, timeScale := -1, 1.0
	type col struct {
		idx   int
		lead  ecg.Lead
		scale float64
		vals  []float64
		any   bool
	}
	var cols []*col
	var rec ecg.Record
	seen := map[ecg.Lead]bool{}
	for i, h := range hdr {
		name, unit := splitUnit(h)
		lname := strings.ToLower(name)
		if timeCol < 0 {
			switch lname {
			case "time_s", "time", "t", "seconds", "sec", "time_sec", "s":
				timeCol = i
				continue
			case "time_ms", "ms":
				timeCol, timeScale = i, 1e-3
				continue
			}
		}
		l, err := ecg.ParseLead(name)
		if err != nil || seen[l] {
			rec.Meta.Notes = append(rec.Meta.Notes, fmt.Sprintf("csv column %d %q skipped: not a lead name or a repeated lead", i+1, h))
			continue
		}
		scale := 1.0
		switch strings.ToLower(unit) {
		case "", "mv":
		case "uv", "µv", "μv":
			scale = 1e-3
		case "v":
			scale = 1e3
		default:
			return ecg.Record{}, fmt.Errorf("csv: column %q: unknown unit %q: %w", h, unit, ecg.ErrUnreadable)
		}
		seen[l] = true
		cols = append(cols, &col{idx: i, lead: l, scale: scale})
	}
	if len(cols) == 0 {
		return ecg.Record{}, fmt.Errorf("csv: no column names a lead (header %q): %w", strings.Join(hdr, string(cr.Comma)), ecg.ErrUnreadable)
	}
	if timeCol < 0 && (!(o.SampleRate > 0) || math.IsInf(o.SampleRate, 0)) {
		return ecg.Record{}, fmt.Errorf("csv: no time column and no sample rate given: %w", ecg.ErrUnreadable)
	}
	var times []float64
	row := 1
	for {
		f, err := cr.Read()
		if err == io.EOF {
			break
		}
		row++
		if err != nil {
			return ecg.Record{}, fmt.Errorf("csv: row %d: %w: %w", row, ecg.ErrUnreadable, err)
		}
		if len(f) == 1 && strings.TrimSpace(f[0]) == "" {
			continue
		}
		if len(times) >= maxCSVRows {
			return ecg.Record{}, fmt.Errorf("csv: more than %d rows: %w", maxCSVRows, ecg.ErrUnreadable)
		}
		if timeCol >= 0 {
			if timeCol >= len(f) {
				return ecg.Record{}, fmt.Errorf("csv: row %d has no time value: %w", row, ecg.ErrUnreadable)
			}
			tv, err := parseCell(f[timeCol], cr.Comma)
			if err != nil || math.IsNaN(tv) {
				return ecg.Record{}, fmt.Errorf("csv: row %d: bad time %q: %w", row, f[timeCol], ecg.ErrUnreadable)
			}
			times = append(times, tv*timeScale)
		} else {
			times = append(times, 0)
		}
		for _, c := range cols {
			v := math.NaN()
			if c.idx < len(f) {
				var err error
				if v, err = parseCell(f[c.idx], cr.Comma); err != nil {
					return ecg.Record{}, fmt.Errorf("csv: row %d, column %s: bad number %q: %w", row, c.lead, f[c.idx], ecg.ErrUnreadable)
				}
			}
			if !math.IsNaN(v) {
				v *= c.scale
				c.any = true
			}
			c.vals = append(c.vals, v)
		}
	}
	if len(times) == 0 {
		return ecg.Record{}, fmt.Errorf("csv: no data rows: %w", ecg.ErrUnreadable)
	}
	fs, start := o.SampleRate, 0.0
	if timeCol >= 0 {
		var err error
		if fs, start, err = uniformRate(times); err != nil {
			return ecg.Record{}, fmt.Errorf("csv: %w", err)
		}
	}
	for _, c := range cols {
		if c.any {
			rec.Set(ecg.Signal{Lead: c.lead, SampleRate: fs, Start: start, Samples: c.vals})
		}
	}
	if len(rec.Signals) == 0 {
		return ecg.Record{}, fmt.Errorf("csv: every lead column is empty: %w", ecg.ErrNoECG)
	}
	return rec, nil
}

// ReadCSVFile reads a CSV file (see ReadCSV); errors name the file.
func ReadCSVFile(path string, opt *CSVOptions) (ecg.Record, error) {
	f, err := os.Open(path)
	if err != nil {
		return ecg.Record{}, fmt.Errorf("export: %w: %w", ecg.ErrUnreadable, err)
	}
	defer f.Close()
	rec, err := ReadCSV(f, opt)
	if err != nil {
		return rec, fmt.Errorf("export: %s: %w", path, err)
	}
	rec.Meta.Source = filepath.Base(path)
	return rec, nil
}

// splitUnit splits "I [mV]" or "V1 (uV)" into name and unit.
func splitUnit(h string) (string, string) {
	h = strings.TrimSpace(strings.TrimPrefix(h, "\ufeff"))
	for _, p := range [][2]string{{"[", "]"}, {"(", ")"}} {
		if strings.HasSuffix(h, p[1]) {
			if i := strings.LastIndex(h, p[0]); i > 0 {
				return strings.TrimSpace(h[:i]), strings.TrimSpace(h[i+1 : len(h)-1])
			}
		}
	}
	return h, ""
}

// parseCell reads a number; empty or NaN gives NaN. With ';' as the
// separator a decimal comma is accepted.
func parseCell(s string, comma rune) (float64, error) {
	s = strings.TrimSpace(s)
	if s == "" || strings.EqualFold(s, "nan") || strings.EqualFold(s, "na") {
		return math.NaN(), nil
	}
	if comma == ';' {
		s = strings.Replace(s, ",", ".", 1)
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) {
		return 0, fmt.Errorf("bad number %q", s)
	}
	return v, nil
}

// uniformRate derives the sample rate from a time column: the median step,
// after checking every step is within 1 % of it.
func uniformRate(times []float64) (fs, start float64, err error) {
	if len(times) < 2 {
		return 0, 0, fmt.Errorf("one data row: cannot derive the sample rate: %w", ecg.ErrUnreadable)
	}
	d := make([]float64, len(times)-1)
	for i := range d {
		d[i] = times[i+1] - times[i]
	}
	s := append([]float64(nil), d...)
	sort.Float64s(s)
	step := s[len(s)/2]
	if !(step > 0) {
		return 0, 0, fmt.Errorf("time column does not increase: %w", ecg.ErrUnreadable)
	}
	for i, v := range d {
		if math.Abs(v-step) > 0.01*step {
			return 0, 0, fmt.Errorf("time column is not uniform at row %d (step %g s, median %g s): %w", i+3, v, step, ecg.ErrUnreadable)
		}
	}
	// The rate from the whole span is more precise than from one step.
	fs = float64(len(times)-1) / (times[len(times)-1] - times[0])
	if r := math.Round(fs); math.Abs(fs-r) < 1e-3*fs {
		fs = r
	}
	return fs, times[0], nil
}
