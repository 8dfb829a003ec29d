package cli

import (
	"bytes"
	"encoding/binary"
	"encoding/csv"
	"encoding/json"
	"hash/crc32"
	"image"
	"image/color"
	"image/jpeg"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"

	"github.com/go-pdf/fpdf"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/accuracy"
	"tracelift/render"
	"tracelift/synth"
)

// run runs the command line on in-memory streams.
func run(args ...string) (code int, stdout, stderr string) {
	var o, e bytes.Buffer
	code = Main(args, strings.NewReader(""), &o, &e)
	return code, o.String(), e.String()
}

var (
	pageOnce sync.Once
	pagePNG  []byte
	pageErr  error
)

// cleanPagePNG renders one synthetic 12-lead record on a clean 3 × 4 + 1
// page at 200 dpi, once per test binary.
func cleanPagePNG(t *testing.T) []byte {
	t.Helper()
	pageOnce.Do(func() {
		rec, err := synth.Generate(synth.Default(), 42)
		if err != nil {
			pageErr = err
			return
		}
		p, err := render.Render(rec, &render.Options{Layout: render.Layout3x4R1, DPI: 200, Condition: "clean"})
		if err != nil {
			pageErr = err
			return
		}
		var buf bytes.Buffer
		pageErr = p.WritePNG(&buf)
		pagePNG = buf.Bytes()
	})
	require.NoError(t, pageErr)
	return pagePNG
}

func writeFile(t *testing.T, dir, name string, b []byte) string {
	t.Helper()
	p := filepath.Join(dir, name)
	require.NoError(t, os.WriteFile(p, b, 0o644))
	return p
}

// hugePNGHeader is a valid PNG signature and IHDR chunk announcing a
// 100 000 × 100 000 RGB image, with no pixel data.
func hugePNGHeader() []byte {
	var b bytes.Buffer
	b.WriteString("\x89PNG\r\n\x1a\n")
	ihdr := make([]byte, 13)
	binary.BigEndian.PutUint32(ihdr[0:], 100000)
	binary.BigEndian.PutUint32(ihdr[4:], 100000)
	ihdr[8], ihdr[9] = 8, 2 // 8-bit RGB
	chunk := append([]byte("IHDR"), ihdr...)
	binary.Write(&b, binary.BigEndian, uint32(len(ihdr)))
	b.Write(chunk)
	binary.Write(&b, binary.BigEndian, crc32.ChecksumIEEE(chunk))
	return b.Bytes()
}

func blankPNG(t *testing.T) []byte {
	img := image.NewGray(image.Rect(0, 0, 1700, 1200))
	for i := range img.Pix {
		img.Pix[i] = 255
	}
	var buf bytes.Buffer
	require.NoError(t, png.Encode(&buf, img))
	return buf.Bytes()
}

// naturalJPEG is a noisy, smooth-toned picture of nothing in particular
// (no grid, no traces), like a photo of something else.
func naturalJPEG(t *testing.T) []byte {
	r := rand.New(rand.NewPCG(3, 3))
	img := image.NewNRGBA(image.Rect(0, 0, 1600, 1200))
	for y := 0; y < 1200; y++ {
		for x := 0; x < 1600; x++ {
			fx, fy := float64(x)/1600, float64(y)/1200
			v := 130 + 50*math.Sin(5*fx+2*fy) + 35*math.Cos(7*fy-3*fx) + 15*math.Sin(40*fx*fy)
			img.SetNRGBA(x, y, color.NRGBA{px(v + 12*r.NormFloat64()), px(0.85*v + 12*r.NormFloat64()), px(0.6*v + 12*r.NormFloat64()), 255})
		}
	}
	var buf bytes.Buffer
	require.NoError(t, jpeg.Encode(&buf, img, &jpeg.Options{Quality: 85}))
	return buf.Bytes()
}

func px(v float64) uint8 { return uint8(max(0, min(255, math.Round(v)))) }

func textOnlyPDF(t *testing.T) []byte {
	pdf := fpdf.New("L", "mm", "A4", "")
	pdf.AddPage()
	pdf.SetFont("Helvetica", "", 14)
	pdf.Cell(40, 10, "Referral letter, no tracing attached")
	var buf bytes.Buffer
	require.NoError(t, pdf.Output(&buf))
	return buf.Bytes()
}

func listDir(t *testing.T, dir string) []string {
	ents, err := os.ReadDir(dir)
	require.NoError(t, err)
	var out []string
	for _, e := range ents {
		out = append(out, e.Name())
	}
	return out
}

func TestDigitizeBadInput(t *testing.T) {
	in := t.TempDir()
	good := cleanPagePNG(t)
	for _, tc := range []struct {
		name string
		file string
		data []byte
		code int
		want string // part of the error line
	}{
		{"empty file", "empty.png", []byte{}, ExitUnreadable, "empty.png"},
		{"truncated PNG", "cut.png", good[:len(good)/3], ExitUnreadable, "cut.png"},
		{"text named .png", "notes.png", []byte("Dear colleague, please find the ECG enclosed.\n"), ExitUnreadable, "notes.png"},
		{"huge PNG header", "huge.png", hugePNGHeader(), ExitUnreadable, "huge.png"},
		{"blank white page", "blank.png", blankPNG(t), ExitNoECG, "blank.png"},
		{"photo of something else", "holiday.jpg", naturalJPEG(t), ExitNoECG, "holiday.jpg"},
		{"PDF without images", "letter.pdf", textOnlyPDF(t), ExitUnreadable, "letter.pdf"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			f := writeFile(t, in, tc.file, tc.data)
			out := t.TempDir()
			code, _, stderr := run("digitize", f, "-o", out, "--quiet")
			assert.Equal(t, tc.code, code, stderr)
			assert.Equal(t, 1, strings.Count(stderr, "\n"), "one line: %q", stderr)
			assert.Contains(t, stderr, tc.want)
			assert.Empty(t, listDir(t, out), "no output, not even a partial one")
		})
	}
	// A truncated JPEG.
	j := naturalJPEG(t)
	f := writeFile(t, in, "cut.jpg", j[:len(j)/4])
	code, _, stderr := run("digitize", f, "-o", t.TempDir())
	assert.Equal(t, ExitUnreadable, code, stderr)
	// A missing file.
	code, _, stderr = run("digitize", filepath.Join(in, "absent.png"), "-o", t.TempDir())
	assert.Equal(t, ExitUnreadable, code, stderr)
	assert.Contains(t, stderr, "absent.png")
}

func TestDigitizeUsageAndOutputErrors(t *testing.T) {
	in := t.TempDir()
	f := writeFile(t, in, "page.png", cleanPagePNG(t))
	code, _, stderr := run("digitize", f, "-o", t.TempDir(), "--layout", "5x5-diagonal")
	assert.Equal(t, ExitUsage, code, stderr)
	assert.Contains(t, stderr, "--layout")
	code, _, _ = run("digitize", f)
	assert.Equal(t, ExitUsage, code, "the output folder is required")
	code, _, _ = run("digitize", f, "-o", t.TempDir(), "--format", "docx")
	assert.Equal(t, ExitUsage, code)
	code, _, _ = run("digitize", f, "-o", t.TempDir(), "--rate", "5")
	assert.Equal(t, ExitUsage, code)

	// The output folder is a file: nothing can be written.
	blocker := writeFile(t, in, "occupied", []byte("x"))
	code, _, stderr = run("digitize", f, "-o", filepath.Join(blocker, "out"))
	assert.Equal(t, ExitOutput, code, stderr)
	assert.Equal(t, 1, strings.Count(stderr, "\n"), stderr)
}

func TestDigitizeGoodPage(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	f := writeFile(t, in, "clinic page.png", cleanPagePNG(t))
	code, stdout, stderr := run("digitize", f, "-o", out, "--format", "edf,wfdb,aecg,pdf")
	require.Equal(t, ExitOK, code, stderr)
	assert.Contains(t, stdout, "12 found")
	assert.Contains(t, stdout, "Caution")
	assert.Contains(t, stdout, "HR ")
	for _, name := range []string{"clinic page.csv", "clinic page.json", "clinic page.edf", "clinic_page.hea", "clinic_page.dat", "clinic page.xml", "clinic page.pdf"} {
		assert.FileExists(t, filepath.Join(out, name))
	}

	// CSV: the documented header, mV values, empty cells where a lead was
	// not printed (each short lead of a 3 × 4 page covers 2.5 s).
	fh, err := os.Open(filepath.Join(out, "clinic page.csv"))
	require.NoError(t, err)
	defer fh.Close()
	rows, err := csv.NewReader(fh).ReadAll()
	require.NoError(t, err)
	assert.Equal(t, []string{"time_s", "I", "II", "III", "aVR", "aVL", "aVF", "V1", "V2", "V3", "V4", "V5", "V6"}, rows[0])
	assert.Equal(t, "0.000000", rows[1][0], "t = 0 at the first trace column")
	assert.NotEmpty(t, rows[1][1], "lead I is printed at t = 0")
	assert.Empty(t, rows[1][7], "V1 is printed from 5 s on")
	assert.InDelta(t, 5001, len(rows), 2, "10 s at 500 Hz")

	// JSON: the documented keys.
	b, err := os.ReadFile(filepath.Join(out, "clinic page.json"))
	require.NoError(t, err)
	var rep map[string]any
	require.NoError(t, json.Unmarshal(b, &rep))
	cal := rep["calibration"].(map[string]any)
	for _, k := range []string{"px_per_mm_x", "px_per_mm_y", "speed_mm_s", "gain_mm_mv", "rotation_deg"} {
		v := cal[k].(map[string]any)
		assert.Contains(t, v, "value", k)
		assert.NotEmpty(t, v["origin"], k)
	}
	// 200 dpi = 7.874 px/mm (standards.md §6.1).
	assert.InDelta(t, 7.874, cal["px_per_mm_x"].(map[string]any)["value"].(float64), 0.08)
	m := rep["measurements"].(map[string]any)
	for _, k := range []string{"heart_rate_bpm", "rr_ms", "p_ms", "pr_ms", "qrs_ms", "qt_ms", "qtc_ms", "axes", "beats", "flags"} {
		assert.Contains(t, m, k)
	}
	assert.Contains(t, m["qtc_ms"], "bazett")
	beats := m["beats"].([]any)
	require.NotEmpty(t, beats)
	assert.Contains(t, beats[0], "r_s")
	assert.Contains(t, rep, "layout")
	assert.Contains(t, rep, "warnings")
	assert.Contains(t, rep["caution"], "clinicians")
	assert.Len(t, rep["leads"], 12)
	// A clean page: no lead's trace touches another row's.
	for _, l := range rep["leads"].([]any) {
		li := l.(map[string]any)
		assert.NotContains(t, li["flags"], "crossed", li["lead"])
		assert.Greater(t, li["quality"], 0.9, li["lead"])
	}
}

// TestDigitizeCrossedFlag: on a page whose rows overlap (the eval's
// overlap 12 × 1 page: 20 mm/mV, rows 0.85 mV apart) the leads whose
// strokes other rows' strokes touch carry the flag "crossed" and a
// quality below 0.9, and the summary names them.
func TestDigitizeCrossedFlag(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and digitises a page")
	}
	_, page, err := accuracy.RenderCase(accuracy.Case{Condition: "overlap", Layout: "12x1", Seed: 1})
	require.NoError(t, err)
	in, out := t.TempDir(), t.TempDir()
	var buf bytes.Buffer
	require.NoError(t, page.WritePNG(&buf))
	f := writeFile(t, in, "tangled.png", buf.Bytes())
	code, stdout, stderr := run("digitize", f, "-o", out)
	require.Contains(t, []int{ExitOK, ExitPartial}, code, stderr)
	assert.Contains(t, stdout, "  crossed    ")
	b, err := os.ReadFile(filepath.Join(out, "tangled.json"))
	require.NoError(t, err)
	var rep struct {
		Leads []struct {
			Lead    string   `json:"lead"`
			Quality float64  `json:"quality"`
			Flags   []string `json:"flags"`
		} `json:"leads"`
	}
	require.NoError(t, json.Unmarshal(b, &rep))
	crossed := 0
	for _, l := range rep.Leads {
		if slices.Contains(l.Flags, "crossed") {
			crossed++
			assert.Less(t, l.Quality, 0.9, l.Lead)
		}
	}
	assert.GreaterOrEqual(t, crossed, 6, "leads flagged crossed on a 12 × 1 page at 20 mm/mV")
}

func TestDigitizeSeveralFilesWorstClass(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	good := writeFile(t, in, "good.png", cleanPagePNG(t))
	bad := writeFile(t, in, "bad.png", []byte("not an image"))
	blank := writeFile(t, in, "blank.png", blankPNG(t))
	code, _, stderr := run("digitize", bad, good, blank, "-o", out, "-q")
	assert.Equal(t, ExitNoECG, code, "worst class: no ECG (4) outranks unreadable (3); %s", stderr)
	assert.Contains(t, stderr, "bad.png")
	assert.Contains(t, stderr, "blank.png")
	assert.FileExists(t, filepath.Join(out, "good.csv"), "the good file still finished")
	assert.FileExists(t, filepath.Join(out, "good.json"))
	assert.ElementsMatch(t, []string{"good.csv", "good.json"}, listDir(t, out))
}

// TestBatchRealPipeline runs batch with the real pipeline over a small
// archive with a good page and two bad files: the good one is digitised,
// the bad ones are catalogued with their reasons.
func TestBatchRealPipeline(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	require.NoError(t, os.MkdirAll(filepath.Join(in, "ward"), 0o755))
	writeFile(t, in, "ward/good.png", cleanPagePNG(t))
	writeFile(t, in, "ward/letter.png", []byte("Dear colleague"))
	writeFile(t, in, "empty.jpg", nil)
	code, stdout, stderr := run("batch", in, "-o", out, "-j", "2")
	assert.Equal(t, ExitPartial, code, stderr)
	assert.Contains(t, stdout, "1 done, 0 partial, 2 failed")
	rows := catalogRows(t, filepath.Join(out, "catalog.sqlite"))
	require.Len(t, rows, 3)
	g := rows["ward/good.png"]
	assert.Equal(t, "done", string(g.Status))
	assert.Len(t, g.Leads, 12)
	assert.InDelta(t, 70, g.HeartBPM, 5, "synth.Default() beats at 70/min")
	assert.ElementsMatch(t, []string{"ward/good.csv", "ward/good.json"}, g.Outputs)
	assert.Equal(t, "unreadable", rows["ward/letter.png"].Class)
	assert.Contains(t, rows["empty.jpg"].Error, "empty.jpg")
	assert.FileExists(t, filepath.Join(out, "ward", "good.csv"))
	assert.FileExists(t, filepath.Join(out, "catalog.csv"))
}

// TestDigitizeMultiPagePDF: a scanned PDF of two pages gives name.csv and
// name-p2.csv.
func TestDigitizeMultiPagePDF(t *testing.T) {
	pdf := fpdf.New("L", "mm", "A4", "")
	// A 150-dpi scan keeps the test quick.
	rec, err := synth.Generate(synth.Default(), 44)
	require.NoError(t, err)
	pg, err := render.Render(rec, &render.Options{Layout: render.Layout3x4R1, DPI: 150, Condition: "clean"})
	require.NoError(t, err)
	var pngBuf bytes.Buffer
	require.NoError(t, pg.WritePNG(&pngBuf))
	pdf.RegisterImageOptionsReader("page", fpdf.ImageOptions{ImageType: "PNG"}, &pngBuf)
	for range 2 {
		pdf.AddPage()
		pdf.ImageOptions("page", 0, 0, 297, 210, false, fpdf.ImageOptions{ImageType: "PNG"}, 0, "")
	}
	var buf bytes.Buffer
	require.NoError(t, pdf.Output(&buf))
	in, out := t.TempDir(), t.TempDir()
	f := writeFile(t, in, "two.pdf", buf.Bytes())
	code, stdout, stderr := run("digitize", f, "-o", out)
	require.Equal(t, ExitOK, code, stderr)
	assert.Contains(t, stdout, "two.pdf page 2")
	assert.ElementsMatch(t, []string{"two.csv", "two.json", "two-p2.csv", "two-p2.json"}, listDir(t, out))
}
