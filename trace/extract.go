package trace

import (
	"errors"
	"fmt"
	"image"
	"math"
	"slices"
	"sort"

	"tracelift/ecg"
	"tracelift/grid"
)

// Options tunes Extract. A nil *Options means defaults.
type Options struct {
	Layout     *Layout // nil = detect from the page
	SampleRate float64 // output rate, Hz; default 500
	DurationS  float64 // record length, s; default from the layout (10 s for the standard ones)
	// Bilevel says the page came with no grey levels (a fax, a 1-bit
	// scan): readings that take a stroke's centre to a fraction of a
	// pixel from its grey edges (apexesInBlocks) are skipped.
	Bilevel bool
}

// Panel is one printed segment of one lead as found on the page.
type Panel struct {
	Lead    ecg.Lead
	Negated bool            // printed inverted; the signal is returned upright
	Row     int             // 0-based trace row, top to bottom
	Col     int             // 0-based cell within the row
	Bounds  image.Rectangle // search band of the panel, px
	T0, T1  float64         // time window on the record's time base, s
	ZeroY   float64         // y of 0 mV used for this panel, px
	Path    []Point         // followed trace, image px, left to right
	Quality float64         // 0..1: ink coverage of the path and its smoothness
	// X0 is the x of time T0, px; PxPerS and PxPerMV the scales (negative
	// on a page traced turned by 180°), so that Point maps a returned
	// sample back onto the image.
	X0, PxPerS, PxPerMV float64
	// clipped are the column ranges [x0, x1], px, where the trace ran
	// along the page's edge and its complex was extrapolated past it
	// (clip.go).
	clipped [][2]int
}

// Point is where the panel prints value mv (upright, as the record holds
// it) at time t, image px.
func (p *Panel) Point(t, mv float64) Point {
	if p.Negated {
		mv = -mv
	}
	return Point{p.X0 + (t-p.T0)*p.PxPerS, p.ZeroY - mv*p.PxPerMV}
}

// Result is the outcome of Extract.
type Result struct {
	Record ecg.Record // one signal per lead, uniform rate from t = 0, NaN where not printed; Meta.SpeedMMPerS and GainMMPerMV filled
	// Calibration is the one the signals were converted with: the given
	// one with Extract's defaults for a missing speed or gain, and the
	// gain re-read from the rows' calibration pulses when the given one
	// was a default or disagreed with them.
	Calibration grid.Calibration
	Layout      Layout               // the layout used (detected or given)
	Panels      []Panel              // one per printed segment
	Quality     map[ecg.Lead]float64 // per lead, 0..1 (confidence.go)
	// Crossed gives, per lead, the share (0..1) of its trace's energy
	// printed where another row's stroke touches it: ink two leads
	// share, which at most one of them reads right.
	Crossed  map[ecg.Lead]float64
	Limb     ecg.LimbConsistency // Einthoven/Goldberger residual of the extracted limb leads
	Flagged  []ecg.Lead          // leads that failed the self-check
	Warnings []string
}

// LeadError reports a lead that could not be extracted.
type LeadError struct {
	Lead ecg.Lead
	Err  error
}

func (e *LeadError) Error() string { return fmt.Sprintf("lead %v: %v", e.Lead, e.Err) }
func (e *LeadError) Unwrap() error { return e.Err }

// minQuality is the panel quality below which a panel counts as not found.
const minQuality = 0.25

// Extract follows the traces of an upright ink map (255 = trace ink, grid
// removed) and returns one calibrated signal per lead. cal gives px/mm,
// paper speed and gain; pulses (may be nil) give each row's 0 mV level.
//
// If some leads fail, the partial Result is returned with an error that
// wraps ecg.ErrPartial; if no trace is found the error wraps ecg.ErrNoECG.
func Extract(ink *image.Gray, cal grid.Calibration, pulses []grid.Pulse, opt *Options) (*Result, error) {
	var o Options
	if opt != nil {
		o = *opt
	}
	if o.SampleRate <= 0 || math.IsNaN(o.SampleRate) {
		o.SampleRate = 500
	}
	if o.SampleRate > maxSampleRate {
		return nil, fmt.Errorf("trace: extract: sample rate %g Hz above %d Hz: %w", o.SampleRate, maxSampleRate, ecg.ErrUnreadable)
	}
	if o.Layout != nil {
		if err := checkSize(o.Layout); err != nil {
			return nil, fmt.Errorf("trace: extract: layout: %v: %w", err, ecg.ErrUnreadable)
		}
	}
	if ink == nil || ink.Rect.Dx() < 8 || ink.Rect.Dy() < 8 || len(ink.Pix) < ink.Stride*(ink.Rect.Dy()-1)+ink.Rect.Dx() {
		return nil, fmt.Errorf("trace: extract: empty or malformed ink map: %w", ecg.ErrNoECG)
	}
	res := &Result{Quality: map[ecg.Lead]float64{}}
	for _, v := range []*grid.Value{&cal.PxPerMMX, &cal.PxPerMMY} {
		if !(v.V > 0.5) || v.V > 200 || math.IsInf(v.V, 0) {
			return nil, fmt.Errorf("trace: extract: invalid calibration (%g px/mm): %w", v.V, ecg.ErrUnreadable)
		}
	}
	if !(cal.SpeedMMPerS.V > 0) || math.IsInf(cal.SpeedMMPerS.V, 0) {
		cal.SpeedMMPerS = grid.Value{V: 25, Origin: grid.FromDefault}
		res.Warnings = append(res.Warnings, "paper speed unknown; assumed 25 mm/s")
	}
	if !(cal.GainMMPerMV.V > 0) || math.IsInf(cal.GainMMPerMV.V, 0) {
		cal.GainMMPerMV = grid.Value{V: 10, Origin: grid.FromDefault}
		res.Warnings = append(res.Warnings, "gain unknown; assumed 10 mm/mV")
	}
	pxX := cal.PxPerMMX.V
	// Isoelectric stretches longer than 1.2 s that are perfectly straight
	// are rare; straight lines that long are grid lines or rules.
	ink = dropRuledLines(ink, int(30*pxX))
	rows := findRows(ink, cal, pulses)
	turned := false
	// The page turned by 180° and its rows, when they were looked at.
	var rot *image.Gray
	var rotRows []rowInfo
	if np := countPulses(rows); np == 0 || 2*np < len(rows) {
		// Calibration pulses at the left of fewer than half of the rows:
		// the page may be upside down (pulses at the right ends, hanging
		// below the baseline). Trace the page turned by 180° if that
		// finds pulses, and more than twice as many: a row's tangle of
		// strokes can pass for a pulse (LUDB record 15, whose QRS
		// complexes point down and whose V4 swings off the sheet, printed
		// 3x4+3 at 20 mm/mV: the front end turned the page over, one
		// such "pulse" of 4 mm was read at a row's left end, the page was
		// traced upside down at 4 mm/mV; median −12.7 dB).
		rot = rotate180(ink)
		rotRows = findRows(rot, cal, nil)
		// Two pulses at least, or the pulse of a page's only row (a
		// rhythm strip at 20 mm/mV whose R waves run off the sheet's top
		// edge looked upside down to the front end: overlap rhythm seeds
		// 5 and 9).
		if rr := rotRows; len(rr) > 0 && countPulses(rr) >= min(2, len(rr)) && countPulses(rr) > 2*np {
			ink, rows, turned = rot, rr, true
			res.Warnings = append(res.Warnings, "the page appears upside down (calibration pulses on the right); traced turned by 180°")
		}
	}
	if !turned && len(rows) > 0 && countPulses(rows) == 0 {
		// No pulse either way up: the beats tell the time's direction
		// (orient_beats.go). A mean below −asymmetryTurn on this page and
		// above +asymmetryTurn on the page turned over (read above: no
		// pulse on this page means it was) turns it.
		if s, nb := beatAsymmetry(ink, rows, cal); nb >= asymmetryMinBeats && s < -asymmetryTurn*float64(nb) && rot != nil {
			if rr := rotRows; len(rr) > 0 && countPulses(rr) == 0 {
				if s2, nb2 := beatAsymmetry(rot, rr, cal); nb2 >= asymmetryMinBeats && s2 > asymmetryTurn*float64(nb2) {
					ink, rows, turned = rot, rr, true
					res.Warnings = append(res.Warnings, fmt.Sprintf("no calibration pulses, and the beats run backwards (the larger wave before each QRS complex, mean asymmetry %.2f): traced turned by 180°", s/float64(nb)))
				}
			}
		}
	}
	if len(rows) == 0 {
		return nil, fmt.Errorf("trace: extract: no trace rows on the page: %w", ecg.ErrNoECG)
	}
	alignStarts(rows, pxX)
	{
		// The pulses are 1 mV tall by definition (standards.md §1.1). When
		// the grid stage measured none, or its gain disagrees with the
		// pulses measured here by more than 20 %, take the gain from these.
		var hs []float64
		for _, r := range rows {
			if r.pulseMM > 0 {
				hs = append(hs, r.pulseMM)
			}
		}
		sort.Float64s(hs)
		g0 := cal.GainMMPerMV.V
		// A gain the user gave stands (the grid stage warns when the
		// pulses disagree with it).
		if cal.GainMMPerMV.Origin != grid.FromOption && len(hs) > 0 && (cal.GainMMPerMV.Origin == grid.FromDefault || len(hs) >= 2 && math.Abs(hs[len(hs)/2]-g0) > 0.2*g0) {
			sort.Float64s(hs)
			g, _ := snapPrinted(hs[len(hs)/2])
			if math.Abs(g-g0) > 0.1*g0 {
				res.Warnings = append(res.Warnings, fmt.Sprintf("gain %.3g mm/mV taken from the calibration pulses (was %.3g, %s)", g, g0, cal.GainMMPerMV.Origin))
			}
			cal.GainMMPerMV = grid.Value{V: g, Origin: grid.FromPulse}
		}
		// A gain the grid stage read from pulses that lie on no trace
		// row, and that is no printed gain, came from something else
		// with a flat top (LUDB record 24 printed 12 × 1 without pulses:
		// one 3.7 mm "pulse", every lead a third of its size: −4.5 dB).
		if cal.GainMMPerMV.Origin == grid.FromPulse && countPulses(rows) == 0 && !printedGain(cal.GainMMPerMV.V) {
			res.Warnings = append(res.Warnings, fmt.Sprintf("the grid stage's calibration pulse (%.3g mm) lies on no trace row and gives no printed gain; assumed 10 mm/mV", cal.GainMMPerMV.V))
			cal.GainMMPerMV = grid.Value{V: 10, Origin: grid.FromDefault}
		}
	}
	res.Calibration = cal
	for i := range rows {
		up, down := bandAround(rows, i, cal.PxPerMMY.V)
		findTicks(ink, &rows[i], cal, up, down)
	}
	lay := o.Layout
	detected := lay == nil
	if detected {
		lay, rows = detectLayout(ink, rows, cal)
		if lay.Name == "rhythm" && len(rows) >= 2 && !oneLeadRows(ink, rows, cal.PxPerMMY.V) {
			// The fallback of chooseLayout: no separators, but nothing
			// says the rows are one lead either.
			res.Warnings = append(res.Warnings, fmt.Sprintf("layout: %d rows without column separators that do not read as one continuous lead; read as a rhythm strip of lead II (check the page, or give the layout)", len(rows)))
		}
	}
	if len(lay.Rows) == 0 {
		return nil, fmt.Errorf("trace: extract: layout has no rows: %w", ecg.ErrNoECG)
	}
	rows = matchRows(rows, len(lay.Rows), &res.Warnings)
	alignToTicks(rows, lay, cal)
	dur := o.DurationS
	if dur <= 0 {
		dur = lay.DurationS()
	}
	n := int(math.Round(dur * o.SampleRate))
	if dur > maxLayoutS || n <= 0 || n*nCells(lay) > maxPanelSamples {
		return nil, fmt.Errorf("trace: extract: record length %g s at %g Hz is out of range: %w", dur, o.SampleRate, ecg.ErrNoECG)
	}

	// Follow every panel.
	var cr columnRuns
	type traced struct {
		p    Panel
		vals []float64              // mV on the record grid, NaN outside
		fine map[[2]float64]float64 // the path finder's fine readings (pathResult.fine)
	}
	var all []traced
	// Pass 1: every panel on its own.
	pj := make([][]panelJob, 0, len(lay.Rows))
	for ri, lr := range lay.Rows {
		if ri >= len(rows) {
			break
		}
		r := rows[ri]
		up, down := bandAround(rows, ri, cal.PxPerMMY.V)
		// Tall complexes reach past the neighbouring rows (20 mm/mV pages,
		// 12 rows on A4): the band reaches up to 1.5 row pitches, at most
		// 3 mV (a generous upper range of QRS amplitude, common practice),
		// and the page's edge for the top and bottom rows. dropExcursions
		// keeps the path from staying on a neighbour's trace. 12 × 1 on A4
		// went from 10.6 to 17.8 dB median SNR with the truth's
		// calibration.
		reach := 3 * cal.GainMMPerMV.V * cal.PxPerMMY.V
		if ri > 0 {
			up = math.Max(up, math.Min(reach, 1.5*(r.baseY-rows[ri-1].baseY)))
		}
		if ri+1 < len(rows) {
			down = math.Max(down, math.Min(reach, 1.5*(rows[ri+1].baseY-r.baseY)))
		}
		if ri == 0 {
			up = math.Max(up, reach)
		}
		if ri == len(rows)-1 {
			down = math.Max(down, reach)
		}
		// The pen width is measured on that band; the path may reach
		// further where the neighbouring row is far (reachPast).
		penUp, penDown := up, down
		up, down = reachPast(rows, ri, up, down, cal.GainMMPerMV.V*cal.PxPerMMY.V)
		spanPx := lr.RowSeconds() * cal.SpeedMMPerS.V * pxX
		measured := float64(r.x1) - r.traceX0
		if spanPx > 0 && math.Abs(measured-spanPx) > 0.12*spanPx && measured > 0 {
			res.Warnings = append(res.Warnings, fmt.Sprintf("row %d: printed trace is %.0f mm long, layout expects %.0f mm (check speed or layout)", ri+1, measured/pxX, spanPx/pxX))
		}
		// Past half-way to a neighbouring row's baseline the path may
		// only stay as long as a tall complex lasts; longer stretches
		// there are the neighbour's trace (or a gap bridged onto it).
		upLim, downLim := math.Inf(1), math.Inf(1)
		if ri > 0 {
			upLim = 0.5 * (r.baseY - rows[ri-1].baseY)
		}
		if ri+1 < len(rows) {
			downLim = 0.5 * (rows[ri+1].baseY - r.baseY)
		}
		base := r.baseY
		if !math.IsNaN(r.zeroY) {
			base = r.zeroY
		}
		xc := r.traceX0
		var jobs []panelJob
		for _, c := range lr.Cells {
			w := (c.T1S - c.T0S) * cal.SpeedMMPerS.V * pxX
			x0, x1 := int(math.Round(xc)), int(math.Round(xc+w))
			xc += w
			bounds := image.Rect(x0, int(r.baseY-up), x1, int(r.baseY+down)).Intersect(ink.Rect)
			j := panelJob{bounds: bounds, base: base, upLim: upLim, downLim: downLim, maxLen: maxExcursionS * cal.SpeedMMPerS.V * pxX, endLen: endExcursionMM * pxX, penY0: int(r.baseY - penUp), penY1: int(r.baseY + penDown), penPx: r.penPx}
			if !bounds.Empty() {
				cr.scan(ink, bounds)
				j.follow(&cr, cal.PxPerMMY.V)
				j.keepRuns(&cr)
			}
			jobs = append(jobs, j)
		}
		pj = append(pj, jobs)
	}
	// Pass 2: rows whose paths reached a neighbouring row's trace are
	// followed again with that trace and what lies beyond it removed.
	separateRows(ink, pj, &cr, cal.PxPerMMY.V, cal.GainMMPerMV.V*cal.PxPerMMY.V)
	// Neighbouring rows' strokes that cross twice (a lens) are exchanged
	// between the crossings.
	untangleCrossings(ink, pj, cal.PxPerMMY.V, cal.GainMMPerMV.V*cal.PxPerMMY.V)
	// Where a deep S wave and a tall R wave of neighbouring rows merge
	// into one block of ink, their turns are read from the arms outside.
	if !o.Bilevel {
		apexesInBlocks(ink, pj, cal.PxPerMMY.V, cal.GainMMPerMV.V*cal.PxPerMMY.V)
	}
	for ri, jobs := range pj {
		lr, r := lay.Rows[ri], rows[ri]
		var rowPanels []traced
		xe := r.traceX0
		for ci, c := range lr.Cells {
			j := jobs[ci]
			p := Panel{Lead: c.Lead, Negated: c.Negated, Row: ri, Col: ci, Bounds: j.bounds, T0: c.T0S, T1: c.T1S}
			w := (c.T1S - c.T0S) * cal.SpeedMMPerS.V * pxX
			xe0, xe1 := xe, xe+w
			xe = xe1
			if !j.bounds.Empty() {
				// Column boundaries inside the row: the separator tick and
				// the other lead's ends meet this panel's trace there.
				p.Path = trimAtBoundaries(j.pr.points, xe0, xe1, ci > 0, ci+1 < len(lr.Cells), boundaryZonePen*j.pr.penPx, math.Max(boundaryFitMM*pxX, 3))
				cov := 0.0
				if j.pr.cols > 0 {
					cov = float64(j.pr.onInk) / float64(j.pr.cols)
				}
				p.Quality = cov / (1 + j.pr.meanJump/cal.PxPerMMY.V)
			}
			rowPanels = append(rowPanels, traced{p: p, fine: j.pr.fine})
		}
		// 0 mV of the row: the pulse foot, else the isoelectric level.
		zero := r.zeroY
		if math.IsNaN(zero) {
			var paths [][]Point
			for _, tp := range rowPanels {
				paths = append(paths, tp.p.Path)
			}
			zero = isoelectric(paths)
			if math.IsNaN(zero) {
				zero = r.baseY
			}
		}
		xc := r.traceX0
		for k := range rowPanels {
			tp := &rowPanels[k]
			tp.p.ZeroY = zero
			c := lr.Cells[k]
			w := (c.T1S - c.T0S) * cal.SpeedMMPerS.V * pxX
			tp.p.X0, tp.p.PxPerS, tp.p.PxPerMV = xc, cal.SpeedMMPerS.V*pxX, cal.GainMMPerMV.V*cal.PxPerMMY.V
			tp.vals = sampleRow(tp.p.Path, xc, c.T0S, c.T1S, cal, zero, o.SampleRate, n)
			if c.Negated {
				for i, v := range tp.vals {
					tp.vals[i] = -v
				}
			}
			xc += w
		}
		all = append(all, rowPanels...)
	}
	// Pass 1b: where no other row's stroke comes near, the paths take
	// their fine reading (follow_fine.go).
	{
		ps, fines := make([]Panel, len(all)), make([]map[[2]float64]float64, len(all))
		for i := range all {
			ps[i], fines[i] = all[i].p, all[i].fine
		}
		fine := applyFine(ps, fines, ink, cal.PxPerMMY.V)
		// Then complexes cut off at the page's edge are continued past it
		// (clip.go).
		clipped, past, nClip := extrapolateClipped(ps, ink)
		for i := range all {
			if !fine[i] && !clipped[i] {
				continue
			}
			tp := &all[i]
			tp.p.Path, tp.p.clipped = ps[i].Path, ps[i].clipped
			if clipped[i] {
				res.Warnings = append(res.Warnings, clipWarning(&tp.p, nClip[i], past[i], cal.GainMMPerMV.V*cal.PxPerMMY.V))
			}
			if tp.vals == nil {
				continue
			}
			cell := lay.Rows[tp.p.Row].Cells[tp.p.Col]
			tp.vals = sampleRow(tp.p.Path, tp.p.X0, cell.T0S, cell.T1S, cal, tp.p.ZeroY, o.SampleRate, n)
			if cell.Negated {
				for k, v := range tp.vals {
					tp.vals[k] = -v
				}
			}
		}
	}
	build := func(names func(row, col int) (ecg.Lead, bool)) (rec ecg.Record, qual map[ecg.Lead]float64, warn []string) {
		rec = ecg.Record{Meta: ecg.Metadata{SpeedMMPerS: cal.SpeedMMPerS.V, GainMMPerMV: cal.GainMMPerMV.V}}
		qual = map[ecg.Lead]float64{}
		type cand struct {
			q    float64
			vals []float64
		}
		byLead := map[ecg.Lead][]cand{}
		windows := map[ecg.Lead][][2]float64{}
		var order []ecg.Lead
		for _, tp := range all {
			l, neg := names(tp.p.Row, tp.p.Col)
			windows[l] = append(windows[l], [2]float64{tp.p.T0, tp.p.T1})
			if tp.p.Quality < minQuality || tp.vals == nil {
				continue
			}
			vals := tp.vals
			if neg != tp.p.Negated {
				vals = make([]float64, len(tp.vals))
				for i, v := range tp.vals {
					vals[i] = -v
				}
			}
			if _, ok := byLead[l]; !ok {
				order = append(order, l)
			}
			byLead[l] = append(byLead[l], cand{tp.p.Quality, vals})
		}
		for _, l := range order {
			cs := byLead[l]
			sort.SliceStable(cs, func(i, j int) bool { return cs[i].q > cs[j].q })
			out := make([]float64, n)
			qs, qn := 0.0, 0
			for i := range out {
				out[i] = math.NaN()
				for _, c := range cs {
					if v := c.vals[i]; !math.IsNaN(v) {
						out[i] = v
						qs += c.q
						qn++
						break
					}
				}
			}
			frac := validFraction(out, windows[l], o.SampleRate)
			if frac < minValidFrac {
				// Too little of the printed window was traced to call
				// the lead present; Extract reports it as missing.
				continue
			}
			if frac < fullValidFrac {
				warn = append(warn, fmt.Sprintf("lead %v: only %.0f %% of its printed window was traced", l, 100*frac))
			}
			if qn > 0 {
				qual[l] = qs / float64(qn)
			}
			for _, c := range cs[1:] {
				if d, m := disagreement(cs[0].vals, c.vals); m > int(o.SampleRate) && d > 0.1 {
					warn = append(warn, fmt.Sprintf("lead %v: its two printed copies differ by %.2f mV RMS", l, d))
				}
			}
			rec.Set(ecg.Signal{Lead: l, SampleRate: o.SampleRate, Start: 0, Samples: out})
		}
		return rec, qual, warn
	}
	layoutNames := func(l *Layout) func(row, col int) (ecg.Lead, bool) {
		return func(row, col int) (ecg.Lead, bool) {
			c := l.Rows[row].Cells[col]
			return c.Lead, c.Negated
		}
	}
	rec, qual, dupWarn := build(layoutNames(lay))
	limb, limbOK := ecg.CheckLimb(&rec)
	lay0 := lay // the names the panels were sampled under
	if detected && lay.Name == "3x4" || detected && lay.Name == "3x4+1" || detected && lay.Name == "3x4+3" {
		// The Cabrera order is indistinguishable from the standard one
		// without labels; keep the assignment with the smaller
		// Einthoven/Goldberger residual.
		cab := cabreraOf(lay)
		crec, cqual, cwarn := build(layoutNames(cab))
		// Switch only on clear evidence: the standard order must be
		// inconsistent in absolute terms (a good digitisation of a
		// standard page stays well below 50 µV), Cabrera's residual less
		// than 0.6 of it, and a lead printed twice (the rhythm strip) must
		// not disagree more with itself under Cabrera. On poor pages
		// (faxes) the residuals are noisy and a bare ratio swapped leads.
		// Or the standard order is off by more than 20 µV and Cabrera's
		// fits five times better: LUDB record 5 printed Cabrera (its
		// leads I and aVF small, which the standard order's residual
		// measures) scored 38.5 against 4.6 µV and was read as standard.
		const clearlyInconsistentUV = 50
		if cl, ok := ecg.CheckLimb(&crec); ok && limbOK &&
			(limb.ResidualUV > clearlyInconsistentUV && cl.ResidualUV < 0.6*limb.ResidualUV ||
				limb.ResidualUV > 20 && cl.ResidualUV < 0.2*limb.ResidualUV) && len(cwarn) <= len(dupWarn) {
			rec, qual, limb, lay, dupWarn = crec, cqual, cl, cab, cwarn
			for i := range all {
				c := cab.Rows[all[i].p.Row].Cells[all[i].p.Col]
				all[i].p.Lead, all[i].p.Negated = c.Lead, c.Negated
			}
			res.Warnings = append(res.Warnings, "limb leads assigned in the Cabrera order (smaller Einthoven/Goldberger residual)")
		}
	}
	// Pass 3: limb leads printed at the same time are held to the
	// Einthoven/Goldberger identities under the names finally chosen
	// (limb_guide.go); the record is rebuilt when a lead was re-read.
	{
		ps, vs, xs := make([]*Panel, len(all)), make([][]float64, len(all)), make([]float64, len(all))
		flip := make([]bool, len(all))
		for i := range all {
			p := &all[i].p
			ps[i], vs[i], xs[i] = p, all[i].vals, rows[p.Row].traceX0
			for _, c := range lay.Rows[p.Row].Cells[:p.Col] {
				xs[i] += (c.T1S - c.T0S) * cal.SpeedMMPerS.V * pxX
			}
			// vals are upright under the names sampled with (lay0).
			if flip[i] = lay0.Rows[p.Row].Cells[p.Col].Negated != p.Negated; flip[i] && vs[i] != nil {
				vs[i] = make([]float64, len(all[i].vals))
				for k, v := range all[i].vals {
					vs[i][k] = -v
				}
			}
		}
		// Then the self-check (selfcheck.go) withholds what another row's
		// path also runs on, past half-way to that row, unless re-read,
		// and the 0 mV level a path kept through a mass of merged strokes
		// (swap_buried.go), and a limb lead's stretch pointing against
		// the heart vector the other limb leads agree on (swap_dissent.go)
		// or, with three limb leads, the one the ink blames (swap_triple.go).
		keep := make([][]float64, len(vs))
		for i, v := range vs {
			keep[i] = slices.Clone(v)
		}
		w := guideLimb(ink, cal, o.SampleRate, ps, vs, xs, defaultLimbGuide)
		w = append(w, reReadFromClear(ink, cal, o.SampleRate, ps, vs, keep, xs, defaultClear)...)
		w = append(w, withholdShared(cal, o.SampleRate, ps, vs, keep, xs, defaultSelfCheck)...)
		w = append(w, withholdBuried(ink, cal, o.SampleRate, ps, vs, keep, xs, defaultBuried)...)
		w = append(w, withholdDissent(ink, cal, o.SampleRate, ps, vs, keep, xs, defaultDissent)...)
		if w = append(w, withholdTriple(ink, cal, o.SampleRate, ps, vs, keep, xs, defaultTriple)...); len(w) > 0 {
			for i := range all {
				if flip[i] && vs[i] != nil {
					for k, v := range vs[i] {
						all[i].vals[k] = -v
					}
				}
			}
			res.Warnings = append(res.Warnings, w...)
			// vals are upright under lay0's signs and the panels now carry
			// lay's: the names say lay0's sign so that build turns a panel
			// exactly when lay0 and lay differ (as it did before).
			rec, qual, dupWarn = build(func(row, col int) (ecg.Lead, bool) {
				return lay.Rows[row].Cells[col].Lead, lay0.Rows[row].Cells[col].Negated
			})
			limb, limbOK = ecg.CheckLimb(&rec)
		}
	}
	res.Warnings = append(res.Warnings, dupWarn...)
	// The qualities reported: the paths' scores less what other rows'
	// strokes touch and what was not returned (confidence.go).
	panels := make([]Panel, len(all))
	for i, tp := range all {
		panels[i] = tp.p
	}
	contested, total := contestedShares(panels, contestGapMM*cal.PxPerMMY.V, contestFloorMV*cal.GainMMPerMV.V*cal.PxPerMMY.V, ink)
	res.Crossed = crossedShares(panels, contested, total)
	qual = leadConfidence(qual, res.Crossed, coveredShares(&rec, panels))
	res.Record, res.Quality, res.Layout = rec, qual, *lay
	for i, tp := range all {
		p := tp.p
		if total[i] > 0 {
			p.Quality *= 1 - contested[i]/total[i]
		}
		if turned {
			// Back to the input's coordinates.
			w, h := ink.Rect.Min.X+ink.Rect.Max.X-1, ink.Rect.Min.Y+ink.Rect.Max.Y-1
			p.Bounds = image.Rect(w+1-p.Bounds.Max.X, h+1-p.Bounds.Max.Y, w+1-p.Bounds.Min.X, h+1-p.Bounds.Min.Y)
			p.ZeroY = float64(h) - p.ZeroY
			p.X0, p.PxPerS, p.PxPerMV = float64(w)-p.X0, -p.PxPerS, -p.PxPerMV
			path := make([]Point, len(p.Path))
			for i, q := range p.Path {
				path[len(p.Path)-1-i] = Point{float64(w) - q.X, float64(h) - q.Y}
			}
			p.Path = path
		}
		res.Panels = append(res.Panels, p)
	}
	if limbOK {
		res.Limb = limb
	}
	res.Flagged = flagLeads(res, limbOK)

	// Leads the layout promised but that were not found.
	var errs []error
	seen := map[ecg.Lead]bool{}
	for _, r := range lay.Rows {
		for _, c := range r.Cells {
			if seen[c.Lead] {
				continue
			}
			seen[c.Lead] = true
			sig := rec.Signal(c.Lead)
			if sig == nil {
				errs = append(errs, &LeadError{Lead: c.Lead, Err: errors.New("no trace found")})
				continue
			}
			var win [][2]float64
			for _, p := range res.Panels {
				if p.Lead == c.Lead {
					win = append(win, [2]float64{p.T0, p.T1})
				}
			}
			if f := validFraction(sig.Samples, win, sig.SampleRate); f < fullValidFrac {
				errs = append(errs, &LeadError{Lead: c.Lead, Err: fmt.Errorf("only %.0f %% of its printed window traced", 100*f)})
			}
		}
	}
	if len(rec.Signals) == 0 {
		return res, fmt.Errorf("trace: extract: no lead could be followed: %w", ecg.ErrNoECG)
	}
	if len(errs) > 0 {
		return res, fmt.Errorf("trace: extract: %w", errors.Join(append([]error{ecg.ErrPartial}, errs...)...))
	}
	return res, nil
}

// maxSampleRate is the highest output rate Extract accepts, Hz: far above
// what a printed trace resolves (a 0.3 mm pen at 25 mm/s blurs ≈ 12 ms).
const maxSampleRate = 10000

// maxPanelSamples bounds the working memory of Extract: every panel holds
// one float64 per record sample (≈ 80 MB at the bound).
const maxPanelSamples = 10_000_000

func nCells(l *Layout) int {
	n := 0
	for _, r := range l.Rows {
		n += len(r.Cells)
	}
	return n
}

// maxExcursionS is the longest time a row's path may spend past half-way
// to a neighbouring row's baseline, s: a wide QRS complex lasts up to
// ≈ 0.12–0.2 s (common practice); 0.25 s leaves room for tall T waves at
// 20 mm/mV (a project choice).
const maxExcursionS = 0.25

// endExcursionMM is the widest stretch, mm of x, that dropExcursions keeps
// past half-way to a neighbouring row where it runs to an end of the path.
// Such a stretch never came back into the row's band: where a deep S wave
// of the row above reaches down to this row near a column's edge, the path
// climbed its stroke and stayed on that row's trace until the panel ended
// (overlap 3x4+1 seed 1: V2's last 40 ms read at +2.2 mV, 0.9 → 2.1 dB).
// Only the foot of a complex cut by the column's edge is shorter than
// 2 mm (80 ms at 25 mm/s) there.
const endExcursionMM = 2.0

// dropExcursions removes the points of a path (px, left to right) that lie
// more than upLim px above or downLim px below the baseline y base for a
// stretch wider than maxLen px (endLen px for a stretch that runs to
// either end of the path), and lowers the count of on-ink columns by the
// points removed.
func dropExcursions(pts []Point, onInk int, base, upLim, downLim, maxLen, endLen float64) ([]Point, int) {
	far := func(q Point) bool { return base-q.Y > upLim || q.Y-base > downLim }
	out := pts[:0:0]
	for i := 0; i < len(pts); {
		if !far(pts[i]) {
			out = append(out, pts[i])
			i++
			continue
		}
		j := i
		for j < len(pts) && far(pts[j]) {
			j++
		}
		// The stretch is [i, j); its width reaches to the neighbouring
		// in-band points.
		x0, x1 := pts[i].X, pts[j-1].X
		if i > 0 {
			x0 = pts[i-1].X
		}
		if j < len(pts) {
			x1 = pts[j].X
		}
		lim := maxLen
		if i == 0 || j == len(pts) {
			// A stretch that runs to the path's end never came back
			// into the band: only the foot of a complex cut by the
			// column's edge is that short.
			lim = math.Min(maxLen, endLen)
		}
		if x1-x0 <= lim {
			out = append(out, pts[i:j]...)
		} else {
			onInk -= j - i
		}
		i = j
	}
	return out, max(onInk, 0)
}

// minValidFrac is the fraction of a lead's printed window that must carry
// samples for the lead to count as found; fullValidFrac the fraction below
// which a found lead is still reported as partial. A clean page traces
// ≈ 100 % of every window; gaps come from breaks longer than 4 mm.
const (
	minValidFrac  = 0.25
	fullValidFrac = 0.8
)

// validFraction is the fraction of the samples t = k/fs inside the
// windows [T0, T1) (s) that are not NaN; 0 when the windows hold no
// sample. Overlapping windows (a lead printed twice) count once.
func validFraction(samples []float64, windows [][2]float64, fs float64) float64 {
	in := make([]bool, len(samples))
	total, valid := 0, 0
	for _, w := range windows {
		k0 := max(0, int(math.Ceil(w[0]*fs-1e-9)))
		for k := k0; k < len(samples) && float64(k)/fs < w[1]-1e-9; k++ {
			if in[k] {
				continue
			}
			in[k] = true
			total++
			if !math.IsNaN(samples[k]) {
				valid++
			}
		}
	}
	if total == 0 {
		return 0
	}
	return float64(valid) / float64(total)
}

// cabreraOf returns the Cabrera counterpart of a standard 3 × 4 layout: the
// six limb positions hold aVL, I, −aVR (first column) and II, aVF, III
// (second column).
func cabreraOf(l *Layout) *Layout {
	c := &Layout{Name: "cabrera-" + l.Name}
	cab := [3][2]Cell{{{Lead: ecg.LeadAVL}, {Lead: ecg.LeadII}}, {{Lead: ecg.LeadI}, {Lead: ecg.LeadAVF}}, {{Lead: ecg.LeadAVR, Negated: true}, {Lead: ecg.LeadIII}}}
	for ri, r := range l.Rows {
		nr := Row{Rhythm: r.Rhythm, Cells: append([]Cell(nil), r.Cells...)}
		if ri < 3 && !r.Rhythm && len(nr.Cells) >= 2 {
			for ci := 0; ci < 2; ci++ {
				nr.Cells[ci].Lead, nr.Cells[ci].Negated = cab[ri][ci].Lead, cab[ri][ci].Negated
			}
		}
		c.Rows = append(c.Rows, nr)
	}
	return c
}

// bandAround is how far above and below its baseline a row's search band
// reaches, px: most of the way to the neighbouring rows, so tall
// complexes fit, and 20 mm at the page's top and bottom rows.
func bandAround(rows []rowInfo, i int, pxY float64) (up, down float64) {
	up, down = 20*pxY, 20*pxY
	if i > 0 {
		up = 0.8 * (rows[i].baseY - rows[i-1].baseY)
	}
	if i+1 < len(rows) {
		down = 0.8 * (rows[i+1].baseY - rows[i].baseY)
	}
	if i == 0 && i+1 < len(rows) {
		up = math.Max(up, down)
	}
	if i == len(rows)-1 && i > 0 {
		down = math.Max(down, up)
	}
	return up, down
}

// alignStarts snaps the trace starts of rows without a calibration pulse
// to the common start of the rows that have one: standard pages start all
// rows at the same paper position.
func alignStarts(rows []rowInfo, pxX float64) {
	var xs []float64
	for _, r := range rows {
		if r.hasPulse {
			xs = append(xs, r.traceX0)
		}
	}
	if len(xs) == 0 {
		return
	}
	sort.Float64s(xs)
	med := xs[len(xs)/2]
	for i := range rows {
		r := &rows[i]
		if !r.hasPulse && math.Abs(r.traceX0-med) < 15*pxX {
			r.traceX0 = med
		}
		if r.hasPulse && math.Abs(r.traceX0-med) < 1.0*pxX {
			r.traceX0 = med
		}
	}
}

// matchRows keeps the want best rows (by coverage) in top-to-bottom order
// when more rows were found than the layout has.
func matchRows(rows []rowInfo, want int, warn *[]string) []rowInfo {
	if len(rows) < want {
		*warn = append(*warn, fmt.Sprintf("found %d trace rows, layout has %d", len(rows), want))
		return fillRowGaps(rows, want, warn)
	}
	if len(rows) == want {
		return rows
	}
	*warn = append(*warn, fmt.Sprintf("found %d trace rows, layout has %d; using the %d most complete", len(rows), want, want))
	idx := make([]int, len(rows))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool {
		ra, rb := rows[idx[a]], rows[idx[b]]
		return ra.score*float64(ra.x1-ra.x0) > rb.score*float64(rb.x1-rb.x0)
	})
	idx = idx[:want]
	sort.Ints(idx)
	out := make([]rowInfo, 0, want)
	for _, i := range idx {
		out = append(out, rows[i])
	}
	return out
}

// fillRowGaps inserts a placeholder row in every gap between found rows
// that is a whole multiple (2×, 3×…) of the page's row pitch (the
// smallest spacing), while fewer rows than want are known: rows are printed
// at a regular pitch (common practice), so a row that was not found (erased,
// torn, too faint) must not shift the leads of the rows below it onto the
// wrong names. The placeholder carries its neighbours' horizontal extent;
// tracing it finds whatever ink is there, often none (its leads are then
// reported missing). A row missing at the top or bottom of the page cannot
// be told apart this way and is left alone.
func fillRowGaps(rows []rowInfo, want int, warn *[]string) []rowInfo {
	if len(rows) < 2 {
		return rows
	}
	pitch := math.Inf(1)
	for i := 1; i < len(rows); i++ {
		pitch = math.Min(pitch, rows[i].baseY-rows[i-1].baseY)
	}
	if !(pitch > 0) {
		return rows
	}
	out := []rowInfo{rows[0]}
	added := 0
	for i := 1; i < len(rows); i++ {
		a, b := rows[i-1], rows[i]
		k := math.Round((b.baseY - a.baseY) / pitch)
		if k >= 2 && math.Abs((b.baseY-a.baseY)/k-pitch) <= 0.1*pitch {
			for j := 1; j < int(k) && len(rows)+added < want; j++ {
				ph := a
				ph.baseY = a.baseY + float64(j)*(b.baseY-a.baseY)/k
				ph.zeroY = math.NaN()
				ph.hasPulse, ph.pulseMM, ph.score, ph.ticks = false, 0, 0, nil
				out = append(out, ph)
				added++
			}
		}
		out = append(out, b)
	}
	if added > 0 {
		*warn = append(*warn, fmt.Sprintf("assumed %d unfound row(s) in the gaps between rows, at the page's row pitch", added))
	}
	return out
}

// isoelectric estimates a row's 0 mV level as the most frequent y of its
// paths (the flat stretches between complexes), px.
func isoelectric(paths [][]Point) float64 {
	hist := map[int]int{}
	n := 0
	for _, p := range paths {
		for _, q := range p {
			hist[int(math.Round(q.Y))]++
			n++
		}
	}
	if n == 0 {
		return math.NaN()
	}
	best, bestN := 0, -1
	for y := range hist {
		c := hist[y-1] + 2*hist[y] + hist[y+1]
		if c > bestN || c == bestN && y < best {
			best, bestN = y, c
		}
	}
	// Refine: mean of the points within ±1 px of the mode.
	s, m := 0.0, 0
	for _, p := range paths {
		for _, q := range p {
			if math.Abs(q.Y-float64(best)) <= 1.5 {
				s += q.Y
				m++
			}
		}
	}
	if m == 0 {
		return float64(best)
	}
	return s / float64(m)
}

// sampleRow resamples a panel's path onto the record grid t = k/fs over
// [t0, t1), with the panel's left edge at x = xStart px. Samples farther
// than 1 mm from any path point, or inside a gap of the path longer than
// 4 mm, are NaN.
func sampleRow(pts []Point, xStart, t0, t1 float64, cal grid.Calibration, zeroY, fs float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = math.NaN()
	}
	if len(pts) == 0 {
		return out
	}
	pxX := cal.PxPerMMX.V
	pxPerS := cal.SpeedMMPerS.V * pxX
	edge := 1 * pxX
	maxGap := 4 * pxX
	k0 := max(0, int(math.Ceil(t0*fs-1e-9)))
	j := 0
	for k := k0; k < n; k++ {
		t := float64(k) / fs
		if t >= t1-1e-9 {
			break
		}
		x := xStart + (t-t0)*pxPerS
		for j+1 < len(pts) && pts[j+1].X <= x {
			j++
		}
		var y float64
		switch {
		case x < pts[0].X:
			if pts[0].X-x > edge {
				continue
			}
			y = pts[0].Y
		case j+1 >= len(pts):
			if x-pts[len(pts)-1].X > edge {
				continue
			}
			y = pts[len(pts)-1].Y
		default:
			a, b := pts[j], pts[j+1]
			if b.X-a.X > maxGap {
				continue
			}
			f := 0.0
			if b.X > a.X {
				f = (x - a.X) / (b.X - a.X)
			}
			y = a.Y + f*(b.Y-a.Y)
		}
		out[k] = cal.Millivolts(y - zeroY)
	}
	return out
}

// limbFlagUV is the Einthoven/Goldberger residual above which the limb
// leads are suspected, µV: several times the residual of good extractions
// of clean pages (≈ 10–30 µV on this project's corpus; a project choice,
// not a published value).
const limbFlagUV = 60

// flagLeads lists leads whose quality is poor or that break the limb-lead
// identities: when the residual is high, the lead whose removal brings it
// down the most (leave one out, needs four simultaneous limb leads) is
// flagged; failing that, the leads whose own residual is far above the
// others'.
func flagLeads(res *Result, limbOK bool) []ecg.Lead {
	flag := map[ecg.Lead]bool{}
	for l, q := range res.Quality {
		if q < 0.5 {
			flag[l] = true
		}
	}
	if limbOK && res.Limb.ResidualUV > limbFlagUV {
		best, bestR := ecg.LeadUnknown, res.Limb.ResidualUV
		for _, l := range ecg.LimbLeads {
			if res.Record.Signal(l) == nil {
				continue
			}
			var r ecg.Record
			for _, s := range res.Record.Signals {
				if s.Lead != l {
					r.Signals = append(r.Signals, s)
				}
			}
			if c, ok := ecg.CheckLimb(&r); ok && c.Seconds > 0.5*res.Limb.Seconds && c.ResidualUV < bestR {
				best, bestR = l, c.ResidualUV
			}
		}
		if best != ecg.LeadUnknown && bestR < 0.5*res.Limb.ResidualUV {
			flag[best] = true
			res.Warnings = append(res.Warnings, fmt.Sprintf("lead %v breaks the Einthoven/Goldberger identities (residual %.0f µV, %.0f µV without it)", best, res.Limb.ResidualUV, bestR))
		} else {
			var vs []float64
			for _, v := range res.Limb.PerLeadUV {
				vs = append(vs, v)
			}
			sort.Float64s(vs)
			med := vs[len(vs)/2]
			for l, v := range res.Limb.PerLeadUV {
				if v > 2*med && v > limbFlagUV {
					flag[l] = true
					res.Warnings = append(res.Warnings, fmt.Sprintf("lead %v: limb-lead residual %.0f µV, %.1f× the median", l, v, v/med))
				}
			}
		}
	}
	var out []ecg.Lead
	for l := range flag {
		out = append(out, l)
	}
	sort.Slice(out, func(i, j int) bool { return out[i] < out[j] })
	return out
}

// disagreement is the RMS difference of two copies of a lead over the
// samples both cover, after removing each copy's mean there, mV; m is the
// number of such samples.
func disagreement(a, b []float64) (rms float64, m int) {
	var sa, sb float64
	for i := range a {
		if !math.IsNaN(a[i]) && !math.IsNaN(b[i]) {
			sa += a[i]
			sb += b[i]
			m++
		}
	}
	if m == 0 {
		return 0, 0
	}
	ma, mb := sa/float64(m), sb/float64(m)
	var ss float64
	for i := range a {
		if !math.IsNaN(a[i]) && !math.IsNaN(b[i]) {
			d := (a[i] - ma) - (b[i] - mb)
			ss += d * d
		}
	}
	return math.Sqrt(ss / float64(m)), m
}

// alignToTicks moves the rows' common trace start so that the printed
// column separators fall on the layout's column boundaries: one page-wide
// shift, the median of the ticks' offsets, applied when at least two
// ticks agree within 4 mm.
func alignToTicks(rows []rowInfo, lay *Layout, cal grid.Calibration) {
	pxX := cal.PxPerMMX.V
	pxPerS := cal.SpeedMMPerS.V * pxX
	var ds []float64
	for ri, lr := range lay.Rows {
		if ri >= len(rows) || len(lr.Cells) < 2 {
			continue
		}
		r := rows[ri]
		for _, tk := range r.ticks {
			x := r.traceX0
			for _, c := range lr.Cells[:len(lr.Cells)-1] {
				x += (c.T1S - c.T0S) * pxPerS
				if d := tk - x; math.Abs(d) < 4*pxX {
					ds = append(ds, d)
				}
			}
		}
	}
	if len(ds) < 2 {
		return
	}
	sort.Float64s(ds)
	med := ds[len(ds)/2]
	sum, n := 0.0, 0
	for _, d := range ds {
		if math.Abs(d-med) <= 0.7*pxX {
			sum += d
			n++
		}
	}
	// A tick's centre is good to half a pixel on a scan and a dot or two
	// on a fax, no better than the pulse's edge: shifts under 0.5 mm are
	// left to the pulses (a 0.26 mm shift from two fax ticks flipped a
	// Cabrera page to the standard order).
	if n < 2 || 2*n < len(ds) || math.Abs(sum/float64(n)) < 0.5*pxX {
		return
	}
	for i := range rows {
		rows[i].traceX0 += sum / float64(n)
	}
}

func countPulses(rows []rowInfo) int {
	n := 0
	for _, r := range rows {
		if r.hasPulse {
			n++
		}
	}
	return n
}

// rotate180 returns a copy of m turned by 180°, with the same bounds.
func rotate180(m *image.Gray) *image.Gray {
	out := image.NewGray(m.Rect)
	w, h := m.Rect.Dx(), m.Rect.Dy()
	for y := 0; y < h; y++ {
		src := m.Pix[y*m.Stride : y*m.Stride+w]
		dst := out.Pix[(h-1-y)*out.Stride : (h-1-y)*out.Stride+w]
		for x, v := range src {
			dst[w-1-x] = v
		}
	}
	return out
}
