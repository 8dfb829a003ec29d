package trace_test

import (
	"encoding/gob"
	"errors"
	"fmt"
	"image"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"tracelift/accuracy"
	"tracelift/ecg"
	"tracelift/grid"
	"tracelift/imageproc"
	"tracelift/trace"
)

// frontEnd is what the front end (imageproc.Prepare, grid.Detect) hands to
// trace.Extract for one corpus page, with the page's truth for scoring.
type frontEnd struct {
	Cal     grid.Calibration
	Pulses  []grid.Pulse
	Printed ecg.Record
	Full    ecg.Record
	ink     *image.Gray
}

// loadFrontEnd renders and prepares a corpus page (with the resolution its
// file carries, as the evaluation does) or reads it from the cache folder
// dir, where it is kept as <case>.ink.png and <case>.gob.
func loadFrontEnd(t testing.TB, c accuracy.Case, dir string) (*frontEnd, error) {
	t.Helper()
	base := filepath.Join(dir, c.Name())
	if f, err := os.Open(base + ".gob"); err == nil {
		defer f.Close()
		var fe frontEnd
		if err := gob.NewDecoder(f).Decode(&fe); err == nil {
			if g, err := os.Open(base + ".ink.png"); err == nil {
				defer g.Close()
				if im, err := png.Decode(g); err == nil {
					if gr, ok := im.(*image.Gray); ok {
						fe.ink = gr
						return &fe, nil
					}
				}
			}
		}
	}
	full, page, err := accuracy.RenderCase(c)
	if err != nil {
		return nil, err
	}
	var po *imageproc.Options
	if dx, dy, ok := page.Truth.Resolution(); ok {
		po = &imageproc.Options{DPIX: dx, DPIY: dy}
	}
	pg, err := imageproc.Prepare(page.Image, po)
	if err != nil {
		return nil, err
	}
	gr, err := grid.Detect(pg, nil)
	if err != nil {
		return nil, err
	}
	fe := &frontEnd{Cal: gr.Calibration, Pulses: gr.Pulses, Printed: accuracy.PrintedRecord(&page.Truth), Full: full, ink: pg.Ink}
	if f, err := os.Create(base + ".gob"); err == nil {
		gob.NewEncoder(f).Encode(fe)
		f.Close()
	}
	if f, err := os.Create(base + ".ink.png"); err == nil {
		png.Encode(f, pg.Ink)
		f.Close()
	}
	return fe, nil
}

// TestFollowCorpus scores trace.Extract alone on corpus pages whose front
// end output is cached in $TRACELIFT_FOLLOW_CACHE (built on first use), so
// that changes to trace following can be measured quickly. Conditions and
// layouts come from TRACELIFT_TRACE_CONDS and TRACELIFT_FOLLOW_LAYOUTS,
// the number of seeds from TRACELIFT_TRACE_CORPUS (default 2). Per page it
// logs the SNR (PhysioNet/CinC Challenge 2024 metric, lenient variant) and
// how the error splits between the QRS complexes and the rest; with
// TRACELIFT_TRACE_OVERLAY it draws the ink, the truth (pale yellow, placed
// by the panel's geometry) and the followed paths (one colour per row).
func TestFollowCorpus(t *testing.T) {
	dir := os.Getenv("TRACELIFT_FOLLOW_CACHE")
	if dir == "" {
		t.Skip("set TRACELIFT_FOLLOW_CACHE to a folder to score trace following on cached front-end pages")
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	n := 2
	if s := os.Getenv("TRACELIFT_TRACE_CORPUS"); s != "" {
		fmt.Sscan(s, &n)
	}
	conds := []string{"overlap", "clean", "scan"}
	if s := os.Getenv("TRACELIFT_TRACE_CONDS"); s != "" {
		conds = strings.Split(s, ",")
	}
	layouts := []string{"3x4", "3x4+1", "3x4+3", "6x2", "cabrera-3x4"}
	if s := os.Getenv("TRACELIFT_FOLLOW_LAYOUTS"); s != "" {
		layouts = strings.Split(s, ",")
	}
	overlay := os.Getenv("TRACELIFT_TRACE_OVERLAY")
	var lines []string
	var total time.Duration
	pages := 0
	for _, cond := range conds {
		var per []float64
		printed, found, swaps := 0, 0, 0
		for _, c := range accuracy.Cases([]string{cond}, layouts, n, 1) {
			fe, err := loadFrontEnd(t, c, dir)
			if err != nil {
				t.Logf("%s: front end: %v", c.Name(), err)
				continue
			}
			t0 := time.Now()
			res, err := trace.Extract(fe.ink, fe.Cal, fe.Pulses, nil)
			total += time.Since(t0)
			pages++
			est := ecg.Record{}
			lay := ""
			if res != nil {
				est = res.Record
				lay = res.Layout.Name
			}
			sc := trace.SNR(fe.Printed, est, trace.Lenient)
			var pv []float64
			np, nf, nsw := 0, 0, 0
			var swapped []string
			for _, s := range fe.Printed.Signals {
				if _, _, ok := s.ValidSpan(); !ok {
					continue
				}
				np++
				v := math.Min(sc.PerLead[s.Lead], 60)
				per = append(per, v)
				pv = append(pv, v)
				if e := est.Signal(s.Lead); e != nil {
					if _, _, ok := e.ValidSpan(); ok {
						nf++
					}
					if w := accuracy.SwappedWith(&fe.Full, e); w != ecg.LeadUnknown {
						nsw++
						swapped = append(swapped, fmt.Sprintf("%v→%v", s.Lead, w))
					}
				}
			}
			{
				// Where the error is: inside the QRS complexes (±20 ms) or
				// elsewhere, and how much of the QRS error is amplitude the
				// estimate has beyond the truth (a neighbour's stroke taken)
				// rather than amplitude missed.
				var eq, eo, sig, ex float64
				for _, s := range fe.Printed.Signals {
					e := est.Signal(s.Lead)
					var mx, my float64
					var n int
					for i, v := range s.Samples {
						if math.IsNaN(v) {
							continue
						}
						w := math.NaN()
						if e != nil {
							w = e.At(s.Time(i) + sc.ShiftS)
						}
						if math.IsNaN(w) {
							w = 0
						}
						mx += v
						my += w
						n++
					}
					if n == 0 {
						continue
					}
					mx /= float64(n)
					my /= float64(n)
					for i, v := range s.Samples {
						if math.IsNaN(v) {
							continue
						}
						w := math.NaN()
						if e != nil {
							w = e.At(s.Time(i) + sc.ShiftS)
						}
						if math.IsNaN(w) {
							w = 0
						}
						d := (v - mx) - (w - my)
						sig += (v - mx) * (v - mx)
						tt := s.Time(i)
						inQ := false
						for _, b := range fe.Full.Beats {
							if tt >= b.QRSOn-0.02 && tt <= b.QRSOff+0.02 {
								inQ = true
								break
							}
						}
						if inQ {
							if math.Abs(w-my) > math.Abs(v-mx) {
								ex += d * d
							}
							eq += d * d
						} else {
							eo += d * d
						}
					}
				}
				t.Logf("  error in QRS %.0f %% (excess amplitude %.0f %% of it), page SNR %.1f dB, without QRS errors %.1f dB", 100*eq/(eq+eo), 100*ex/eq, 10*math.Log10(sig/(eq+eo)), 10*math.Log10(sig/eo))
			}
			sort.Float64s(pv)
			printed += np
			found += nf
			swaps += nsw
			es := ""
			if err != nil {
				es = err.Error()
				if len(es) > 80 {
					es = es[:80]
				}
			}
			t.Logf("%-24s %-12s med %5.1f shift %4.0fms found %2d/%2d swaps %d %v %s | %s", c.Name(), lay, accuracy.Median(pv), 1000*sc.ShiftS, nf, np, nsw, swapped, es, fmtLeads(sc.PerLead))
			if overlay != "" && res != nil {
				drawInkOverlay(filepath.Join(overlay, c.Name()+".png"), fe.ink, res, fe)
			}
		}
		sort.Float64s(per)
		lines = append(lines, fmt.Sprintf("| %-8s | %5.1f | %5.1f | %d/%d | %d |", cond, accuracy.Percentile(per, 50), accuracy.Percentile(per, 10), found, printed, swaps))
		checkCorpusTargets(t, cond, accuracy.Percentile(per, 50), found, printed, swaps)
	}
	if pages > 0 {
		t.Logf("extract: %.0f ms/page over %d pages", float64(total.Milliseconds())/float64(pages), pages)
	}
	t.Logf("\n| condition | median dB | p10 dB | leads found | swaps |\n%s", strings.Join(lines, "\n"))
}

// drawInkOverlay writes the ink map in grey with the followed paths in
// green and each panel's 0 mV line in magenta.
func drawInkOverlay(path string, ink *image.Gray, res *trace.Result, fe *frontEnd) {
	out := image.NewNRGBA(ink.Rect)
	for y := ink.Rect.Min.Y; y < ink.Rect.Max.Y; y++ {
		for x := ink.Rect.Min.X; x < ink.Rect.Max.X; x++ {
			v := 255 - ink.Pix[(y-ink.Rect.Min.Y)*ink.Stride+x-ink.Rect.Min.X]/3
			o := out.PixOffset(x, y)
			out.Pix[o], out.Pix[o+1], out.Pix[o+2], out.Pix[o+3] = v, v, v, 255
		}
	}
	// The truth drawn where the panel's geometry puts it (pale yellow).
	pxS := fe.Cal.PxPerMMX.V * res.Record.Meta.SpeedMMPerS
	pxMV := fe.Cal.PxPerMMY.V * res.Record.Meta.GainMMPerMV
	for _, p := range res.Panels {
		s := fe.Printed.Signal(p.Lead)
		if s == nil {
			continue
		}
		sign := 1.0
		if p.Negated {
			sign = -1
		}
		for i, v := range s.Samples {
			tt := s.Time(i)
			if math.IsNaN(v) || tt < p.T0 || tt >= p.T1 {
				continue
			}
			x := int(math.Round(float64(p.Bounds.Min.X) + (tt-p.T0)*pxS))
			y := int(math.Round(p.ZeroY - sign*v*pxMV))
			for dy := -2; dy <= 2; dy++ {
				for dx := -2; dx <= 2; dx++ {
					if pt := (image.Point{x + dx, y + dy}); pt.In(out.Rect) {
						o := out.PixOffset(pt.X, pt.Y)
						out.Pix[o], out.Pix[o+1], out.Pix[o+2] = 250, 220, 120
					}
				}
			}
		}
	}
	palette := [][3]uint8{{220, 0, 0}, {0, 0, 230}, {0, 160, 0}, {230, 130, 0}, {160, 0, 200}, {0, 170, 200}}
	for _, p := range res.Panels {
		pc := palette[p.Row%len(palette)]
		for i, q := range p.Path {
			a := q
			if i > 0 && q.X-p.Path[i-1].X < 3 {
				a = p.Path[i-1]
			}
			n := int(math.Abs(q.Y-a.Y)) + 1
			for k := 0; k <= n; k++ {
				f := float64(k) / float64(n)
				x, y := int(math.Round(a.X+f*(q.X-a.X))), int(math.Round(a.Y+f*(q.Y-a.Y)))
				for dx := 0; dx <= 0; dx++ {
					if pt := (image.Point{x + dx, y}); pt.In(out.Rect) {
						o := out.PixOffset(pt.X, pt.Y)
						out.Pix[o], out.Pix[o+1], out.Pix[o+2] = pc[0], pc[1], pc[2]
					}
				}
			}
		}
		for x := p.Bounds.Min.X; x < p.Bounds.Max.X; x += 3 {
			y := int(p.ZeroY)
			if (image.Point{x, y}).In(out.Rect) {
				o := out.PixOffset(x, y)
				out.Pix[o], out.Pix[o+1], out.Pix[o+2] = 255, 0, 255
			}
		}
	}
	f, err := os.Create(path)
	if err != nil {
		return
	}
	defer f.Close()
	png.Encode(f, out)
}

// BenchmarkExtractOverlap times trace.Extract alone on the overlap 3x4+3
// page of seed 1 (20 mm/mV, six rows, QRS strokes crossing the
// neighbouring rows: the page on which separateRows re-follows most), its
// ink map and calibration from the front end prepared outside the loop.
func BenchmarkExtractOverlap(b *testing.B) {
	fe, err := loadFrontEnd(b, accuracy.Case{Condition: "overlap", Layout: "3x4+3", Seed: 1}, b.TempDir())
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := trace.Extract(fe.ink, fe.Cal, fe.Pulses, nil); err != nil && !errors.Is(err, ecg.ErrPartial) {
			b.Fatal(err)
		}
	}
}
