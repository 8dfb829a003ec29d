package render

import (
	"fmt"
	"math"

	"tracelift/ecg"
)

// panelSpec is one printed lead segment on the paper.
type panelSpec struct {
	lead     ecg.Lead
	invert   bool // print −lead (Cabrera −aVR)
	row, col int
	t0, t1   float64 // window on the record's time base, s
	x0, x1   float64 // mm
	baseline float64 // mm
	rhythm   bool
}

// label returns the printed lead name.
func (p panelSpec) label() string {
	if p.invert {
		return "-" + p.lead.String()
	}
	return p.lead.String()
}

// pulseSpec is one calibration pulse.
type pulseSpec struct {
	row             int
	lead0, x0, x1   float64 // mm: flat start, rising edge, falling edge
	trail, baseline float64 // mm: end of the flat tail; 0 mV line
	height          float64 // mm
}

// sheet is the geometry of one page, shared by the raster and PDF writers.
type sheet struct {
	o         resolved
	wMM, hMM  float64
	gx0, gy0  float64 // grid origin (a major intersection), mm
	gw, gh    float64 // grid extent, mm (multiples of 5)
	headerTop float64 // mm, top of the header text block
	footerY   float64 // mm, baseline of the footer text
	panels    []panelSpec
	pulses    []pulseSpec
	ticks     [][3]float64 // x, y0, y1 in mm
	traceW    float64      // printable trace width, mm
	t0        float64      // record start, s
	texts     []TruthText  // filled while drawing the raster
}

const (
	standardTraceMM = 250.0 // 10 s at 25 mm/s (standards.md §1.1)
	pulseLeadMM     = 2.0   // flat baseline before the pulse
	pulseSeconds    = 0.2   // pulse width, s (common practice)
	pulseTailMM     = 2.0   // flat baseline after the pulse
)

// layoutRows returns the lead grid of a 3×4-style layout: cells[row][col].
func layoutCells(layout string) (cells [][]ecg.Lead, invert map[[2]int]bool, rhythm []ecg.Lead) {
	std := [][]ecg.Lead{
		{ecg.LeadI, ecg.LeadAVR, ecg.LeadV1, ecg.LeadV4},
		{ecg.LeadII, ecg.LeadAVL, ecg.LeadV2, ecg.LeadV5},
		{ecg.LeadIII, ecg.LeadAVF, ecg.LeadV3, ecg.LeadV6},
	}
	switch layout {
	case Layout3x4:
		return std, nil, nil
	case Layout3x4R1:
		return std, nil, []ecg.Lead{ecg.LeadII}
	case Layout3x4R3:
		return std, nil, []ecg.Lead{ecg.LeadII, ecg.LeadV1, ecg.LeadV5}
	case LayoutCabrera3x4:
		cab := [][]ecg.Lead{
			{ecg.LeadAVL, ecg.LeadII, ecg.LeadV1, ecg.LeadV4},
			{ecg.LeadI, ecg.LeadAVF, ecg.LeadV2, ecg.LeadV5},
			{ecg.LeadAVR, ecg.LeadIII, ecg.LeadV3, ecg.LeadV6},
		}
		return cab, map[[2]int]bool{{2, 0}: true}, nil
	case Layout6x2:
		c := make([][]ecg.Lead, 6)
		for i := range c {
			c[i] = []ecg.Lead{ecg.LimbLeads[i], ecg.LeadV1 + ecg.Lead(i)}
		}
		return c, nil, nil
	case Layout12x1:
		c := make([][]ecg.Lead, 12)
		for i, l := range ecg.Standard12 {
			c[i] = []ecg.Lead{l}
		}
		return c, nil, nil
	}
	return nil, nil, nil
}

// maxPixels bounds the raster size (width × height) of one page.
const maxPixels = 150_000_000

// plan lays out a page for rec.
func plan(rec *ecg.Record, o resolved) (*sheet, error) {
	if len(rec.Signals) == 0 {
		return nil, fmt.Errorf("render: record has no signals: %w", ecg.ErrNoECG)
	}
	for i := range rec.Signals {
		s := &rec.Signals[i]
		if !(s.SampleRate > 0) || !finite(s.SampleRate) || !finite(s.Start) {
			return nil, fmt.Errorf("render: lead %v: bad sample rate %g or start %g: %w", s.Lead, s.SampleRate, s.Start, ecg.ErrUnreadable)
		}
	}
	start, end := rec.Span()
	sh := &sheet{o: o, t0: start, traceW: standardTraceMM}
	pulseW := pulseSeconds * o.speed
	rowLead := pulseLeadMM + pulseW + pulseTailMM // mm before the first panel of a row
	headerH, footerH := 24.0, 9.0
	if o.header.Hidden {
		headerH, footerH = 6, 6
	}
	switch o.paper {
	case PaperA4:
		sh.wMM, sh.hMM = 297, 210
	case PaperLetter:
		sh.wMM, sh.hMM = 279.4, 215.9
	case PaperStrip:
		sh.traceW = math.Ceil((end - start) * o.speed)
		if o.header.Hidden {
			headerH, footerH = 4, 4
		} else {
			headerH, footerH = 10, 7
		}
		rowH := math.Max(30, math.Ceil(3.5*o.gain/5)*5)
		sh.wMM = sh.traceW + rowLead + 16
		sh.hMM = headerH + rowH + footerH + 2
	}
	if px := sh.wMM * sh.hMM * pxPerMM(o.dpi) * pxPerMM(o.dpi); px > maxPixels {
		return nil, fmt.Errorf("%w: page of %.0f × %.0f mm at %g dpi is too large (%.0f Mpx, limit %d Mpx; lower the dpi or print less)",
			ErrOption, sh.wMM, sh.hMM, o.dpi, px/1e6, maxPixels/1_000_000)
	}
	// Grid: whole 5 mm squares, centred horizontally, between header and footer.
	sh.gw = math.Floor((sh.wMM-8)/5) * 5
	sh.gx0 = math.Floor((sh.wMM - sh.gw) / 2)
	sh.gy0 = math.Ceil(headerH)
	sh.gh = math.Floor((sh.hMM-sh.gy0-footerH)/5) * 5
	sh.headerTop = 4
	sh.footerY = sh.gy0 + sh.gh + footerH*0.62
	if sh.gw <= 0 || sh.gh <= 0 {
		return nil, fmt.Errorf("%w: page too small", ErrOption)
	}
	// Row start (the pulse's flat lead-in): the rows are centred in the
	// grid, on a whole millimetre.
	xRow := sh.gx0 + math.Max(2, math.Floor((sh.gw-rowLead-sh.traceW)/2))
	if o.paper == PaperStrip {
		xRow = sh.gx0 + 2
	}
	xTrace := xRow + rowLead     // first panel's x0
	total := sh.traceW / o.speed // seconds across the page
	addPulse := func(row int, base float64) {
		p := pulseSpec{row: row, lead0: xRow, x0: xRow + pulseLeadMM, baseline: base, height: o.gain}
		p.x1 = p.x0 + pulseW
		p.trail = p.x1 + pulseTailMM
		sh.pulses = append(sh.pulses, p)
	}
	have := func(l ecg.Lead) bool { return rec.Signal(l) != nil }

	if o.layout == LayoutRhythm {
		lead := o.rhythmLead
		if !have(lead) {
			return nil, fmt.Errorf("render: rhythm lead %v not in record: %w", lead, ecg.ErrNoECG)
		}
		// As many rows as fit with at least 2 mV (and 12 mm) between
		// baselines, spread evenly over the grid.
		nrows := max(1, int(math.Floor(sh.gh/math.Max(12, 2*o.gain))))
		if o.paper == PaperStrip {
			nrows = 1
		}
		rowH := sh.gh / float64(nrows)
		for r := 0; r < nrows; r++ {
			t0 := start + float64(r)*total
			if t0 >= end-1e-9 {
				break
			}
			base := sh.gy0 + math.Round(rowH*(float64(r)+0.62))
			addPulse(r, base)
			sh.panels = append(sh.panels, panelSpec{lead: lead, row: r, t0: t0, t1: t0 + total,
				x0: xTrace, x1: xTrace + sh.traceW, baseline: base, rhythm: true})
		}
		return sh, nil
	}

	cells, inv, rhythm := layoutCells(o.layout)
	nrows := len(cells) + len(rhythm)
	rowH := sh.gh / float64(nrows)
	for r := 0; r < nrows; r++ {
		base := sh.gy0 + math.Round(rowH*(float64(r)+0.62))
		addPulse(r, base)
		if r >= len(cells) {
			l := rhythm[r-len(cells)]
			if have(l) {
				sh.panels = append(sh.panels, panelSpec{lead: l, row: r, t0: start, t1: start + total,
					x0: xTrace, x1: xTrace + sh.traceW, baseline: base, rhythm: true})
			}
			continue
		}
		ncol := len(cells[r])
		colW := sh.traceW / float64(ncol)
		colT := total / float64(ncol)
		for c, l := range cells[r] {
			x0 := xTrace + float64(c)*colW
			if c > 0 {
				sh.ticks = append(sh.ticks, [3]float64{x0, base - 2, base + 2})
			}
			if !have(l) {
				continue
			}
			sh.panels = append(sh.panels, panelSpec{lead: l, invert: inv[[2]int{r, c}], row: r, col: c,
				t0: start + float64(c)*colT, t1: start + float64(c+1)*colT,
				x0: x0, x1: x0 + colW, baseline: base})
		}
	}
	if len(sh.panels) == 0 {
		return nil, fmt.Errorf("render: none of the layout's leads is in the record: %w", ecg.ErrNoECG)
	}
	return sh, nil
}

// points returns the panel's polyline in paper mm, split at NaN gaps.
func (sh *sheet) points(rec *ecg.Record, p panelSpec) [][][2]float64 {
	s := rec.Signal(p.lead)
	if s == nil {
		return nil
	}
	sign := 1.0
	if p.invert {
		sign = -1
	}
	speed, gain := sh.o.speed, sh.o.gain
	at := func(t, v float64) [2]float64 {
		return [2]float64{p.x0 + (t-p.t0)*speed, p.baseline - sign*v*gain}
	}
	var out [][][2]float64
	var cur [][2]float64
	flush := func() {
		if len(cur) > 0 {
			out = append(out, cur)
		}
		cur = nil
	}
	fs := s.SampleRate
	n := len(s.Samples)
	// Interpolated value at an arbitrary time (NaN outside or next to a gap).
	interp := func(t float64) float64 {
		x := (t - s.Start) * fs
		i := int(math.Floor(x))
		if i < 0 || i >= n {
			return math.NaN()
		}
		f := x - float64(i)
		if i+1 >= n {
			if f < 1e-6 {
				return s.Samples[i]
			}
			return math.NaN()
		}
		return s.Samples[i]*(1-f) + s.Samples[i+1]*f
	}
	const eps = 1e-6
	i0 := int(math.Ceil((p.t0-s.Start)*fs - eps))
	i1 := int(math.Floor((p.t1-s.Start)*fs + eps))
	i0 = max(i0, 0)
	i1 = min(i1, n-1)
	if t := s.Start + float64(i0)/fs; t > p.t0+eps {
		if v := interp(p.t0); !math.IsNaN(v) {
			cur = append(cur, at(p.t0, v))
		}
	}
	for i := i0; i <= i1; i++ {
		v := s.Samples[i]
		if !finite(v) {
			flush()
			continue
		}
		cur = append(cur, at(s.Start+float64(i)/fs, v))
	}
	if i1 >= 0 {
		if t := s.Start + float64(i1)/fs; t < p.t1-eps {
			if v := interp(p.t1); !math.IsNaN(v) && !math.IsNaN(s.Samples[i1]) {
				cur = append(cur, at(p.t1, v))
			}
		}
	}
	flush()
	return out
}

// pulsePath returns the calibration pulse outline as a polyline in mm.
func (p pulseSpec) path() [][2]float64 {
	top := p.baseline - p.height
	return [][2]float64{{p.lead0, p.baseline}, {p.x0, p.baseline}, {p.x0, top}, {p.x1, top}, {p.x1, p.baseline}, {p.trail, p.baseline}}
}
