package cli

import (
	"bytes"
	"context"
	"database/sql"
	"fmt"
	"image/jpeg"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"sort"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"github.com/spf13/cobra"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/accuracy"
	"tracelift/catalog"
	"tracelift/ecg"
	"tracelift/internal/atomicfile"
)

// fakeProcess stands in for the pipeline: files whose content starts with
// "bad" are unreadable, "blank" hold no ECG, "partial" lose some leads;
// anything else "digitises" into outBase.csv.
func fakeProcess(calls *atomic.Int32) fileProcessor {
	return func(ctx context.Context, in, outBase string) (fileResult, error) {
		calls.Add(1)
		b, err := os.ReadFile(in)
		if err != nil {
			return fileResult{}, fmt.Errorf("%s: %w: %v", in, ecg.ErrUnreadable, err)
		}
		s := string(b)
		switch {
		case strings.HasPrefix(s, "bad"):
			return fileResult{}, fmt.Errorf("%s: %w: not a PNG file", filepath.Base(in), ecg.ErrUnreadable)
		case strings.HasPrefix(s, "crash"):
			panic("index out of range")
		case strings.HasPrefix(s, "blank"):
			return fileResult{}, fmt.Errorf("%s: %w: blank page", filepath.Base(in), ecg.ErrNoECG)
		}
		out := outBase + ".csv"
		if err := atomicfile.WriteFile(out, func(f io.Writer) error {
			_, err := io.WriteString(f, "time_s,I\n0,0.1\n")
			return err
		}); err != nil {
			return fileResult{}, err
		}
		sum := unknownSummary()
		sum.Leads, sum.HR, sum.QRS = []string{"I", "II"}, 72, 90
		res := fileResult{Pages: 1, Outputs: []string{out}, First: sum}
		if strings.HasPrefix(s, "partial") {
			return res, fmt.Errorf("%s: %w: 10 leads unreadable", filepath.Base(in), ecg.ErrPartial)
		}
		return res, nil
	}
}

func writeTree(t *testing.T, root string, files map[string]string) {
	t.Helper()
	for rel, content := range files {
		p := filepath.Join(root, filepath.FromSlash(rel))
		require.NoError(t, os.MkdirAll(filepath.Dir(p), 0o755))
		require.NoError(t, os.WriteFile(p, []byte(content), 0o644))
	}
}

func testIOS() (*IOStreams, *bytes.Buffer, *bytes.Buffer) {
	out, errOut := &bytes.Buffer{}, &bytes.Buffer{}
	return &IOStreams{In: strings.NewReader(""), Out: out, ErrOut: errOut}, out, errOut
}

func catalogRows(t *testing.T, p string) map[string]catalog.Entry {
	t.Helper()
	db, err := catalog.Open(p)
	require.NoError(t, err)
	defer db.Close()
	all, err := db.All(context.Background())
	require.NoError(t, err)
	m := make(map[string]catalog.Entry)
	for _, e := range all {
		m[e.Path] = e
	}
	return m
}

func TestBatchBadFilesDoNotStopTheRun(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	writeTree(t, in, map[string]string{
		"ward1/a.png":      "good a",
		"ward1/b.jpg":      "bad b",
		"ward2/deep/c.png": "good c",
		"ward2/d.png":      "blank d",
		"e.tif":            "partial e",
		"f.png":            "crash f",
		"readme.txt":       "not an image",
	})
	ios, stdout, stderr := testIOS()
	var calls atomic.Int32
	opts := &batchOptions{InputDir: in, OutDir: out, Workers: 2, process: fakeProcess(&calls)}
	err := runBatch(context.Background(), ios, opts)
	require.Error(t, err)
	assert.Equal(t, ExitPartial, ExitCode(err), "a batch with failures ends with the partial-result code: %v", err)
	assert.EqualValues(t, 6, calls.Load())

	rows := catalogRows(t, filepath.Join(out, "catalog.sqlite"))
	require.Len(t, rows, 6)
	assert.Equal(t, "internal", rows["f.png"].Class, "a panic is caught and catalogued")
	assert.Equal(t, catalog.StatusDone, rows["ward1/a.png"].Status)
	assert.Equal(t, []string{"ward1/a.csv"}, rows["ward1/a.png"].Outputs)
	assert.Equal(t, 72.0, rows["ward1/a.png"].HeartBPM)
	assert.Len(t, rows["ward1/a.png"].SHA256, 64)
	assert.Equal(t, catalog.StatusFailed, rows["ward1/b.jpg"].Status)
	assert.Equal(t, "unreadable", rows["ward1/b.jpg"].Class)
	assert.Contains(t, rows["ward1/b.jpg"].Error, "not a PNG file")
	assert.Equal(t, "no-ecg", rows["ward2/d.png"].Class)
	assert.Equal(t, catalog.StatusPartial, rows["e.tif"].Status)

	// Outputs mirror the input tree.
	assert.FileExists(t, filepath.Join(out, "ward2", "deep", "c.csv"))
	assert.FileExists(t, filepath.Join(out, "catalog.csv"))
	csv, _ := os.ReadFile(filepath.Join(out, "catalog.csv"))
	assert.Equal(t, 7, strings.Count(string(csv), "\n"), "header plus one row per input")
	assert.Contains(t, stdout.String(), "2 done, 1 partial, 3 failed, 0 skipped")
	assert.Contains(t, stdout.String(), "Caution")
	assert.Contains(t, stderr.String(), "failed  ward1/b.jpg")

	// Rerun: finished inputs are skipped, and so are the corrupt and the
	// blank file (same bytes, same options: they would fail the same way),
	// with their reasons in the summary; the crash (a bug) is tried again.
	calls.Store(0)
	ios, stdout, _ = testIOS()
	err = runBatch(context.Background(), ios, opts)
	assert.Equal(t, ExitPartial, ExitCode(err), "failures of an earlier run still make the archive partial: %v", err)
	assert.EqualValues(t, 1, calls.Load(), "only the crashed input is tried again")
	assert.Contains(t, stdout.String(), "0 done, 0 partial, 1 failed, 5 skipped (3 already done, 2 failed before with the same content and options)")
	assert.Contains(t, stdout.String(), "not retried ward1/b.jpg: b.jpg: unreadable input: not a PNG file")
	assert.Contains(t, stdout.String(), "not retried ward2/d.png: d.png: no ECG found: blank page")
	assert.Contains(t, stdout.String(), "--retry-failed")
	assert.Contains(t, err.Error(), "1 of 6 inputs failed (and 2 failed in an earlier run, not retried)")

	// --retry-failed tries the failed inputs (and only them) again.
	calls.Store(0)
	ios, stdout, _ = testIOS()
	retry := *opts
	retry.RetryFailed = true
	_ = runBatch(context.Background(), ios, &retry)
	assert.EqualValues(t, 3, calls.Load())
	assert.Contains(t, stdout.String(), "3 failed, 3 skipped (already done)")

	// Options that shape the result redo everything, failed or not.
	calls.Store(0)
	ios, _, _ = testIOS()
	other := *opts
	other.Pipe.RateHz = 250
	_ = runBatch(context.Background(), ios, &other)
	assert.EqualValues(t, 6, calls.Load(), "every input is redone at another sample rate")
	assert.Equal(t, optionsFingerprint(&other.Pipe), catalogRows(t, filepath.Join(out, "catalog.sqlite"))["ward1/b.jpg"].Options)

	// -j, --quiet and --shard do not change results: nothing is redone.
	calls.Store(0)
	ios, _, _ = testIOS()
	same := other
	same.Workers, same.Quiet = 1, true
	_ = runBatch(context.Background(), ios, &same)
	assert.EqualValues(t, 1, calls.Load(), "only the crash again")

	// A changed input is redone even though it had finished, and a
	// corrupt file that was replaced by a good one is read again.
	writeTree(t, in, map[string]string{"ward1/a.png": "good a, rescanned", "ward1/b.jpg": "good b, rescanned"})
	calls.Store(0)
	ios, _, _ = testIOS()
	_ = runBatch(context.Background(), ios, &other)
	assert.EqualValues(t, 3, calls.Load())
	assert.Equal(t, catalog.StatusDone, catalogRows(t, filepath.Join(out, "catalog.sqlite"))["ward1/b.jpg"].Status)
}

func TestBatchShardsAndMerge(t *testing.T) {
	in, base := t.TempDir(), t.TempDir()
	files := map[string]string{}
	for i := range 12 {
		files[fmt.Sprintf("box%d/scan%02d.png", i%3, i)] = "good"
	}
	writeTree(t, in, files)
	var calls atomic.Int32
	var cats []string
	for k := 1; k <= 3; k++ {
		out := filepath.Join(base, fmt.Sprintf("part%d", k))
		ios, _, _ := testIOS()
		opts := &batchOptions{InputDir: in, OutDir: out, Workers: 2, Shard: catalog.Shard{K: k, N: 3}, process: fakeProcess(&calls)}
		require.NoError(t, runBatch(context.Background(), ios, opts))
		cats = append(cats, filepath.Join(out, "catalog.sqlite"))
	}
	assert.EqualValues(t, 12, calls.Load(), "the shards together process every input exactly once")

	merged := filepath.Join(base, "all.sqlite")
	var stdout, stderr bytes.Buffer
	code := Main(append([]string{"batch", "merge", "-o", merged}, cats...), strings.NewReader(""), &stdout, &stderr)
	require.Equal(t, ExitOK, code, stderr.String())
	rows := catalogRows(t, merged)
	assert.Len(t, rows, 12)
	assert.FileExists(t, filepath.Join(base, "all.csv"))

	stdout.Reset()
	code = Main([]string{"batch", "export", merged}, strings.NewReader(""), &stdout, &stderr)
	require.Equal(t, ExitOK, code, stderr.String())
	assert.Equal(t, 13, strings.Count(stdout.String(), "\n"))
	assert.True(t, strings.HasPrefix(stdout.String(), strings.Join(catalog.Columns, ",")))
}

// checkConsistent verifies what a stopped batch must leave in out: every
// catalogued done input has all its outputs, complete (want), under their
// final names; every final-named CSV is complete; no temporary file
// remains unless temps is true. It returns the rows.
func checkConsistent(t *testing.T, out string, want string, temps bool) map[string]catalog.Entry {
	t.Helper()
	rows := catalogRows(t, filepath.Join(out, "catalog.sqlite"))
	for rel, e := range rows {
		switch e.Status {
		case catalog.StatusDone:
			require.NotEmpty(t, e.Outputs, rel)
			for _, o := range e.Outputs {
				b, err := os.ReadFile(filepath.Join(out, filepath.FromSlash(o)))
				require.NoError(t, err, "output of a finished input is missing: %s", o)
				assert.Equal(t, want, string(b), "output %s is incomplete", o)
			}
		case catalog.StatusStarted:
			assert.Empty(t, e.Outputs, rel)
		default:
			t.Errorf("%s: unexpected status %s", rel, e.Status)
		}
	}
	err := filepath.WalkDir(out, func(p string, d os.DirEntry, err error) error {
		require.NoError(t, err)
		switch {
		case strings.Contains(d.Name(), ".tmp"):
			assert.True(t, temps, "temporary file left: %s", p)
		case strings.HasSuffix(p, ".csv") && d.Name() != "catalog.csv":
			b, err := os.ReadFile(p)
			require.NoError(t, err)
			assert.Equal(t, want, string(b), "half-written output under its final name: %s", p)
		}
		return nil
	})
	require.NoError(t, err)
	return rows
}

const fakeCSV = "time_s,I\n0,0.1\n"

func TestBatchInterruptKeepsFinishedWork(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	files := map[string]string{}
	for i := range 20 {
		files[fmt.Sprintf("s%02d.png", i)] = "good"
	}
	writeTree(t, in, files)
	ctx, cancel := context.WithCancel(context.Background())
	var calls, seen atomic.Int32
	inner := fakeProcess(&calls)
	proc := func(c context.Context, p, o string) (fileResult, error) {
		switch seen.Add(1) {
		case 5:
			// Completes just as the run is stopped (once the sixth input
			// is in flight on the other worker): recorded, not thrown
			// away.
			for t0 := time.Now(); seen.Load() < 6 && time.Since(t0) < 10*time.Second; {
				time.Sleep(time.Millisecond)
			}
			defer cancel()
		case 6:
			// Interrupted in flight: the pipeline returns the context's
			// error and writes nothing.
			<-c.Done()
			return fileResult{}, c.Err()
		}
		return inner(c, p, o)
	}
	ios, _, _ := testIOS()
	err := runBatch(ctx, ios, &batchOptions{InputDir: in, OutDir: out, Workers: 2, process: proc})
	require.Error(t, err)
	assert.Equal(t, ExitInterrupted, ExitCode(err))
	// The message says what happened and what to do, not the context's
	// own "context canceled".
	assert.Contains(t, err.Error(), "batch: interrupted after 5 of 20 inputs")
	assert.Contains(t, err.Error(), "rerun the same command to resume")
	assert.NotContains(t, err.Error(), "context canceled")
	rows := checkConsistent(t, out, fakeCSV, false)
	var done, started []string
	for rel, e := range rows {
		switch e.Status {
		case catalog.StatusDone:
			done = append(done, rel)
		case catalog.StatusStarted:
			started = append(started, rel)
		}
	}
	assert.Len(t, done, 5, "inputs finished before the interruption are catalogued")
	assert.Len(t, started, 1, "the input in flight is marked started")

	// Resuming finishes the rest, redoing the started ones but none of
	// the finished.
	calls.Store(0)
	ios, _, stderr := testIOS()
	require.NoError(t, runBatch(context.Background(), ios, &batchOptions{InputDir: in, OutDir: out, Workers: 2, process: inner}))
	assert.EqualValues(t, 15, calls.Load())
	assert.Contains(t, stderr.String(), "redone  "+started[0]+": it was in flight when an earlier run stopped")
	rows = checkConsistent(t, out, fakeCSV, false)
	assert.Len(t, rows, 20)
	for rel, e := range rows {
		assert.Equal(t, catalog.StatusDone, e.Status, rel)
	}
}

// TestBatchKilledProcess kills (SIGKILL: no clean-up code runs) a batch
// in a child process while files are being written, then checks that the
// catalogue opens and agrees with the outputs, that no output is
// half-written under its final name, and that a rerun completes the
// archive and removes the leftover temporary files.
func TestBatchKilledProcess(t *testing.T) {
	if dir := os.Getenv("TRACELIFT_TEST_KILL_CHILD"); dir != "" {
		killChild(t, dir)
		return
	}
	if testing.Short() {
		t.Skip("starts a child process")
	}
	base := t.TempDir()
	in, out := filepath.Join(base, "in"), filepath.Join(base, "out")
	files := map[string]string{}
	for i := range 24 {
		files[fmt.Sprintf("w%d/s%02d.png", i%2, i)] = "good"
	}
	writeTree(t, in, files)
	cmd := exec.Command(os.Args[0], "-test.run=^TestBatchKilledProcess$")
	cmd.Env = append(os.Environ(), "TRACELIFT_TEST_KILL_CHILD="+base)
	require.NoError(t, cmd.Start())
	// Kill once a few inputs are finished, at an arbitrary moment inside
	// the writing of others.
	deadline := time.Now().Add(30 * time.Second)
	for {
		n := 0
		for _, w := range []string{"w0", "w1"} {
			ents, _ := os.ReadDir(filepath.Join(out, w))
			for _, e := range ents {
				if strings.HasSuffix(e.Name(), ".csv") && !strings.HasPrefix(e.Name(), ".") {
					n++
				}
			}
		}
		if n >= 4 {
			break
		}
		if time.Now().After(deadline) {
			cmd.Process.Kill()
			t.Fatal("the child batch did not get going")
		}
		time.Sleep(5 * time.Millisecond)
	}
	time.Sleep(37 * time.Millisecond)
	require.NoError(t, cmd.Process.Kill())
	_ = cmd.Wait()

	want := slowCSV()
	rows := checkConsistent(t, out, want, true)
	done := 0
	for _, e := range rows {
		if e.Status == catalog.StatusDone {
			done++
		}
	}
	var temps []string
	filepath.WalkDir(out, func(p string, d os.DirEntry, err error) error {
		if err == nil && strings.Contains(d.Name(), ".tmp") {
			temps = append(temps, d.Name())
		}
		return nil
	})
	t.Logf("killed with %d of 24 inputs done; temporary files left: %v", done, temps)
	assert.Less(t, done, 24, "killed before the end")
	assert.GreaterOrEqual(t, done, 3)

	var calls atomic.Int32
	ios, _, _ := testIOS()
	require.NoError(t, runBatch(context.Background(), ios, &batchOptions{InputDir: in, OutDir: out, Workers: 2, process: slowProcess(&calls, 0)}))
	assert.EqualValues(t, 24-done, calls.Load(), "the rerun redoes exactly the unfinished inputs")
	rows = checkConsistent(t, out, want, false)
	assert.Len(t, rows, 24)
}

// slowCSV is the output of slowProcess: 64 lines of 1 kB.
func slowCSV() string {
	var b strings.Builder
	for i := range 64 {
		fmt.Fprintf(&b, "%04d,%s\n", i, strings.Repeat("x", 1018))
	}
	return b.String()
}

// slowProcess writes slowCSV to outBase.csv through atomicfile, pausing
// between lines so that a kill lands inside a write.
func slowProcess(calls *atomic.Int32, pause time.Duration) fileProcessor {
	want := slowCSV()
	return func(ctx context.Context, in, outBase string) (fileResult, error) {
		calls.Add(1)
		out := outBase + ".csv"
		err := atomicfile.WriteFile(out, func(w io.Writer) error {
			for _, line := range strings.SplitAfter(want, "\n") {
				if _, err := io.WriteString(w, line); err != nil {
					return err
				}
				if f, ok := w.(interface{ Flush() error }); ok {
					f.Flush()
				}
				time.Sleep(pause)
			}
			return nil
		})
		if err != nil {
			return fileResult{}, err
		}
		return fileResult{Pages: 1, Outputs: []string{out}, First: unknownSummary()}, nil
	}
}

// killChild is the batch run that TestBatchKilledProcess kills.
func killChild(t *testing.T, base string) {
	var calls atomic.Int32
	ios, _, _ := testIOS()
	_ = runBatch(context.Background(), ios, &batchOptions{InputDir: filepath.Join(base, "in"),
		OutDir: filepath.Join(base, "out"), Workers: 2, process: slowProcess(&calls, time.Millisecond)})
	t.Error("the child batch was not killed")
}

func TestRemoveStaleTemps(t *testing.T) {
	dir := t.TempDir()
	names := []string{
		"a.csv", ".a.csv.tmp123", ".a-p2.json.tmp9", ".a-overlay.png.tmp44", // a's
		".a-b.csv.tmp5", ".ab.csv.tmp6", ".a.csv", "a.csv.tmp7", // not a's temporary files
	}
	for _, n := range names {
		require.NoError(t, os.WriteFile(filepath.Join(dir, n), nil, 0o644))
	}
	removeStaleTemps(filepath.Join(dir, "a"))
	var left []string
	ents, _ := os.ReadDir(dir)
	for _, e := range ents {
		left = append(left, e.Name())
	}
	assert.ElementsMatch(t, []string{"a.csv", ".a-b.csv.tmp5", ".ab.csv.tmp6", ".a.csv", "a.csv.tmp7"}, left)
}

func TestBatchOutputUnwritable(t *testing.T) {
	in := t.TempDir()
	writeTree(t, in, map[string]string{"a.png": "good"})
	blocker := filepath.Join(t.TempDir(), "file")
	require.NoError(t, os.WriteFile(blocker, nil, 0o644))
	ios, _, _ := testIOS()
	var calls atomic.Int32
	err := runBatch(context.Background(), ios, &batchOptions{InputDir: in, OutDir: filepath.Join(blocker, "out"), Workers: 1, process: fakeProcess(&calls)})
	require.Error(t, err)
	assert.Equal(t, ExitOutput, ExitCode(err), err.Error())
	assert.EqualValues(t, 0, calls.Load())
}

func TestBatchMissingInput(t *testing.T) {
	var stdout, stderr bytes.Buffer
	code := Main([]string{"batch", filepath.Join(t.TempDir(), "nope"), "-o", t.TempDir()}, strings.NewReader(""), &stdout, &stderr)
	assert.Equal(t, ExitUnreadable, code)
	assert.Equal(t, 1, strings.Count(stderr.String(), "\n"), stderr.String())
}

func TestBatchStemCollision(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	writeTree(t, in, map[string]string{"x/a.png": "good", "x/a.jpg": "good", "x/b.png": "good"})
	ios, _, _ := testIOS()
	var calls atomic.Int32
	require.NoError(t, runBatch(context.Background(), ios, &batchOptions{InputDir: in, OutDir: out, Workers: 2, process: fakeProcess(&calls)}))
	var names []string
	ents, _ := os.ReadDir(filepath.Join(out, "x"))
	for _, e := range ents {
		names = append(names, e.Name())
	}
	sort.Strings(names)
	assert.Equal(t, []string{"a_jpg.csv", "a_png.csv", "b.csv"}, names)
}

func TestBatchFlags(t *testing.T) {
	for _, tc := range []struct {
		name  string
		args  []string
		code  int
		check func(t *testing.T, o *batchOptions)
	}{
		{"defaults", []string{"in", "-o", "out"}, ExitOK, func(t *testing.T, o *batchOptions) {
			assert.Equal(t, "in", o.InputDir)
			assert.GreaterOrEqual(t, o.Workers, 1)
			assert.Equal(t, []string{"csv", "json"}, o.Pipe.Formats)
			assert.Equal(t, 500.0, o.Pipe.RateHz)
		}},
		{"shard and jobs", []string{"in", "-o", "out", "-j", "3", "--shard", "2/5", "--format", "edf,csv"}, ExitOK, func(t *testing.T, o *batchOptions) {
			assert.Equal(t, 3, o.Workers)
			assert.Equal(t, catalog.Shard{K: 2, N: 5}, o.Shard)
			assert.Equal(t, []string{"csv", "json", "edf"}, o.Pipe.Formats)
		}},
		{"retry and memory", []string{"in", "-o", "out", "--retry-failed", "--max-memory", "900"}, ExitOK, func(t *testing.T, o *batchOptions) {
			assert.True(t, o.RetryFailed)
			assert.Equal(t, 900, o.MaxMemoryMB)
		}},
		{"negative memory", []string{"in", "-o", "o", "--max-memory", "-1"}, ExitUsage, nil},
		{"no output", []string{"in"}, ExitUsage, nil},
		{"bad shard", []string{"in", "-o", "o", "--shard", "6/5"}, ExitUsage, nil},
		{"zero jobs", []string{"in", "-o", "o", "-j", "0"}, ExitUsage, nil},
		{"bad format", []string{"in", "-o", "o", "--format", "docx"}, ExitUsage, nil},
		{"bad speed", []string{"in", "-o", "o", "--speed", "-25"}, ExitUsage, nil},
		{"two inputs", []string{"a", "b", "-o", "o"}, ExitUsage, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ios, _, _ := testIOS()
			var got *batchOptions
			cmd := newBatchCmd(ios, func(o *batchOptions) error { got = o; return nil })
			cmd.SetArgs(tc.args)
			cmd.SetOut(ios.Out)
			cmd.SetErr(ios.ErrOut)
			cmd.SilenceUsage, cmd.SilenceErrors = true, true
			cmd.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return &FlagError{Err: err} })
			err := cmd.Execute()
			require.Equal(t, tc.code, ExitCode(err), "%v", err)
			if tc.check != nil {
				tc.check(t, got)
			}
		})
	}
}

func TestRuntimeLimitsRestore(t *testing.T) {
	t.Setenv("GOGC", "")
	os.Unsetenv("GOGC") // restored by t.Setenv's clean-up
	procs := runtime.GOMAXPROCS(0)
	mem := debug.SetMemoryLimit(-1)
	gc := debug.SetGCPercent(100)
	defer debug.SetGCPercent(gc)
	restore := runtimeLimits(1, 123)
	assert.Equal(t, 1, runtime.GOMAXPROCS(0), "-j 1 runs on one core")
	assert.Equal(t, int64(123)<<20, debug.SetMemoryLimit(-1))
	assert.Equal(t, 300, debug.SetGCPercent(300), "the default GOGC is raised for batch")
	restore()
	assert.Equal(t, procs, runtime.GOMAXPROCS(0))
	assert.Equal(t, mem, debug.SetMemoryLimit(-1))
	assert.Equal(t, 100, debug.SetGCPercent(100))

	t.Setenv("GOGC", "50")
	debug.SetGCPercent(50) // as the runtime does at start-up with GOGC=50
	restore = runtimeLimits(1, 0)
	assert.Equal(t, 50, debug.SetGCPercent(50), "a GOGC chosen by the user is kept")
	restore()

	// GOGC=100 set explicitly is a choice too, though it is the default.
	t.Setenv("GOGC", "100")
	debug.SetGCPercent(100)
	restore = runtimeLimits(1, 0)
	assert.Equal(t, 100, debug.SetGCPercent(100), "GOGC=100 set by the user is kept")
	restore()
	debug.SetGCPercent(100)

	restore = runtimeLimits(procs+4, 0)
	assert.Equal(t, procs, runtime.GOMAXPROCS(0), "more workers than cores leave GOMAXPROCS alone")
	assert.Equal(t, mem, debug.SetMemoryLimit(-1), "no limit asked, none set")
	restore()
}

func TestProgressLine(t *testing.T) {
	st := batchStats{Total: 400, Done: 100, Failed: 3, Skipped: 17, Pages: 103}
	s := progressLine(120, 400, st, 50*time.Second)
	// 103 pages in 50 s; 103 processed inputs took 50 s, so 280 more take ≈136 s.
	assert.Equal(t, "[#######.................] 120/400  30%  2.06 pages/s  ETA 2m16s  3 failed", s)
	assert.Equal(t, "[........................] 0/10   0%", progressLine(0, 10, batchStats{}, 0))
}

// benchArchive renders n synthetic 300-dpi A4 pages under the scan
// condition into a folder, alternating PNG (with its resolution) and
// JPEG (quality 90), as an archive of scans would hold them.
func benchArchive(b *testing.B, n int) string {
	b.Helper()
	dir := b.TempDir()
	layouts := []string{"3x4+1", "3x4", "6x2", "12x1", "rhythm", "3x4+3"}
	for i := range n {
		_, page, err := accuracy.RenderCase(accuracy.Case{Condition: "scan", Layout: layouts[i%len(layouts)], Seed: uint64(i + 1)})
		require.NoError(b, err)
		name := filepath.Join(dir, fmt.Sprintf("page%02d", i+1))
		if i%2 == 0 {
			err = atomicfile.WriteFile(name+".png", page.WritePNG)
		} else {
			err = atomicfile.WriteFile(name+".jpg", func(w io.Writer) error {
				return jpeg.Encode(w, page.Image, &jpeg.Options{Quality: 90})
			})
		}
		require.NoError(b, err)
	}
	return dir
}

// processCPU returns the CPU time (user + system) this process has used,
// from /proc/self/stat (Linux; clock ticks of 1/100 s, the Linux
// USER_HZ); ok is false elsewhere.
func processCPU() (seconds float64, ok bool) {
	b, err := os.ReadFile("/proc/self/stat")
	if err != nil {
		return 0, false
	}
	// Fields after the parenthesised command name: state is field 3,
	// utime 14 and stime 15.
	i := bytes.LastIndexByte(b, ')')
	if i < 0 {
		return 0, false
	}
	f := strings.Fields(string(b[i+1:]))
	if len(f) < 13 {
		return 0, false
	}
	var u, st float64
	if _, err := fmt.Sscan(f[11], &u); err != nil {
		return 0, false
	}
	if _, err := fmt.Sscan(f[12], &st); err != nil {
		return 0, false
	}
	return (u + st) / 100, true
}

// BenchmarkBatchWorkers runs the whole batch (scan, hash, catalogue, the
// real pipeline, CSV + JSON outputs) on 8 rendered pages with 1 and 2
// workers and reports pages/s; the target is j=2 ≥ 1.8 × j=1 on
// two cores. Run it on an otherwise idle machine:
//
//	go test ./internal/cli -run XXX -bench BatchWorkers -benchtime 2x
//
// It also reports the CPU seconds per page (Linux): on a machine shared
// with other work the wall clock says little (the scheduler shares the
// cores among sessions, not threads), but with W workers on W free cores
// the throughput is at most W / (CPU seconds per page).
func BenchmarkBatchWorkers(b *testing.B) {
	const pages = 8
	in := benchArchive(b, pages)
	for _, j := range []int{1, 2} {
		b.Run(fmt.Sprintf("j=%d", j), func(b *testing.B) {
			pf := pipelineFlags{Layout: "auto", RateHz: 500, MaxPixels: 200_000_000, formatArg: "csv,json"}
			require.NoError(b, pf.check("bench"))
			var total time.Duration
			cpu0, cpuOK := processCPU()
			for b.Loop() {
				out := b.TempDir()
				ios, _, _ := testIOS()
				t0 := time.Now()
				err := runBatch(context.Background(), ios, &batchOptions{InputDir: in, OutDir: out, Workers: j, Pipe: pf, Quiet: true})
				total += time.Since(t0)
				if err != nil && ExitCode(err) != ExitPartial {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(pages*b.N)/total.Seconds(), "pages/s")
			if cpu1, ok := processCPU(); ok && cpuOK {
				b.ReportMetric((cpu1-cpu0)/float64(pages*b.N), "cpu-s/page")
			}
		})
	}
}

// schemaV1 is the catalogue table before the options column (schema
// version 1), as older runs left it on disk.
const schemaV1 = `CREATE TABLE inputs (
	path TEXT PRIMARY KEY, sha256 TEXT NOT NULL, size_bytes INTEGER NOT NULL,
	status TEXT NOT NULL, error_class TEXT NOT NULL DEFAULT '', error TEXT NOT NULL DEFAULT '',
	outputs TEXT NOT NULL DEFAULT '', pages INTEGER NOT NULL DEFAULT 0,
	leads_found INTEGER NOT NULL DEFAULT 0, leads TEXT NOT NULL DEFAULT '',
	quality REAL, heart_rate_bpm REAL, pr_ms REAL, qrs_ms REAL, qt_ms REAL,
	qtc_bazett_ms REAL, seconds REAL, finished_utc TEXT NOT NULL)`

// TestBatchUpgradedCatalogueSeesNewOptions: rows of a catalogue written
// before options were recorded are redone once, and a later change of
// options (another --format) is then noticed.
func TestBatchUpgradedCatalogueSeesNewOptions(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	writeTree(t, in, map[string]string{"a.png": "good a", "b.png": "good b"})
	raw, err := sql.Open("sqlite", filepath.Join(out, catalog.FileName))
	require.NoError(t, err)
	_, err = raw.Exec(schemaV1)
	require.NoError(t, err)
	for _, rel := range []string{"a.png", "b.png"} {
		sum, err := catalog.HashFile(filepath.Join(in, rel))
		require.NoError(t, err)
		_, err = raw.Exec(`INSERT INTO inputs (path, sha256, size_bytes, status, outputs, finished_utc)
			VALUES (?, ?, 6, 'done', ?, '2026-01-02T03:04:05Z')`, rel, sum, strings.TrimSuffix(rel, ".png")+".csv")
		require.NoError(t, err)
	}
	require.NoError(t, raw.Close())

	var calls atomic.Int32
	opts := &batchOptions{InputDir: in, OutDir: out, Workers: 1, process: fakeProcess(&calls)}
	ios, _, _ := testIOS()
	require.NoError(t, runBatch(context.Background(), ios, opts))
	assert.EqualValues(t, 2, calls.Load(), "rows of unknown options are redone once")
	assert.Equal(t, optionsFingerprint(&opts.Pipe), catalogRows(t, filepath.Join(out, catalog.FileName))["a.png"].Options)

	calls.Store(0)
	ios, _, _ = testIOS()
	require.NoError(t, runBatch(context.Background(), ios, opts))
	assert.EqualValues(t, 0, calls.Load(), "then they resume as usual")

	calls.Store(0)
	ios, stdout, _ := testIOS()
	edf := *opts
	edf.Pipe.Formats = []string{"csv", "json", "edf"}
	require.NoError(t, runBatch(context.Background(), ios, &edf))
	assert.EqualValues(t, 2, calls.Load(), "another --format redoes every input")
	assert.Contains(t, stdout.String(), "2 done, 0 partial, 0 failed, 0 skipped")
}

// TestOutputBasesUnique: no two inputs may write the same file, whatever
// their names; the choice depends only on the set of inputs.
func TestOutputBasesUnique(t *testing.T) {
	rels := []string{
		"scan.png", "scan.jpg", "scan_png.bmp", "SCAN_JPG.tif",
		"a.pdf", "a-p2.png", "a-overlay.jpg", "b-p3-overlay.png", "b.pdf",
		"x/c.png", "x/C.PNG", "x/c_png.gif", "x/c_png_2.webp", "y/c.png",
	}
	in := make([]catalog.Input, len(rels))
	for i, r := range rels {
		in[i] = catalog.Input{Rel: r}
	}
	got := outputBases(in)
	require.Len(t, got, len(rels))
	// Plain stems that nothing else claims are kept.
	assert.Equal(t, "y/c", got["y/c.png"])
	assert.Equal(t, "x/c_png_2", got["x/c_png_2.webp"])
	// The files an input writes: base.EXT, base-pN.EXT, base-overlay.EXT,
	// base-pN-overlay.EXT. Expand each base into the names it may write
	// for pages 1–3 and require every name to belong to one input only
	// (case-insensitively).
	owner := map[string]string{}
	for rel, b := range got {
		b = strings.ToLower(b)
		names := []string{b, b + "-overlay"}
		for p := 2; p <= 3; p++ {
			names = append(names, fmt.Sprintf("%s-p%d", b, p), fmt.Sprintf("%s-p%d-overlay", b, p))
		}
		for _, n := range names {
			if o, ok := owner[n]; ok {
				t.Errorf("%s and %s both write %s.*", o, rel, n)
			}
			owner[n] = rel
		}
	}
	// The same set in another order gives the same names.
	rev := make([]catalog.Input, len(in))
	for i := range in {
		rev[i] = in[len(in)-1-i]
	}
	assert.Equal(t, got, outputBases(rev))
}

// TestBatchOutputNamesUniqueAcrossShards runs an archive whose names
// collide in two shards into one folder: every input has its own outputs.
func TestBatchOutputNamesUniqueAcrossShards(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	files := map[string]string{"scan.png": "good 1", "scan.jpg": "good 2", "scan_png.bmp": "good 3", "a.pdf": "good 4", "a-p2.png": "good 5"}
	writeTree(t, in, files)
	var calls atomic.Int32
	seen := map[string]string{}
	for k := 1; k <= 2; k++ {
		ios, _, _ := testIOS()
		cat := filepath.Join(t.TempDir(), catalog.FileName)
		require.NoError(t, runBatch(context.Background(), ios, &batchOptions{InputDir: in, OutDir: out, CatalogPath: cat,
			Workers: 2, Shard: catalog.Shard{K: k, N: 2}, process: fakeProcess(&calls)}))
		for rel, e := range catalogRows(t, cat) {
			require.Len(t, e.Outputs, 1, rel)
			if o, ok := seen[e.Outputs[0]]; ok {
				t.Errorf("%s and %s both wrote %s", o, rel, e.Outputs[0])
			}
			seen[e.Outputs[0]] = rel
		}
	}
	assert.EqualValues(t, len(files), calls.Load())
	assert.Len(t, seen, len(files))
	csvs, _ := filepath.Glob(filepath.Join(out, "*.csv"))
	assert.Len(t, csvs, len(files))
}

// TestBatchOutputFolderInsideInput: outputs of earlier runs inside the
// input folder are never read as inputs, whether the same output folder
// is used again or another one.
func TestBatchOutputFolderInsideInput(t *testing.T) {
	in := t.TempDir()
	writeTree(t, in, map[string]string{"a.png": "good a"})
	var calls atomic.Int32
	inner := fakeProcess(&calls)
	withOverlay := func(ctx context.Context, p, outBase string) (fileResult, error) {
		res, err := inner(ctx, p, outBase)
		if err == nil {
			ov := outBase + "-overlay.png"
			require.NoError(t, os.WriteFile(ov, []byte("good overlay"), 0o644))
			res.Outputs = append(res.Outputs, ov)
		}
		return res, err
	}
	// The input folder itself is refused as output folder.
	ios, _, _ := testIOS()
	err := runBatch(context.Background(), ios, &batchOptions{InputDir: in, OutDir: filepath.Join(in, "."), Workers: 1, process: withOverlay})
	assert.Equal(t, ExitUsage, ExitCode(err), "%v", err)
	assert.Contains(t, fmt.Sprint(err), "is the input folder")
	assert.EqualValues(t, 0, calls.Load())
	for _, out := range []string{"out", "out", "out2"} {
		calls.Store(0)
		ios, stdout, _ := testIOS()
		require.NoError(t, runBatch(context.Background(), ios, &batchOptions{InputDir: in, OutDir: filepath.Join(in, out), Workers: 1, process: withOverlay}))
		rows := catalogRows(t, filepath.Join(in, out, catalog.FileName))
		assert.Len(t, rows, 1, "%s: only a.png is an input: %v", out, rows)
		assert.Contains(t, stdout.String(), "batch: 1 inputs:")
	}
}

func TestBatchEmptyInputWarns(t *testing.T) {
	in := t.TempDir()
	writeTree(t, in, map[string]string{"notes.txt": "no images here"})
	var stdout, stderr bytes.Buffer
	code := Main([]string{"batch", in, "-o", filepath.Join(t.TempDir(), "out")}, strings.NewReader(""), &stdout, &stderr)
	assert.Equal(t, ExitOK, code, "an empty archive is not an error")
	assert.Contains(t, stderr.String(), "batch: warning: no images found in "+in)

	// A shard that holds none of the images says so.
	writeTree(t, in, map[string]string{"a.png": "good"})
	other := catalog.Shard{K: 1, N: 2}
	if other.Has("a.png") {
		other.K = 2
	}
	stderr.Reset()
	code = Main([]string{"batch", in, "--shard", other.String(), "-o", filepath.Join(t.TempDir(), "out")}, strings.NewReader(""), &stdout, &stderr)
	assert.Equal(t, ExitOK, code)
	assert.Contains(t, stderr.String(), "batch: warning: none of the 1 images in "+in+" belongs to shard "+other.String())
	require.NoError(t, os.Remove(filepath.Join(in, "a.png")))

	// The same with --quiet: a warning is never silenced.
	stderr.Reset()
	code = Main([]string{"batch", in, "-q", "-o", filepath.Join(t.TempDir(), "out")}, strings.NewReader(""), &stdout, &stderr)
	assert.Equal(t, ExitOK, code)
	assert.Contains(t, stderr.String(), "no images found")
}

func TestBatchHelpNamesRetries(t *testing.T) {
	var stdout, stderr bytes.Buffer
	require.Equal(t, ExitOK, Main([]string{"batch", "--help"}, strings.NewReader(""), &stdout, &stderr))
	help := strings.Join(strings.Fields(stdout.String()), " ")
	assert.Contains(t, help, "unreadable or no ECG found")
	assert.Contains(t, help, "Failures on the output side (disk full, permissions) and internal errors are always retried")
}

// TestBatchRedoesRowsOfAnotherOutputName: a catalogue row whose outputs
// are not under the input's current output name (written when two inputs
// shared one) does not settle the input.
func TestBatchRedoesRowsOfAnotherOutputName(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	writeTree(t, in, map[string]string{"scan.png": "good 1", "scan_png.bmp": "good 2", "scan.jpg": "good 3", "other.png": "good 4"})
	opts := &batchOptions{InputDir: in, OutDir: out, Workers: 1}
	db, err := catalog.Open(filepath.Join(out, catalog.FileName))
	require.NoError(t, err)
	// As an earlier version left it: both inputs wrote scan_png.csv.
	for rel, outputs := range map[string][]string{"scan.png": {"scan_png.csv"}, "scan_png.bmp": {"scan_png.csv"}, "scan.jpg": {"scan_jpg.csv"}, "other.png": {"other.csv", "other-overlay.png"}} {
		e := catalog.NewEntry(rel)
		e.SHA256, err = catalog.HashFile(filepath.Join(in, rel))
		require.NoError(t, err)
		e.Status, e.Options, e.Outputs = catalog.StatusDone, optionsFingerprint(&opts.Pipe), outputs
		require.NoError(t, db.Put(context.Background(), e))
	}
	require.NoError(t, db.Close())
	var calls atomic.Int32
	opts.process = fakeProcess(&calls)
	ios, _, _ := testIOS()
	require.NoError(t, runBatch(context.Background(), ios, opts))
	assert.EqualValues(t, 1, calls.Load(), "only the input whose output name changed is redone")
	rows := catalogRows(t, filepath.Join(out, catalog.FileName))
	assert.Equal(t, []string{"scan_png_2.csv"}, rows["scan.png"].Outputs)
	assert.Equal(t, []string{"scan_png.csv"}, rows["scan_png.bmp"].Outputs)
}

func TestOwnsOutputs(t *testing.T) {
	e := catalog.NewEntry("a.pdf")
	e.Outputs = []string{"x/a.csv", "x/a-p2.csv", "x/a-overlay.png", "x/a-p2-overlay.svg"}
	assert.True(t, ownsOutputs(e, "x/a"))
	assert.False(t, ownsOutputs(e, "x/a_pdf"))
	assert.False(t, ownsOutputs(e, "x/ab"))
	assert.True(t, ownsOutputs(catalog.NewEntry("failed.png"), "failed"), "no outputs: nothing to disown")
}

// TestBatchLargestFirst: with several workers the inputs are handed out
// largest file first, ties in the folder's order, so that a large one
// does not start last and keep the run going alone; with one worker they
// go in the folder's order. A run takes every input either way.
func TestBatchLargestFirst(t *testing.T) {
	ins := []catalog.Input{{Rel: "a.png", Size: 10}, {Rel: "b.png", Size: 300}, {Rel: "c.png", Size: 50}, {Rel: "d.png", Size: 300}, {Rel: "e.png", Size: 200}}
	names := func(v []catalog.Input) []string {
		var out []string
		for _, in := range v {
			out = append(out, in.Rel)
		}
		return out
	}
	assert.Equal(t, []string{"b.png", "d.png", "e.png", "c.png", "a.png"}, names(feedOrder(ins, 2)))
	assert.Equal(t, []string{"a.png", "b.png", "c.png", "d.png", "e.png"}, names(feedOrder(ins, 1)))
	assert.Equal(t, "a.png", ins[0].Rel, "the caller's list is left as it was")

	in := t.TempDir()
	writeTree(t, in, map[string]string{"a.png": "good a", "b.png": "good " + strings.Repeat("x", 300), "c.png": "good c"})
	var calls atomic.Int32
	ios, _, _ := testIOS()
	require.NoError(t, runBatch(context.Background(), ios, &batchOptions{InputDir: in, OutDir: t.TempDir(), Workers: 2, process: fakeProcess(&calls)}))
	assert.EqualValues(t, 3, calls.Load())
}
