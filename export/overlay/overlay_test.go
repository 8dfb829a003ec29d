package overlay

import (
	"bytes"
	"encoding/base64"
	"encoding/xml"
	"image"
	"image/color"
	"image/draw"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"tracelift/render"
)

func white(w, h int) *image.NRGBA {
	m := image.NewNRGBA(image.Rect(0, 0, w, h))
	draw.Draw(m, m.Bounds(), image.NewUniform(color.White), image.Point{}, draw.Src)
	return m
}

func rgb(m image.Image, x, y int) (int, int, int) {
	r, g, b, _ := m.At(x, y).RGBA()
	return int(r >> 8), int(g >> 8), int(b >> 8)
}

// Pixels: the line's centre takes the trace colour (cyan: low red, high
// green and blue), a pixel beside it the dark outline, far pixels stay
// white, a NaN point leaves a gap, and a low-quality segment is magenta.
func TestRenderPixels(t *testing.T) {
	src := white(200, 120)
	nan := math.NaN()
	segs := []Segment{
		{Lead: "II", Points: [][2]float64{{10, 40}, {90, 40}, {nan, nan}, {120, 40}, {190, 40}}, Quality: 0.9},
		{Lead: "V1", Points: [][2]float64{{10, 90}, {190, 90}}, Quality: 0.2},
	}
	m := Render(src, segs, &Options{LineWidth: 3, FontSize: 12})
	if r, g, b := rgb(m, 50, 40); !(r < 100 && g > 150 && b > 150) {
		t.Errorf("line centre (50,40) = %d,%d,%d, want cyan", r, g, b)
	}
	if r, g, b := rgb(m, 50, 42); !(r < 200 && g < 200 && b < 220) {
		t.Errorf("outline (50,42) = %d,%d,%d, want darkened", r, g, b)
	}
	if r, g, b := rgb(m, 50, 60); r != 255 || g != 255 || b != 255 {
		t.Errorf("far pixel (50,60) = %d,%d,%d, want white", r, g, b)
	}
	if r, g, b := rgb(m, 105, 40); r != 255 || g != 255 || b != 255 {
		t.Errorf("gap pixel (105,40) = %d,%d,%d, want white", r, g, b)
	}
	if r, g, b := rgb(m, 100, 90); !(r > 150 && g < 100 && b > 100) {
		t.Errorf("low-quality line (100,90) = %d,%d,%d, want magenta", r, g, b)
	}
	// Semi-transparent: black ink under the line still darkens it.
	ink := white(40, 20)
	for x := 0; x < 40; x++ {
		ink.Set(x, 10, color.Black)
	}
	mi := Render(ink, []Segment{{Lead: "I", Points: [][2]float64{{0, 10}, {40, 10}}, Quality: math.NaN()}}, &Options{LineWidth: 3})
	_, g1, _ := rgb(mi, 20, 10)
	_, g2, _ := rgb(m, 50, 40)
	if !(g1 < g2) {
		t.Errorf("ink under the trace does not show through: %d vs %d", g1, g2)
	}
	// A label: some non-white pixels above-left of the first point.
	found := false
	for y := 20; y < 38 && !found; y++ {
		for x := 8; x < 40; x++ {
			if r, g, b := rgb(m, x, y); r+g+b < 600 {
				found = true
				break
			}
		}
	}
	if !found {
		t.Error("no label drawn near the first point")
	}
}

// The SVG parses as XML, embeds an image of the source's size, and holds
// one outline and one coloured path per segment with one subpath per
// unbroken run of points, plus the labels.
func TestSVG(t *testing.T) {
	src := white(64, 48)
	nan := math.NaN()
	segs := []Segment{
		{Lead: "aVR", Points: [][2]float64{{1, 2}, {3, 4}, {nan, 0}, {5, 6}, {7.125, 8}}, Quality: math.NaN()},
		{Lead: "V6", Points: [][2]float64{{10, 20}, {30, 20}}, Quality: 0.1},
	}
	var b bytes.Buffer
	if err := WriteSVG(&b, src, segs, &Options{Caption: "Lakeside <demo> & co"}); err != nil {
		t.Fatal(err)
	}
	var doc struct {
		XMLName xml.Name
		Width   int `xml:"width,attr"`
		Image   struct {
			Href string `xml:"href,attr"`
		} `xml:"image"`
		Gs []struct {
			G []struct {
				Lead  string `xml:"data-lead,attr"`
				Paths []struct {
					D     string `xml:"d,attr"`
					Dash  string `xml:"stroke-dasharray,attr"`
					Color string `xml:"stroke,attr"`
				} `xml:"path"`
			} `xml:"g"`
			Text []string `xml:"text"`
		} `xml:"g"`
	}
	if err := xml.Unmarshal(b.Bytes(), &doc); err != nil {
		t.Fatalf("SVG is not well-formed: %v", err)
	}
	if doc.XMLName.Local != "svg" || doc.Width != 64 {
		t.Errorf("root %v width %d", doc.XMLName, doc.Width)
	}
	const pre = "data:image/png;base64,"
	if !strings.HasPrefix(doc.Image.Href, pre) {
		t.Fatalf("image href %.40q", doc.Image.Href)
	}
	raw, err := base64.StdEncoding.DecodeString(doc.Image.Href[len(pre):])
	if err != nil {
		t.Fatal(err)
	}
	im, err := png.Decode(bytes.NewReader(raw))
	if err != nil || im.Bounds().Dx() != 64 || im.Bounds().Dy() != 48 {
		t.Fatalf("embedded image: %v %v", err, im.Bounds())
	}
	if len(doc.Gs) != 2 || len(doc.Gs[0].G) != 2 || doc.Gs[0].G[0].Lead != "aVR" {
		t.Fatalf("groups %+v", doc.Gs)
	}
	p := doc.Gs[0].G[0].Paths
	if len(p) != 2 || p[1].D != "M1 2 L3 4 M5 6 L7.13 8" || p[1].Color != "#00e5ff" {
		t.Errorf("aVR paths %+v", p)
	}
	if q := doc.Gs[0].G[1].Paths; q[1].Dash == "" || q[1].Color != "#ff00c8" {
		t.Errorf("low-quality V6 path not dashed magenta: %+v", q)
	}
	all := strings.Join(doc.Gs[1].Text, "|")
	if !strings.Contains(all, "aVR") || !strings.Contains(all, "V6 0.10") || !strings.Contains(all, "Lakeside <demo> & co") {
		t.Errorf("labels %q", all)
	}
}

// segmentsFromTruth maps the printed record back to image pixels with the
// renderer's truth, the way the pipeline maps its digitised paths; an
// offset (mV) shifts one lead to show what a misplaced trace looks like.
func segmentsFromTruth(tr *render.Truth, shiftLead string, shiftMV float64) []Segment {
	rec := tr.Record()
	var segs []Segment
	for _, p := range tr.Panels {
		var pts [][2]float64
		for _, s := range rec.Signals {
			if s.Lead.String() != strings.TrimPrefix(p.Lead, "-") {
				continue
			}
			for k, v := range s.Samples {
				ts := s.Time(k)
				if ts < p.T0 || ts >= p.T1 || math.IsNaN(v) {
					continue
				}
				if strings.HasPrefix(p.Lead, "-") {
					v = -v
				}
				if p.Lead == shiftLead {
					v += shiftMV
				}
				x, y := tr.PanelPoint(p, ts, v)
				u, w := tr.PaperToPx(x, y)
				pts = append(pts, [2]float64{u, w})
			}
		}
		q := 0.95
		if p.Lead == shiftLead {
			q = 0.3
		}
		segs = append(segs, Segment{Lead: p.Lead, Points: pts, Quality: q})
	}
	return segs
}

// On a rendered page the overlay of the true traces covers the printed
// ink: at most points of each segment the source pixel is dark (ink).
// Also writes the demo pictures to a temporary folder for inspection.
func TestOverlayOnRenderedPage(t *testing.T) {
	rec, err := render.CorpusRecord(3, false)
	if err != nil {
		t.Fatal(err)
	}
	page, err := render.Render(rec, &render.Options{DPI: 100})
	if err != nil {
		t.Fatal(err)
	}
	segs := segmentsFromTruth(&page.Truth, "V2", 0.3)
	if len(segs) < 12 {
		t.Fatalf("%d segments", len(segs))
	}
	for _, s := range segs {
		if s.Lead == "V2" {
			continue
		}
		dark, n := 0, 0
		for _, p := range s.Points {
			r, g, b := rgb(page.Image, int(math.Round(p[0])), int(math.Round(p[1])))
			if r+g+b < 3*128 {
				dark++
			}
			n++
		}
		if n == 0 || float64(dark)/float64(n) < 0.9 {
			t.Errorf("lead %s: %d of %d overlay points on ink", s.Lead, dark, n)
		}
	}
	dir := t.TempDir()
	if err := WritePNGFile(filepath.Join(dir, "overlay.png"), page.Image, segs, &Options{Caption: "Lakeside Demo Clinic: overlay check"}); err != nil {
		t.Fatal(err)
	}
	if err := WriteSVGFile(filepath.Join(dir, "overlay.svg"), page.Image, segs, nil); err != nil {
		t.Fatal(err)
	}
	for _, n := range []string{"overlay.png", "overlay.svg"} {
		if st, err := os.Stat(filepath.Join(dir, n)); err != nil || st.Size() < 1000 {
			t.Errorf("%s: %v", n, err)
		}
	}
}

func BenchmarkRenderA4At300DPI(b *testing.B) {
	rec, err := render.CorpusRecord(5, false)
	if err != nil {
		b.Fatal(err)
	}
	page, err := render.Render(rec, nil)
	if err != nil {
		b.Fatal(err)
	}
	segs := segmentsFromTruth(&page.Truth, "", 0)
	b.ResetTimer()
	for b.Loop() {
		Render(page.Image, segs, nil)
	}
}
