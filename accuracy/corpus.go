package accuracy

import (
	"fmt"
	"math"
	"strings"

	"tracelift/ecg"
	"tracelift/render"
)

// Case is one page of the synthetic corpus.
type Case struct {
	Condition string // render condition (scan simulation), e.g. "clean", "scan", "fax"
	Layout    string // render layout, e.g. "3x4+1"
	Seed      uint64 // seeds both the record and the condition
}

// Name is the case's file-name stem, e.g. "scan_3x4+1_0007".
func (c Case) Name() string {
	l := c.Layout
	if l == "" {
		l = "any"
	}
	return fmt.Sprintf("%s_%s_%04d", c.Condition, strings.ReplaceAll(l, "/", "-"), c.Seed)
}

// Cases lists n pages for every condition × layout, with seeds seed,
// seed+1, …, seed+n−1 (the same records under every condition and layout,
// so that conditions are compared on equal material). An empty layout
// list gives one case per condition and seed with the layout the
// condition draws itself.
func Cases(conditions, layouts []string, n int, seed uint64) []Case {
	var out []Case
	if len(layouts) == 0 {
		layouts = []string{""}
	}
	for _, c := range conditions {
		for _, l := range layouts {
			for i := range n {
				out = append(out, Case{Condition: c, Layout: l, Seed: seed + uint64(i)})
			}
		}
	}
	return out
}

// RenderCase synthesises the case's record (render.CorpusRecord) and
// prints it with the condition's options (render.ConditionOptions), the
// case's layout replacing the condition's own choice unless it is empty.
func RenderCase(c Case) (ecg.Record, *render.Page, error) {
	rec, err := render.CorpusRecord(c.Seed, c.Condition == "overlap")
	if err != nil {
		return rec, nil, fmt.Errorf("accuracy: %s: %w", c.Name(), err)
	}
	opt, err := render.ConditionOptions(c.Condition, c.Seed)
	if err != nil {
		return rec, nil, fmt.Errorf("accuracy: %s: %w", c.Name(), err)
	}
	if c.Layout != "" {
		opt.Layout = c.Layout
	}
	page, err := render.Render(rec, opt)
	if err != nil {
		return rec, nil, fmt.Errorf("accuracy: %s: %w", c.Name(), err)
	}
	return rec, page, nil
}

// PrintedRecord returns the truth's record with every lead NaN outside
// the windows where it was printed (the reference for SNR). An inverted
// "-aVR" panel counts as aVR, since digitised leads are returned upright.
func PrintedRecord(t *render.Truth) ecg.Record {
	rec := t.Record()
	type span struct{ t0, t1 float64 }
	windows := make(map[ecg.Lead][]span)
	for _, p := range t.Panels {
		l, err := ecg.ParseLead(strings.TrimPrefix(p.Lead, "-"))
		if err != nil {
			continue
		}
		windows[l] = append(windows[l], span{p.T0, p.T1})
	}
	var out ecg.Record
	out.Meta, out.Beats = rec.Meta, rec.Beats
	for _, s := range rec.Signals {
		w, ok := windows[s.Lead]
		if !ok {
			continue
		}
		m := s.Clone()
		for i := range m.Samples {
			ti := m.Time(i)
			in := false
			for _, x := range w {
				if ti >= x.t0-1e-9 && ti < x.t1-1e-9 {
					in = true
					break
				}
			}
			if !in {
				m.Samples[i] = math.NaN()
			}
		}
		out.Set(m)
	}
	return out
}
