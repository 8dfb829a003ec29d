package cli

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path"
	"path/filepath"
	"regexp"
	"runtime"
	"runtime/debug"
	"slices"
	"sort"
	"strings"
	"sync"
	"time"

	"github.com/spf13/cobra"

	"tracelift/catalog"
	"tracelift/ecg"
	"tracelift/internal/atomicfile"
)

// batchOptions are the options of `tracelift batch`.
type batchOptions struct {
	InputDir    string
	OutDir      string
	Workers     int
	Shard       catalog.Shard
	CatalogPath string // default OutDir/catalog.sqlite
	Force       bool   // redo inputs even when catalogued as finished
	RetryFailed bool   // try again inputs that failed with the same content and options
	MaxMemoryMB int    // soft limit of the Go heap for the run, MB; 0 = none (or GOMEMLIMIT)
	Quiet       bool
	Pipe        pipelineFlags

	// process digitises one input; nil means the real pipeline. Tests
	// inject fakes.
	process fileProcessor
}

// fileResult is what digitising one input file produced.
type fileResult struct {
	Pages   int
	Outputs []string // files written (absolute or as given)
	First   pageSummary
}

// pageSummary holds a page's key numbers for the catalogue; NaN = unknown.
type pageSummary struct {
	Leads                 []string
	Quality               float64
	HR, PR, QRS, QT, QTcB float64
}

func unknownSummary() pageSummary {
	n := math.NaN()
	return pageSummary{Quality: n, HR: n, PR: n, QRS: n, QT: n, QTcB: n}
}

// fileProcessor digitises the file inPath and writes its outputs next to
// outBase (outBase + ".csv", outBase + "-p2.csv", …). An error wrapping
// ecg.ErrPartial comes with a usable result; any other error means nothing
// usable was written.
type fileProcessor func(ctx context.Context, inPath, outBase string) (fileResult, error)

func newBatchCmd(ios *IOStreams, runF func(*batchOptions) error) *cobra.Command {
	opts := &batchOptions{}
	var shard string
	cmd := &cobra.Command{
		Use:   "batch INPUT_DIR -o DIR",
		Short: "Digitise a whole archive of ECG images, resumably, into a catalogue",
		Long: `batch digitises every image under INPUT_DIR (recursing into subfolders) with
the same pipeline as digitize, in parallel, mirroring the relative paths in
DIR. It keeps a catalogue, DIR/catalog.sqlite (SQLite), with one row per
input: its SHA-256, status, error, outputs and key measurements (HR, PR,
QRS, QT, QTc Bazett, leads found, quality). Every finished input is
committed at once, so the run can be stopped at any moment and rerun. An
input is skipped when its content (SHA-256) and the digitising options are
unchanged and it finished (done or partial) or failed in a way its bytes
decide: unreadable or no ECG found (a corrupt file stays corrupt;
--retry-failed tries those again, --force redoes everything). Failures on
the output side (disk full, permissions) and internal errors are always
retried; changed inputs, inputs read with other options, inputs in flight
when an earlier run stopped and rows from catalogues that did not record
the options are redone. At the end the catalogue is also written as
DIR/catalog.csv.

Outputs go to DIR mirroring the input tree; every input gets its own output
name (two inputs that would share one get the extension, then a number,
added). Folders holding a catalogue (earlier output folders) and the output
folder itself are never read as input.

--shard K/N processes a fixed share of the inputs (FNV-1a of the relative
path mod N), so N machines can split one archive; combine their catalogues
with 'tracelift batch merge'.

Measurements of a digitised tracing can be wrong and are never a diagnosis:
verify them against the original tracing; clinical decisions rest with
qualified clinicians under local rules and licensed practice.`,
		Example: `  tracelift batch scans/ -o digitised/ -j 4
  tracelift batch scans/ -o part3/ --shard 3/8        # on machine 3 of 8
  tracelift batch merge -o all.sqlite part*/catalog.sqlite
  tracelift batch export all.sqlite -o all.csv`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.InputDir = args[0]
			if opts.OutDir == "" {
				return flagErrorf("batch: the output folder is required (-o DIR)")
			}
			if opts.Workers < 1 {
				return flagErrorf("batch: -j must be at least 1, got %d", opts.Workers)
			}
			if opts.MaxMemoryMB < 0 {
				return flagErrorf("batch: --max-memory must be a size in MB (0 = no limit), got %d", opts.MaxMemoryMB)
			}
			if shard != "" {
				s, err := catalog.ParseShard(shard)
				if err != nil {
					return flagErrorf("batch: --%v", err)
				}
				opts.Shard = s
			}
			if err := opts.Pipe.check("batch"); err != nil {
				return err
			}
			if runF != nil {
				return runF(opts)
			}
			return runBatch(cmd.Context(), ios, opts)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&opts.OutDir, "out", "o", "", "output folder (created if missing)")
	f.IntVarP(&opts.Workers, "jobs", "j", runtime.NumCPU(), "files digitised in parallel, on at most this many cores")
	f.StringVar(&shard, "shard", "", "process only share K of N of the inputs, e.g. 2/8")
	f.StringVar(&opts.CatalogPath, "catalog", "", "catalogue file (default DIR/catalog.sqlite)")
	f.BoolVar(&opts.Force, "force", false, "redo every input, even those already finished or failed")
	f.BoolVar(&opts.RetryFailed, "retry-failed", false, "try again inputs that failed before with the same content and options")
	f.BoolVarP(&opts.Quiet, "quiet", "q", false, "print only the final summary")
	f.IntVar(&opts.MaxMemoryMB, "max-memory", 0, "soft memory limit for the whole run in MB (the collector works harder near it); 0 = none")
	opts.Pipe.register(cmd)
	cmd.AddCommand(newBatchMergeCmd(ios), newBatchExportCmd(ios))
	return cmd
}

// batchStats counts a run's inputs. Skipped counts every input not
// digitised again; SkippedFailed those of them that had failed before.
type batchStats struct {
	Total, Done, Partial, Failed, Skipped, SkippedFailed, Pages int
	Elapsed                                                     time.Duration
	// FailedBefore lists inputs skipped because they failed before with
	// the same content and options (at most maxListed), with their reason.
	FailedBefore []catalog.Entry
}

// maxListed bounds the failed-before inputs listed in the summary.
const maxListed = 10

// optionsFingerprint names, in a fixed order, every digitising option
// that shapes an input's result or outputs (not -j, --shard or --quiet):
// a catalogued result counts for a rerun only when it was made with the
// same fingerprint (catalog.Entry.Settled).
func optionsFingerprint(p *pipelineFlags) string {
	layout := strings.TrimSpace(p.Layout)
	if layout == "" {
		layout = "auto"
	}
	formats := append([]string(nil), p.Formats...)
	if len(formats) == 0 {
		formats = []string{"csv", "json"}
	}
	sort.Strings(formats)
	return fmt.Sprintf("layout=%s speed=%g gain=%g dpi=%g rate=%g max-pixels=%d formats=%s",
		layout, p.SpeedMMS, p.GainMMMV, p.DPI, p.RateHz, p.MaxPixels, strings.Join(formats, ","))
}

func runBatch(ctx context.Context, ios *IOStreams, opts *batchOptions) error {
	if ctx == nil {
		ctx = context.Background()
	}
	catPath := opts.CatalogPath
	if catPath == "" {
		catPath = filepath.Join(opts.OutDir, catalog.FileName)
	}
	// Outputs written into the input folder itself would be read as
	// inputs by the next run (overlays and PDFs are images).
	if a, errA := os.Stat(opts.InputDir); errA == nil {
		if b, errB := os.Stat(opts.OutDir); errB == nil && os.SameFile(a, b) {
			return flagErrorf("batch: the output folder %s is the input folder; choose another (a subfolder is fine)", opts.OutDir)
		}
	}
	inputs, err := catalog.Scan(opts.InputDir, opts.OutDir, filepath.Dir(catPath))
	if err != nil {
		return fmt.Errorf("batch: %w", err)
	}
	// Output names are chosen from the whole archive, before sharding, so
	// every shard and every worker order gives an input the same one.
	bases := outputBases(inputs)
	if len(inputs) == 0 {
		fmt.Fprintf(ios.ErrOut, "batch: warning: no images found in %s (looked for %s)\n",
			opts.InputDir, strings.Join(catalog.Extensions, " "))
	}
	inputs = opts.Shard.Filter(inputs)
	if len(inputs) == 0 && len(bases) > 0 {
		fmt.Fprintf(ios.ErrOut, "batch: warning: none of the %d images in %s belongs to shard %s\n",
			len(bases), opts.InputDir, opts.Shard)
	}
	if err := os.MkdirAll(opts.OutDir, 0o755); err != nil {
		return fmt.Errorf("batch: %s: %w: %v", opts.OutDir, ecg.ErrOutput, err)
	}
	db, err := catalog.Open(catPath)
	if err != nil {
		return fmt.Errorf("batch: %w", err)
	}
	defer db.Close()
	// What earlier runs left, read once: workers consult this map instead
	// of querying the database per input.
	all, err := db.All(ctx)
	if err != nil {
		return fmt.Errorf("batch: %w: %v", ecg.ErrOutput, err)
	}
	prev := make(map[string]catalog.Entry, len(all))
	for _, e := range all {
		prev[e.Path] = e
	}
	fingerprint := optionsFingerprint(&opts.Pipe)
	// Inputs in flight when an earlier run was killed may have left
	// temporary files beside their outputs; no one writes them any more.
	for rel, e := range prev {
		if b, ok := bases[rel]; ok && e.Status == catalog.StatusStarted {
			removeStaleTemps(filepath.Join(opts.OutDir, filepath.FromSlash(b)))
		}
	}
	process := opts.process
	if process == nil {
		process = opts.Pipe.processor(ios)
	}
	defer runtimeLimits(opts.Workers, opts.MaxMemoryMB)()

	prog := newProgress(ios.ErrOut, ios.IsTerminal && !opts.Quiet, len(inputs))
	if !opts.Quiet && !ios.IsTerminal {
		fmt.Fprintf(ios.ErrOut, "batch: %d inputs in %s (shard %s), %d workers\n",
			len(inputs), opts.InputDir, opts.Shard, opts.Workers)
	}
	prog.update(batchStats{Total: len(inputs)}, 0)
	jobs := make(chan catalog.Input)
	var (
		mu       sync.Mutex
		st       = batchStats{Total: len(inputs)}
		fatalErr error // a failure that stops the run (not an interruption)
	)
	start := time.Now()
	var wg sync.WaitGroup
	for range min(opts.Workers, max(1, len(inputs))) {
		wg.Go(func() {
			for in := range jobs {
				old, hadOld := prev[in.Rel]
				e, skipped, err := batchOne(ctx, db, in, opts, fingerprint, old, hadOld, bases[in.Rel], process)
				if !skipped {
					collectBetweenInputs()
				}
				mu.Lock()
				switch {
				case err != nil && ctx.Err() != nil && errors.Is(err, ctx.Err()):
					// Interrupted in flight: reported once, after the
					// workers stop.
				case err != nil:
					if fatalErr == nil {
						fatalErr = err
					}
				case skipped:
					st.Skipped++
					if e.Status == catalog.StatusFailed {
						st.SkippedFailed++
						if len(st.FailedBefore) < maxListed {
							st.FailedBefore = append(st.FailedBefore, e)
						}
					}
				default:
					st.Pages += e.Pages
					switch e.Status {
					case catalog.StatusDone:
						st.Done++
					case catalog.StatusPartial:
						st.Partial++
					default:
						st.Failed++
					}
				}
				redo := hadOld && old.Status == catalog.StatusStarted && !skipped && err == nil
				switch {
				case err != nil || skipped || opts.Quiet:
				case !ios.IsTerminal:
					if redo {
						fmt.Fprintf(ios.ErrOut, "redone  %s: it was in flight when an earlier run stopped\n", e.Path)
					}
					fmt.Fprintln(ios.ErrOut, logLine(e))
				case e.Status != catalog.StatusDone:
					// Problems scroll above the progress bar.
					prog.above(logLine(e))
				}
				prog.update(st, time.Since(start))
				mu.Unlock()
			}
		})
	}
feed:
	for _, in := range feedOrder(inputs, opts.Workers) {
		select {
		case <-ctx.Done():
			break feed
		case jobs <- in:
		}
		mu.Lock()
		stop := fatalErr != nil
		mu.Unlock()
		if stop {
			break
		}
	}
	close(jobs)
	wg.Wait()
	st.Elapsed = time.Since(start)
	prog.finish()

	// The CSV copy of the whole catalogue, also after an interruption.
	csvPath := filepath.Join(filepath.Dir(catPath), strings.TrimSuffix(filepath.Base(catPath), filepath.Ext(catPath))+".csv")
	csvErr := atomicfile.WriteFile(csvPath, func(w io.Writer) error { return db.WriteCSV(context.Background(), w) })

	printBatchSummary(ios.Out, st, catPath, csvPath)
	switch {
	case fatalErr != nil:
		return fmt.Errorf("batch: %w", fatalErr)
	case ctx.Err() != nil:
		return fmt.Errorf("batch: %w after %d of %d inputs; finished work is in %s, rerun the same command to resume",
			errInterrupted, st.Done+st.Partial+st.Failed+st.Skipped, st.Total, catPath)
	case csvErr != nil:
		return fmt.Errorf("batch: %w", csvErr)
	case st.Failed > 0 || st.Partial > 0:
		earlier := ""
		if st.SkippedFailed > 0 {
			earlier = fmt.Sprintf(" (and %d failed in an earlier run, not retried)", st.SkippedFailed)
		}
		return fmt.Errorf("batch: %w: %d of %d inputs failed%s and %d were partial; reasons are in %s",
			ecg.ErrPartial, st.Failed, st.Total, earlier, st.Partial, csvPath)
	case st.SkippedFailed > 0:
		// Nothing new failed, but the archive still holds failures: the
		// same exit code as the run that found them.
		return fmt.Errorf("batch: %w: %d of %d inputs failed in an earlier run and were not tried again (--retry-failed to try); reasons are in %s",
			ecg.ErrPartial, st.SkippedFailed, st.Total, csvPath)
	}
	return nil
}

// batchOne hashes, checks, digitises and catalogues one input. old (when
// hadOld) is the input's row from an earlier run; skipped is true, and old
// is returned, when that row settles the input (catalog.Entry.Settled:
// finished, or failed, with the same content and options). Before
// digitising, a "started" row is committed so that a run killed while the
// input is in flight leaves a trace of it, and the rerun redoes it. err is
// non-nil only for failures that must stop the run (the catalogue cannot
// be written) or an interruption.
func batchOne(ctx context.Context, db *catalog.DB, in catalog.Input, opts *batchOptions, fingerprint string,
	old catalog.Entry, hadOld bool, base string, process fileProcessor) (e catalog.Entry, skipped bool, err error) {
	if ctx.Err() != nil {
		return e, false, ctx.Err()
	}
	e = catalog.NewEntry(in.Rel)
	e.Size = in.Size
	e.Options = fingerprint
	t0 := time.Now()
	sum, herr := catalog.HashFile(in.Abs)
	e.SHA256 = sum
	if herr == nil && !opts.Force && hadOld && old.Settled(sum, fingerprint, opts.RetryFailed) && ownsOutputs(old, base) {
		return old, true, nil
	}
	started := e
	started.Status, started.Finished = catalog.StatusStarted, t0
	if err := db.Put(context.WithoutCancel(ctx), started); err != nil {
		return e, false, err
	}
	var res fileResult
	perr := herr
	if perr == nil {
		outBase := filepath.Join(opts.OutDir, filepath.FromSlash(base))
		if err := os.MkdirAll(filepath.Dir(outBase), 0o755); err != nil {
			perr = fmt.Errorf("%s: %w: %v", filepath.Dir(outBase), ecg.ErrOutput, err)
		} else {
			res, perr = safeProcess(ctx, process, in.Abs, outBase)
		}
	}
	if ctx.Err() != nil && !(perr == nil || errors.Is(perr, ecg.ErrPartial) && res.Pages > 0) {
		// Interrupted mid-file: the row stays "started" and the rerun
		// redoes the input. (A file that was completed just as the run
		// was stopped is recorded below.)
		return e, false, ctx.Err()
	}
	e.Seconds = time.Since(t0).Seconds()
	e.Pages = res.Pages
	for _, o := range res.Outputs {
		if r, err := filepath.Rel(opts.OutDir, o); err == nil {
			o = filepath.ToSlash(r)
		}
		e.Outputs = append(e.Outputs, o)
	}
	if res.Pages > 0 {
		s := res.First
		e.Leads, e.Quality, e.HeartBPM, e.PRMS = s.Leads, s.Quality, s.HR, s.PR
		e.QRSMS, e.QTMS, e.QTcMS = s.QRS, s.QT, s.QTcB
	}
	switch {
	case perr == nil:
		e.Status = catalog.StatusDone
	case errors.Is(perr, ecg.ErrPartial) && res.Pages > 0:
		e.Status, e.Class, e.Error = catalog.StatusPartial, "partial", oneLine(perr)
	default:
		e.Status, e.Class, e.Error = catalog.StatusFailed, errorClass(perr), oneLine(perr)
	}
	e.Finished = time.Now()
	// Committed even if the run is being interrupted right now: the
	// outputs are complete, and the row must say so.
	if err := db.Put(context.WithoutCancel(ctx), e); err != nil {
		return e, false, err
	}
	return e, false, nil
}

// ownsOutputs reports whether every output recorded in e is one of the
// files of the output base (base.EXT, base-pN.EXT, base-overlay.EXT, …).
// It is false for a row written when the input had another output name
// (before names were made unique across the archive, two inputs could
// share one and overwrite each other's files): such an input is redone
// under its current name.
func ownsOutputs(e catalog.Entry, base string) bool {
	for _, o := range e.Outputs {
		if !strings.HasPrefix(o, base+".") && !strings.HasPrefix(o, base+"-") {
			return false
		}
	}
	return true
}

// feedOrder returns the order in which workers are handed the inputs:
// with several workers the largest first (the longest-processing-time
// rule, R. L. Graham, "Bounds on multiprocessing timing anomalies", SIAM
// J. Appl. Math. 1969; from memory), ties in the folder's order. The work
// of a page grows with its file, and a large one started last would leave
// the other workers idle while it finishes: on a folder of a few pages of
// mixed sizes that tail is a good part of the run. One worker takes them
// in the folder's order.
func feedOrder(inputs []catalog.Input, workers int) []catalog.Input {
	if workers <= 1 {
		return inputs
	}
	order := slices.Clone(inputs)
	slices.SortStableFunc(order, func(a, b catalog.Input) int { return cmp.Compare(b.Size, a.Size) })
	return order
}

// collectBetweenInputs runs a garbage collection, and is called by each
// worker after every digitised input. A page allocates
// some 150–200 MB of full-page images that are garbage once its outputs
// are written; left to the pacer (GOGC=100) the heap grows to about twice
// the previous live heap while the next page is decoded on top of the last
// one's garbage. Collecting between inputs keeps a worker's peak near that
// of a single page: batch on 8 A4 scans, peak resident memory -j 1 258 →
// 169–177 MB, -j 2 391 → 296–308 MB (measured 2026-12-01 at GOGC 100,
// /usr/bin/time; see runtimeLimits for GOGC 300).
// A cycle takes under 10 ms of a page's second (the big buffers hold no
// pointers, so marking is quick). Collecting in the background instead,
// without the worker waiting, saved less (-j 1 191–218 MB).
func collectBetweenInputs() { runtime.GC() }

// runtimeLimits makes -j a bound on the cores used: the front end spreads
// each page's full-page pass over GOMAXPROCS threads, so without the bound
// "-j 1" would still occupy every core for part of each page (about a
// third of its CPU time on a 300-dpi A4 page, measured 2026-12-01). With
// N workers on N or more cores nothing changes.
//
// Since every worker collects after each input (collectBetweenInputs),
// the pacer is given more room within a page (GOGC 300 instead of 100,
// unless the user set GOGC): fewer collections in mid-page and less memory
// handed back to the system only to be faulted in again. On 8 A4 scans
// with -j 1 this cut page faults from 53–60 k to 45–53 k and user+system
// CPU by about 5–7 % (within the noise of a loaded machine), for 15–50 MB
// more peak memory (190–217 MB; -j 2 unchanged at 288–318 MB; measured
// 2026-12-01).
//
// maxMemMB > 0 sets a soft memory limit (runtime/debug.SetMemoryLimit)
// for machines or job slots with little memory: the collector then runs
// more often near it, trading CPU time for resident memory. The returned
// function restores every setting.
func runtimeLimits(workers, maxMemMB int) (restore func()) {
	procs := runtime.GOMAXPROCS(0)
	if workers < procs {
		runtime.GOMAXPROCS(workers)
	}
	gcPercent := debug.SetGCPercent(-1)
	if gogcSet() {
		debug.SetGCPercent(gcPercent) // GOGC chosen by the user, even 100
	} else {
		debug.SetGCPercent(300)
	}
	mem := int64(-1)
	if maxMemMB > 0 {
		mem = debug.SetMemoryLimit(int64(maxMemMB) << 20)
	}
	return func() {
		if workers < procs {
			runtime.GOMAXPROCS(procs)
		}
		if mem >= 0 {
			debug.SetMemoryLimit(mem)
		}
		debug.SetGCPercent(gcPercent)
	}
}

// gogcSet reports whether the user chose a GOGC (the variable is present
// and not empty; an empty GOGC means the runtime's default).
func gogcSet() bool {
	v, ok := os.LookupEnv("GOGC")
	return ok && v != ""
}

// removeStaleTemps deletes the hidden temporary files (".NAME.tmpNNN",
// internal/atomicfile) that an interrupted write of the outputs of outBase
// (outBase.csv, outBase-p2.json, outBase-overlay.png, …) left in its
// folder. Only names of exactly that form are touched, so the temporary
// files of other inputs ("outBase-b.csv") are left alone; errors are
// ignored (a leftover is hidden and never read).
func removeStaleTemps(outBase string) {
	dir, stem := filepath.Split(outBase)
	if dir == "" {
		dir = "."
	}
	ents, err := os.ReadDir(dir)
	if err != nil {
		return
	}
	re := regexp.MustCompile(`^\.` + regexp.QuoteMeta(stem) + `(-p[0-9]+)?(-overlay)?\.[A-Za-z0-9]+\.tmp[0-9]*$`)
	for _, d := range ents {
		if !d.IsDir() && re.MatchString(d.Name()) {
			os.Remove(filepath.Join(dir, d.Name()))
		}
	}
}

// safeProcess calls process, turning a panic (a bug) into an internal
// error of this input so that the rest of the archive still runs.
func safeProcess(ctx context.Context, process fileProcessor, in, outBase string) (res fileResult, err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("%s: internal error (a bug, please report it): %v", filepath.Base(in), r)
		}
	}()
	return process(ctx, in, outBase)
}

// outputBases maps each input's relative path to its output base, unique
// across the whole input set. The base is the relative path without its
// extension; where two inputs of one folder share that stem, each gets its
// extension added ("scan_png", "scan_jpg"). A base that would still write
// another input's files (compared without regard to case, since many file
// systems ignore it) gets a number added ("scan_png_2"): besides base.*,
// an input writes base-pN.* (later pages) and base-overlay.*, so base "a"
// and base "a-p2" or "a-overlay" clash too. Inputs whose plain stem is
// free keep it; the others are named in the order of their relative
// paths. The result depends only on the set of inputs, not on --shard or
// on the order in which workers take them.
func outputBases(in []catalog.Input) map[string]string {
	rels := make([]string, len(in))
	for i, x := range in {
		rels[i] = x.Rel
	}
	sort.Strings(rels)
	stem := func(rel string) string { return strings.TrimSuffix(rel, path.Ext(rel)) }
	n := make(map[string]int)
	for _, rel := range rels {
		n[strings.ToLower(stem(rel))]++
	}
	t := baseTaker{taken: make(map[string]bool), prefixes: make(map[string]bool)}
	out := make(map[string]string, len(in))
	// First the inputs that keep their plain stem, then the rest.
	for _, plain := range []bool{true, false} {
		for _, rel := range rels {
			s := stem(rel)
			if (n[strings.ToLower(s)] == 1) != plain {
				continue
			}
			ext := strings.ToLower(strings.TrimPrefix(path.Ext(rel), "."))
			var cands []string
			switch {
			case ext == "":
				cands = []string{s}
			case plain:
				cands = []string{s, s + "_" + ext}
			default:
				cands = []string{s + "_" + ext}
			}
			base := ""
			for _, c := range cands {
				if !t.clash(c) {
					base = c
					break
				}
			}
			for k := 2; base == ""; k++ {
				if c := fmt.Sprintf("%s_%d", cands[len(cands)-1], k); !t.clash(c) {
					base = c
				}
			}
			t.take(base)
			out[rel] = base
		}
	}
	return out
}

// baseTaker tracks the output bases already given out.
type baseTaker struct {
	taken    map[string]bool // bases given out, lower case
	prefixes map[string]bool // every base given out and the bases it derives from
}

// owners returns the bases whose files could include the files of base b
// (lower case): b itself and, when b ends in -overlay, -pN or
// -pN-overlay, the base before that suffix.
func owners(b string) []string {
	o := []string{b}
	s := strings.TrimSuffix(b, "-overlay")
	if s != b {
		o = append(o, s)
	}
	if i := strings.LastIndex(s, "-p"); i >= 0 && i+2 < len(s) && strings.Trim(s[i+2:], "0123456789") == "" {
		o = append(o, s[:i])
	}
	return o
}

// clash reports whether base c would write a file name another base
// given out may write.
func (t *baseTaker) clash(c string) bool {
	c = strings.ToLower(c)
	if t.prefixes[c] {
		return true // c is taken, or a taken base is c-pN, c-overlay, …
	}
	for _, o := range owners(c) {
		if t.taken[o] {
			return true
		}
	}
	return false
}

func (t *baseTaker) take(b string) {
	b = strings.ToLower(b)
	t.taken[b] = true
	for _, o := range owners(b) {
		t.prefixes[o] = true
	}
}

// errorClass names the class of err for the catalogue.
func errorClass(err error) string {
	switch ExitCode(err) {
	case ExitUnreadable:
		return "unreadable"
	case ExitNoECG:
		return "no-ecg"
	case ExitPartial:
		return "partial"
	case ExitOutput:
		return "output"
	case ExitUsage:
		return "usage"
	default:
		return "internal"
	}
}

func oneLine(err error) string { return strings.ReplaceAll(err.Error(), "\n", "; ") }

func logLine(e catalog.Entry) string {
	switch e.Status {
	case catalog.StatusFailed:
		return fmt.Sprintf("failed  %s: %s", e.Path, e.Error)
	case catalog.StatusPartial:
		return fmt.Sprintf("partial %s: %d page(s), %d leads, %s; %s", e.Path, e.Pages, len(e.Leads), fmtHR(e.HeartBPM), e.Error)
	}
	return fmt.Sprintf("ok      %s: %d page(s), %d leads, %s, %.1f s", e.Path, e.Pages, len(e.Leads), fmtHR(e.HeartBPM), e.Seconds)
}

func fmtHR(v float64) string {
	if math.IsNaN(v) {
		return "HR ?"
	}
	return fmt.Sprintf("HR %.0f/min", v)
}

func printBatchSummary(w io.Writer, st batchStats, catPath, csvPath string) {
	rate := 0.0
	if s := st.Elapsed.Seconds(); s > 0 {
		rate = float64(st.Pages) / s
	}
	skipped := fmt.Sprintf("%d skipped (already done)", st.Skipped)
	if st.SkippedFailed > 0 {
		skipped = fmt.Sprintf("%d skipped (%d already done, %d failed before with the same content and options)",
			st.Skipped, st.Skipped-st.SkippedFailed, st.SkippedFailed)
	}
	fmt.Fprintf(w, "batch: %d inputs: %d done, %d partial, %d failed, %s; %d pages in %s (%.2f pages/s)\n",
		st.Total, st.Done, st.Partial, st.Failed, skipped, st.Pages, st.Elapsed.Round(time.Millisecond), rate)
	for _, e := range st.FailedBefore {
		fmt.Fprintf(w, "  not retried %s: %s\n", e.Path, e.Error)
	}
	if st.SkippedFailed > 0 {
		if more := st.SkippedFailed - len(st.FailedBefore); more > 0 {
			fmt.Fprintf(w, "  … and %d more (see the catalogue)\n", more)
		}
		fmt.Fprintln(w, "  (--retry-failed tries them again)")
	}
	fmt.Fprintf(w, "catalogue: %s (CSV copy: %s)\n", catPath, csvPath)
	fmt.Fprintln(w, caution)
}

// progress draws a one-line progress bar with rate and ETA on a terminal;
// elsewhere it draws nothing (callers log one line per input instead).
type progress struct {
	w     io.Writer
	on    bool
	total int
	last  time.Time
	drawn bool
}

func newProgress(w io.Writer, on bool, total int) *progress {
	return &progress{w: w, on: on, total: total}
}

func (p *progress) update(st batchStats, elapsed time.Duration) {
	if !p.on {
		return
	}
	now := time.Now()
	n := st.Done + st.Partial + st.Failed + st.Skipped
	if n < p.total && now.Sub(p.last) < 150*time.Millisecond {
		return
	}
	p.last = now
	fmt.Fprint(p.w, "\r\x1b[K"+progressLine(n, p.total, st, elapsed))
	p.drawn = true
}

// above prints a line above the bar and forces the bar to be redrawn.
func (p *progress) above(line string) {
	if !p.on {
		return
	}
	fmt.Fprint(p.w, "\r\x1b[K"+line+"\n")
	p.last = time.Time{}
}

func (p *progress) finish() {
	if p.on && p.drawn {
		fmt.Fprintln(p.w)
	}
}

// progressLine renders "[#####.....] 120/400 30%  2.4 pages/s  ETA 1m57s  3 failed".
// The rate counts only inputs actually processed (not skipped ones).
func progressLine(n, total int, st batchStats, elapsed time.Duration) string {
	const width = 24
	frac := 1.0
	if total > 0 {
		frac = float64(n) / float64(total)
	}
	fill := int(math.Round(frac * width))
	bar := strings.Repeat("#", fill) + strings.Repeat(".", width-fill)
	worked := st.Done + st.Partial + st.Failed
	s := fmt.Sprintf("[%s] %d/%d %3.0f%%", bar, n, total, 100*frac)
	if sec := elapsed.Seconds(); sec > 0 && worked > 0 {
		s += fmt.Sprintf("  %.2f pages/s", float64(st.Pages)/sec)
		perInput := sec / float64(worked)
		eta := time.Duration(perInput * float64(total-n) * float64(time.Second))
		s += "  ETA " + eta.Round(time.Second).String()
	}
	if st.Failed > 0 {
		s += fmt.Sprintf("  %d failed", st.Failed)
	}
	return s
}

func newBatchMergeCmd(ios *IOStreams) *cobra.Command {
	var out string
	cmd := &cobra.Command{
		Use:   "merge -o OUT.sqlite CATALOG.sqlite...",
		Short: "Merge the catalogues of several shards into one",
		Long: `merge copies every row of the given catalogues into OUT (created if
missing). Where two catalogues hold the same input path, a row of an input
still in flight (started) never replaces a completed one (done, partial or
failed), a completed row always replaces a started one, and otherwise the
row finished later wins. The given catalogues are only read, never changed
(older schema versions too). A CSV copy is written next to OUT.`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if out == "" {
				return flagErrorf("batch merge: the output catalogue is required (-o OUT.sqlite)")
			}
			ctx := cmd.Context()
			if ctx == nil {
				ctx = context.Background()
			}
			for _, a := range args {
				if _, err := os.Stat(a); err != nil {
					return fmt.Errorf("batch merge: %s: %w: %v", a, ecg.ErrUnreadable, err)
				}
			}
			db, err := catalog.Open(out)
			if err != nil {
				return fmt.Errorf("batch merge: %w", err)
			}
			defer db.Close()
			for _, a := range args {
				n, err := db.Merge(ctx, a)
				if err != nil {
					return fmt.Errorf("batch merge: %w", err)
				}
				fmt.Fprintf(ios.Out, "merged %d rows from %s\n", n, a)
			}
			csvPath := strings.TrimSuffix(out, filepath.Ext(out)) + ".csv"
			if err := atomicfile.WriteFile(csvPath, func(w io.Writer) error { return db.WriteCSV(ctx, w) }); err != nil {
				return fmt.Errorf("batch merge: %w", err)
			}
			counts, err := db.Counts(ctx)
			if err != nil {
				return fmt.Errorf("batch merge: %w", err)
			}
			fmt.Fprintf(ios.Out, "%s: %d done, %d partial, %d failed, %d started but not finished (CSV copy: %s)\n", out,
				counts[catalog.StatusDone], counts[catalog.StatusPartial], counts[catalog.StatusFailed],
				counts[catalog.StatusStarted], csvPath)
			return nil
		},
	}
	cmd.Flags().StringVarP(&out, "out", "o", "", "merged catalogue to create or update")
	return cmd
}

func newBatchExportCmd(ios *IOStreams) *cobra.Command {
	var out string
	cmd := &cobra.Command{
		Use:   "export CATALOG.sqlite [-o OUT.csv]",
		Short: "Write a catalogue as CSV (to standard output without -o)",
		Args:  cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			ctx := cmd.Context()
			if ctx == nil {
				ctx = context.Background()
			}
			if _, err := os.Stat(args[0]); err != nil {
				return fmt.Errorf("batch export: %s: %w: %v", args[0], ecg.ErrUnreadable, err)
			}
			db, err := catalog.OpenReadOnly(args[0])
			if err != nil {
				return fmt.Errorf("batch export: %w", err)
			}
			defer db.Close()
			if out == "" || out == "-" {
				return db.WriteCSV(ctx, ios.Out)
			}
			if err := atomicfile.WriteFile(out, func(f io.Writer) error { return db.WriteCSV(ctx, f) }); err != nil {
				return fmt.Errorf("batch export: %w", err)
			}
			return nil
		},
	}
	cmd.Flags().StringVarP(&out, "out", "o", "", "CSV file to write (default: standard output)")
	return cmd
}
