package cli

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strings"
	"sync"
	"time"

	"github.com/spf13/cobra"

	"tracelift/accuracy"
	"tracelift/catalog"
	"tracelift/ecg"
	"tracelift/imageproc/decode"
	"tracelift/internal/atomicfile"
	"tracelift/pipeline"
	"tracelift/render"
)

// evalOptions are the options of `tracelift eval`.
type evalOptions struct {
	Conditions []string
	Layouts    []string
	N          int
	Seed       uint64
	Dir        string // evaluate a folder of images with truth sidecars instead
	Workers    int
	JSONPath   string
	Markdown   bool
	Quiet      bool
	RateHz     float64
}

// evalReport is the JSON written by --json.
type evalReport struct {
	Version    int             `json:"version"`
	Program    string          `json:"program_version"`
	Date       string          `json:"date_utc"`
	Command    string          `json:"command"`
	Conditions []string        `json:"conditions,omitempty"`
	Layouts    []string        `json:"layouts,omitempty"`
	N          int             `json:"n,omitempty"`
	Seed       uint64          `json:"seed"`
	Dir        string          `json:"dir,omitempty"`
	ByCond     []accuracy.Row  `json:"by_condition"`
	ByLayout   []accuracy.Row  `json:"by_layout"`
	Pages      []accuracy.Page `json:"pages"`
}

func newEvalCmd(ios *IOStreams, runF func(*evalOptions) error) *cobra.Command {
	opts := &evalOptions{}
	var conds, layouts string
	cmd := &cobra.Command{
		Use:   "eval",
		Short: "Measure digitising accuracy on a seeded synthetic corpus (or a folder with truth)",
		Long: `eval is tracelift's reproducible accuracy benchmark. It synthesises -n
records from --seed on, prints each under every chosen condition (scan
simulation) and layout, digitises the pages and compares them with the
truth: per-lead SNR (median and 10th percentile; aligned: one time shift
per page within ±60 ms and each lead's mean removed; strict: the
PhysioNet/CinC Challenge 2024 definition, no shift, no mean removal; a lead
not returned scores 0 dB), leads found, lead swaps, calibration errors
(px/mm along x and y, gain, skew), interval errors against the synthetic
fiducials (HR, PR, QRS, QT) and seconds per page. Same version, same
options, same numbers.

With --dir it evaluates the images of a folder instead; each image needs
its truth sidecar <name>.truth.json (as written by the renderer).`,
		Example: `  tracelift eval -n 10
  tracelift eval --conditions clean,scan --layouts 3x4+1,6x2 -n 20 --seed 1 --json eval.json
  tracelift eval --dir rendered/`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if opts.N < 1 {
				return flagErrorf("eval: -n must be at least 1, got %d", opts.N)
			}
			if opts.Workers < 1 {
				return flagErrorf("eval: -j must be at least 1, got %d", opts.Workers)
			}
			var err error
			if opts.Conditions, err = pickNames("condition", conds, render.ConditionNames()); err != nil {
				return err
			}
			if layouts == "any" {
				opts.Layouts = nil // each condition draws its own layout per page
			} else if opts.Layouts, err = pickNames("layout", layouts, evalLayouts()); err != nil {
				return err
			}
			if runF != nil {
				return runF(opts)
			}
			return runEval(cmd.Context(), ios, opts, strings.Join(append([]string{"tracelift"}, os.Args[1:]...), " "))
		},
	}
	f := cmd.Flags()
	f.StringVar(&conds, "conditions", "all", "comma list of conditions ("+strings.Join(render.ConditionNames(), ", ")+") or all")
	f.StringVar(&layouts, "layouts", "all", "comma list of layouts ("+strings.Join(evalLayouts(), ", ")+"), all, or any (each page's layout drawn by its condition)")
	f.IntVarP(&opts.N, "n", "n", 3, "records per condition and layout")
	f.Uint64Var(&opts.Seed, "seed", 1, "first seed of the corpus")
	f.StringVar(&opts.Dir, "dir", "", "evaluate the images in this folder (with <name>.truth.json sidecars) instead")
	f.IntVarP(&opts.Workers, "jobs", "j", runtime.NumCPU(), "pages digitised in parallel")
	f.StringVar(&opts.JSONPath, "json", "", "also write every score and summary as JSON to this file")
	f.BoolVar(&opts.Markdown, "markdown", false, "print the tables as Markdown")
	f.BoolVarP(&opts.Quiet, "quiet", "q", false, "no progress lines")
	f.Float64Var(&opts.RateHz, "rate", 500, "sample rate of the digitised signals, Hz")
	return cmd
}

// evalLayouts are the layouts eval uses by default.
func evalLayouts() []string { return render.LayoutNames() }

// pickNames parses a comma list against the allowed names ("all" = every
// name).
func pickNames(what, arg string, allowed []string) ([]string, error) {
	if strings.TrimSpace(arg) == "" || arg == "all" {
		return allowed, nil
	}
	var out []string
	for _, s := range strings.Split(arg, ",") {
		s = strings.TrimSpace(s)
		if s == "" {
			continue
		}
		if !hasString(allowed, s) {
			return nil, flagErrorf("eval: unknown %s %q (want %s)", what, s, strings.Join(allowed, ", "))
		}
		if !hasString(out, s) {
			out = append(out, s)
		}
	}
	if len(out) == 0 {
		return nil, flagErrorf("eval: no %s given", what)
	}
	return out, nil
}

// evalJob is one page to evaluate: either a synthetic case or a file.
type evalJob struct {
	c    accuracy.Case
	file string // image path (with --dir)
}

func runEval(ctx context.Context, ios *IOStreams, opts *evalOptions, command string) error {
	if ctx == nil {
		ctx = context.Background()
	}
	var jobs []evalJob
	if opts.Dir != "" {
		in, err := catalog.Scan(opts.Dir)
		if err != nil {
			return fmt.Errorf("eval: %w", err)
		}
		for _, x := range in {
			if _, err := os.Stat(truthPath(x.Abs)); err == nil {
				jobs = append(jobs, evalJob{file: x.Abs})
			}
		}
		if len(jobs) == 0 {
			return fmt.Errorf("eval: %s: %w: no image with a <name>.truth.json sidecar", opts.Dir, ecg.ErrUnreadable)
		}
	} else {
		for _, c := range accuracy.Cases(opts.Conditions, opts.Layouts, opts.N, opts.Seed) {
			jobs = append(jobs, evalJob{c: c})
		}
	}
	cfg := pipeline.Config{SampleRate: opts.RateHz}
	pages := make([]accuracy.Page, len(jobs))
	next := make(chan int)
	var wg sync.WaitGroup
	var mu sync.Mutex
	done := 0
	start := time.Now()
	for range min(opts.Workers, len(jobs)) {
		wg.Go(func() {
			for i := range next {
				p := evalOne(ctx, jobs[i], cfg)
				mu.Lock()
				pages[i] = p
				done++
				switch {
				case opts.Quiet:
				case ios.IsTerminal:
					fmt.Fprintf(ios.ErrOut, "\r\x1b[Keval: %d/%d pages, %s", done, len(jobs), time.Since(start).Round(time.Second))
				default:
					fmt.Fprintf(ios.ErrOut, "eval: %d/%d %s: %s\n", done, len(jobs), p.Name, pageVerdict(p))
				}
				mu.Unlock()
			}
		})
	}
feed:
	for i := range jobs {
		select {
		case <-ctx.Done():
			break feed
		case next <- i:
		}
	}
	close(next)
	wg.Wait()
	if !opts.Quiet && ios.IsTerminal {
		fmt.Fprintln(ios.ErrOut)
	}
	if ctx.Err() != nil {
		return fmt.Errorf("eval: %w", errInterrupted)
	}

	byCond := accuracy.Summarize(pages, func(p accuracy.Page) string { return p.Condition })
	byLayout := accuracy.Summarize(pages, func(p accuracy.Page) string { return p.Layout })
	sort.SliceStable(byLayout, func(i, j int) bool {
		a, b := byLayout[i].Condition, byLayout[j].Condition
		return a != "all" && (b == "all" || a < b)
	})
	write := accuracy.WriteTable
	if opts.Markdown {
		write = accuracy.WriteMarkdown
	}
	fmt.Fprintf(ios.Out, "tracelift %s eval, %s, %d pages\n\nBy condition:\n", Version, time.Now().UTC().Format("2006-01-02"), len(pages))
	if err := write(ios.Out, "condition", byCond); err != nil {
		return fmt.Errorf("eval: %w", err)
	}
	fmt.Fprintf(ios.Out, "\nBy layout:\n")
	if err := write(ios.Out, "layout", byLayout); err != nil {
		return fmt.Errorf("eval: %w", err)
	}
	fmt.Fprintf(ios.Out, "\n%s\n", accuracy.Legend)
	if opts.JSONPath != "" {
		rep := evalReport{Version: 1, Program: Version, Date: time.Now().UTC().Format(time.RFC3339), Command: command,
			Seed: opts.Seed, Dir: opts.Dir, ByCond: byCond, ByLayout: byLayout, Pages: pages}
		if opts.Dir == "" {
			rep.Conditions, rep.Layouts, rep.N = opts.Conditions, opts.Layouts, opts.N
		}
		err := atomicfile.WriteFile(opts.JSONPath, func(f io.Writer) error {
			enc := json.NewEncoder(f)
			enc.SetIndent("", "  ")
			return enc.Encode(rep)
		})
		if err != nil {
			return fmt.Errorf("eval: %w", err)
		}
		fmt.Fprintf(ios.Out, "\nscores written to %s\n", opts.JSONPath)
	}
	return nil
}

// pageVerdict is a page's one-line result for the log.
func pageVerdict(p accuracy.Page) string {
	med, _ := accuracy.SNRStats(p.SNRdB)
	s := fmt.Sprintf("%d/%d leads, median SNR %.1f dB, %.1f s", p.LeadsFound, p.LeadsPrinted, med, float64(p.Seconds))
	if p.Class != "" {
		s += " (" + p.Class + ": " + p.Error + ")"
	}
	return s
}

// truthPath returns the sidecar path of an image: name.truth.json.
func truthPath(img string) string {
	return strings.TrimSuffix(img, filepath.Ext(img)) + ".truth.json"
}

func evalOne(ctx context.Context, j evalJob, cfg pipeline.Config) accuracy.Page {
	if j.file == "" {
		rec, page, err := accuracy.RenderCase(j.c)
		if err != nil {
			return failedPage(j.c.Name(), j.c.Condition, j.c.Layout, err)
		}
		// Hand the pipeline what a file of this page would carry: its
		// resolution tags for flat scans and faxes, none for photos.
		src := decode.Page{Image: page.Image, Index: 1}
		src.DPIX, src.DPIY, _ = page.Truth.Resolution()
		p, _ := accuracy.Evaluate(ctx, src, &page.Truth, &rec, cfg)
		p.Name, p.Seed = j.c.Name(), j.c.Seed
		return p
	}
	name := filepath.Base(j.file)
	f, err := os.Open(truthPath(j.file))
	if err != nil {
		return failedPage(name, "", "", err)
	}
	truth, err := render.ReadTruth(f)
	f.Close()
	if err != nil {
		return failedPage(name, "", "", err)
	}
	var first decode.Page
	err = decode.Pages(j.file, &decode.Options{Pages: []int{1}}, func(p decode.Page) error {
		first = p
		return nil
	})
	if err != nil {
		return failedPage(name, truth.Condition, truth.Layout, err)
	}
	p, _ := accuracy.Evaluate(ctx, first, &truth, nil, cfg)
	p.Name = name
	return p
}

// failedPage is a page that could not even be produced or read.
func failedPage(name, cond, layout string, err error) accuracy.Page {
	p := accuracy.Page{Name: name, Condition: cond, Layout: layout, Class: errorClass(err), Error: oneLine(err)}
	return p
}
