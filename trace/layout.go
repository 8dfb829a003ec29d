package trace

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"tracelift/ecg"
)

// Cell is one printed segment of one lead: a lead shown over a time window
// of the record, placed left to right in its row in the order of Row.Cells.
type Cell struct {
	Lead    ecg.Lead
	Negated bool    // printed inverted (−aVR in the Cabrera order)
	T0S     float64 // start of the window on the record's time base, s
	T1S     float64 // end of the window, s
}

// Row is one trace row of a page, top to bottom. Its cells are printed
// side by side; the row's width on paper is the sum of the windows times
// the paper speed.
type Row struct {
	Cells  []Cell
	Rhythm bool // one lead across the whole row (a rhythm strip)
}

// Layout is the arrangement of leads on a page.
type Layout struct {
	Name string // "3x4", "3x4+1", "3x4+3", "6x2", "12x1", "cabrera-3x4", "rhythm" or "custom"
	Rows []Row
}

// DurationS is the record length the layout covers, s.
func (l *Layout) DurationS() float64 {
	d := 0.0
	for _, r := range l.Rows {
		for _, c := range r.Cells {
			d = math.Max(d, c.T1S)
		}
	}
	return d
}

// RowSeconds is the time span one row covers, s.
func (r Row) RowSeconds() float64 {
	s := 0.0
	for _, c := range r.Cells {
		s += c.T1S - c.T0S
	}
	return s
}

// String renders the layout in the description syntax accepted by
// ParseLayout.
func (l *Layout) String() string {
	var rows []string
	sec := 0.0
	for _, r := range l.Rows {
		var cells []string
		for _, c := range r.Cells {
			s := c.Lead.String()
			if c.Negated {
				s = "-" + s
			}
			if r.Rhythm {
				s += "*"
			}
			cells = append(cells, s)
			if !r.Rhythm && sec == 0 {
				sec = c.T1S - c.T0S
			}
		}
		rows = append(rows, strings.Join(cells, ","))
	}
	if sec == 0 && len(l.Rows) > 0 {
		sec = l.Rows[0].RowSeconds()
	}
	return fmt.Sprintf("sec=%g;cells=%s", sec, strings.Join(rows, "/"))
}

// Standard layout names understood by ParseLayout.
var standardLayouts = map[string]string{
	"3x4":         "sec=2.5;cells=I,aVR,V1,V4/II,aVL,V2,V5/III,aVF,V3,V6",
	"3x4+1":       "sec=2.5;cells=I,aVR,V1,V4/II,aVL,V2,V5/III,aVF,V3,V6/II*",
	"3x4+3":       "sec=2.5;cells=I,aVR,V1,V4/II,aVL,V2,V5/III,aVF,V3,V6/II*/V1*/V5*",
	"6x2":         "sec=5;cells=I,V1/II,V2/III,V3/aVR,V4/aVL,V5/aVF,V6",
	"12x1":        "sec=10;cells=I/II/III/aVR/aVL/aVF/V1/V2/V3/V4/V5/V6",
	"cabrera-3x4": "sec=2.5;cells=aVL,II,V1,V4/I,aVF,V2,V5/-aVR,III,V3,V6",
	"rhythm":      "sec=10;cells=II*",
}

// StandardLayout returns a copy of a named standard layout.
func StandardLayout(name string) (*Layout, bool) {
	d, ok := standardLayouts[strings.ToLower(name)]
	if !ok {
		return nil, false
	}
	l, err := parseDesc(d)
	if err != nil {
		panic("trace: bad built-in layout " + name + ": " + err.Error())
	}
	l.Name = strings.ToLower(name)
	return l, true
}

// RhythmLayout is a single lead printed as rows consecutive rows of
// continuous rhythm, each covering secPerRow seconds.
func RhythmLayout(lead ecg.Lead, rows int, secPerRow float64) *Layout {
	l := &Layout{Name: "rhythm"}
	for i := 0; i < rows; i++ {
		t0 := float64(i) * secPerRow
		l.Rows = append(l.Rows, Row{Rhythm: true, Cells: []Cell{{Lead: lead, T0S: t0, T1S: t0 + secPerRow}}})
	}
	return l
}

// ParseLayout reads a standard layout name ("3x4", "3x4+1", "3x4+3",
// "6x2", "12x1", "cabrera-3x4", "rhythm") or a layout description (see the
// package documentation), e.g.
//
//	sec=2.5;cells=I,aVR,V1,V4/II,aVL,V2,V5/III,aVF,V3,V6/II*
func ParseLayout(s string) (*Layout, error) {
	s = strings.TrimSpace(s)
	if l, ok := StandardLayout(s); ok {
		return l, nil
	}
	if !strings.Contains(s, "=") {
		return nil, fmt.Errorf("trace: layout %q: not a standard name (3x4, 3x4+1, 3x4+3, 6x2, 12x1, cabrera-3x4, rhythm) nor a description like \"sec=2.5;cells=I,aVR/II,aVL\"", s)
	}
	l, err := parseDesc(s)
	if err != nil {
		return nil, fmt.Errorf("trace: layout %q: %w", s, err)
	}
	l.Name = "custom"
	return l, nil
}

func parseDesc(s string) (*Layout, error) {
	sec := 2.5
	rowsWant, colsWant := 0, 0
	var cells string
	for _, f := range strings.Split(s, ";") {
		f = strings.TrimSpace(f)
		if f == "" {
			continue
		}
		k, v, ok := strings.Cut(f, "=")
		if !ok {
			return nil, fmt.Errorf("field %q is not key=value", f)
		}
		k, v = strings.ToLower(strings.TrimSpace(k)), strings.TrimSpace(v)
		switch k {
		case "sec":
			x, err := strconv.ParseFloat(v, 64)
			if err != nil || !(x > 0) || x > 3600 {
				return nil, fmt.Errorf("sec=%q: want seconds per column > 0", v)
			}
			sec = x
		case "rows", "cols":
			n, err := strconv.Atoi(v)
			if err != nil || n < 1 || n > 64 {
				return nil, fmt.Errorf("%s=%q: want a count 1..64", k, v)
			}
			if k == "rows" {
				rowsWant = n
			} else {
				colsWant = n
			}
		case "cells":
			cells = v
		default:
			return nil, fmt.Errorf("unknown field %q (want sec, rows, cols, cells)", k)
		}
	}
	if cells == "" {
		return nil, fmt.Errorf("no cells= field")
	}
	rowTok := strings.Split(cells, "/")
	if rowsWant > 0 && rowsWant != len(rowTok) {
		return nil, fmt.Errorf("rows=%d but cells has %d rows", rowsWant, len(rowTok))
	}
	maxCols := 0
	for _, rt := range rowTok {
		maxCols = max(maxCols, len(strings.Split(rt, ",")))
	}
	if colsWant > 0 {
		if maxCols > colsWant {
			return nil, fmt.Errorf("cols=%d but a row has %d cells", colsWant, maxCols)
		}
		maxCols = colsWant
	}
	l := &Layout{}
	next := map[ecg.Lead]float64{} // end time of each lead's last cell, for "~"
	for ri, rt := range rowTok {
		toks := strings.Split(rt, ",")
		var row Row
		t := 0.0
		for _, tok := range toks {
			tok = strings.TrimSpace(tok)
			full, cont := false, false
			switch {
			case strings.HasSuffix(tok, "*"):
				full, tok = true, strings.TrimSuffix(tok, "*")
			case strings.HasSuffix(tok, "~"):
				cont, tok = true, strings.TrimSuffix(tok, "~")
			}
			neg := strings.HasPrefix(tok, "-")
			tok = strings.TrimPrefix(tok, "-")
			ld, err := ecg.ParseLead(tok)
			if err != nil {
				return nil, fmt.Errorf("row %d: %w", ri+1, err)
			}
			if full && len(toks) != 1 {
				return nil, fmt.Errorf("row %d: %q* must be the only cell of its row", ri+1, tok)
			}
			w := sec
			if full {
				w = sec * float64(maxCols)
				row.Rhythm = true
			}
			t0 := t
			if cont {
				t0 = next[ld]
				if len(toks) == 1 {
					row.Rhythm = true
				}
			}
			row.Cells = append(row.Cells, Cell{Lead: ld, Negated: neg, T0S: t0, T1S: t0 + w})
			next[ld] = t0 + w
			t = t0 + w
		}
		l.Rows = append(l.Rows, row)
	}
	if err := checkSize(l); err != nil {
		return nil, err
	}
	return l, nil
}

// Bounds on a layout description, which may come from an untrusted
// command line or file: a page holds at most a few hundred millimetres of
// trace per row (≈ 11 s at 25 mm/s on A4 landscape, standards.md §1.1), so
// 600 s and 144 cells (a dozen 12-lead pages' worth) are generous while
// keeping the record at most a few megabytes per lead.
const (
	maxLayoutS     = 600
	maxLayoutCells = 144
)

// checkSize rejects layouts whose record or printed length exceeds what a
// page can hold.
func checkSize(l *Layout) error {
	cells, printed := 0, 0.0
	for _, r := range l.Rows {
		cells += len(r.Cells)
		printed += r.RowSeconds()
	}
	if cells > maxLayoutCells {
		return fmt.Errorf("%d cells: a page holds at most %d", cells, maxLayoutCells)
	}
	if d := l.DurationS(); d > maxLayoutS || printed > maxLayoutS {
		return fmt.Errorf("record of %g s with %g s printed: at most %d s fit on a page", d, printed, maxLayoutS)
	}
	return nil
}
