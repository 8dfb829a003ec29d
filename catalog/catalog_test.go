package catalog

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/ecg"
)

func TestPutGetRoundTrip(t *testing.T) {
	ctx := context.Background()
	db, err := Open(filepath.Join(t.TempDir(), "c.sqlite"))
	require.NoError(t, err)
	defer db.Close()

	e := NewEntry("clinic/a.png")
	e.SHA256, e.Size, e.Status = "abc", 42, StatusDone
	e.Outputs = []string{"clinic/a.csv", "clinic/a.json"}
	e.Pages, e.Leads = 1, []string{"I", "II", "V1"}
	e.HeartBPM, e.QRSMS, e.Quality = 72.5, 96, 0.9
	e.Finished = time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)
	require.NoError(t, db.Put(ctx, e))

	got, ok, err := db.Get(ctx, "clinic/a.png")
	require.NoError(t, err)
	require.True(t, ok)
	assert.Equal(t, e.Outputs, got.Outputs)
	assert.Equal(t, e.Leads, got.Leads)
	assert.Equal(t, 72.5, got.HeartBPM)
	assert.True(t, math.IsNaN(got.PRMS), "unknown PR stays unknown (NULL), not 0")
	assert.True(t, got.Finished.Equal(e.Finished))

	_, ok, err = db.Get(ctx, "missing.png")
	require.NoError(t, err)
	assert.False(t, ok)

	// Replacing keeps one row per path.
	e.Status, e.Error, e.Class = StatusFailed, "x: unreadable input", "unreadable"
	require.NoError(t, db.Put(ctx, e))
	all, err := db.All(ctx)
	require.NoError(t, err)
	require.Len(t, all, 1)
	assert.Equal(t, StatusFailed, all[0].Status)
	counts, err := db.Counts(ctx)
	require.NoError(t, err)
	assert.Equal(t, map[Status]int{StatusFailed: 1}, counts)
}

func TestPersistsAcrossReopen(t *testing.T) {
	ctx := context.Background()
	p := filepath.Join(t.TempDir(), "c.sqlite")
	db, err := Open(p)
	require.NoError(t, err)
	for i := range 5 {
		e := NewEntry(fmt.Sprintf("f%d.png", i))
		e.Status = StatusDone
		require.NoError(t, db.Put(ctx, e))
	}
	require.NoError(t, db.Close())
	db, err = Open(p)
	require.NoError(t, err)
	defer db.Close()
	all, err := db.All(ctx)
	require.NoError(t, err)
	assert.Len(t, all, 5)
}

func TestOpenUnwritable(t *testing.T) {
	_, err := Open(filepath.Join(t.TempDir(), "no", "such", "dir", "c.sqlite"))
	require.Error(t, err)
	assert.ErrorIs(t, err, ecg.ErrOutput)
}

func TestMergeLaterWins(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	mk := func(name string, entries ...Entry) string {
		p := filepath.Join(dir, name)
		db, err := Open(p)
		require.NoError(t, err)
		for _, e := range entries {
			require.NoError(t, db.Put(ctx, e))
		}
		require.NoError(t, db.Close())
		return p
	}
	e := func(p string, s Status, at time.Duration) Entry {
		x := NewEntry(p)
		x.Status, x.Finished = s, t0.Add(at)
		return x
	}
	a := mk("a.sqlite", e("one.png", StatusDone, 0), e("both.png", StatusFailed, time.Hour))
	b := mk("b.sqlite", e("two.png", StatusDone, 0), e("both.png", StatusDone, 2*time.Hour))
	m, err := Open(filepath.Join(dir, "m.sqlite"))
	require.NoError(t, err)
	defer m.Close()
	n, err := m.Merge(ctx, a)
	require.NoError(t, err)
	assert.Equal(t, 2, n)
	n, err = m.Merge(ctx, b)
	require.NoError(t, err)
	assert.Equal(t, 2, n)
	// Merging a again must not undo b's later result for both.png.
	_, err = m.Merge(ctx, a)
	require.NoError(t, err)
	got, ok, err := m.Get(ctx, "both.png")
	require.NoError(t, err)
	require.True(t, ok)
	assert.Equal(t, StatusDone, got.Status)
	all, err := m.All(ctx)
	require.NoError(t, err)
	assert.Len(t, all, 3)
}

func TestWriteCSV(t *testing.T) {
	ctx := context.Background()
	db, err := Open(filepath.Join(t.TempDir(), "c.sqlite"))
	require.NoError(t, err)
	defer db.Close()
	e := NewEntry("b,odd.png")
	e.Status, e.HeartBPM, e.Leads = StatusPartial, 60, []string{"II"}
	e.Error = "b,odd.png: partial result: 11 leads unreadable"
	require.NoError(t, db.Put(ctx, e))
	var buf bytes.Buffer
	require.NoError(t, db.WriteCSV(ctx, &buf))
	rows, err := csv.NewReader(&buf).ReadAll()
	require.NoError(t, err)
	require.Len(t, rows, 2)
	assert.Equal(t, Columns, rows[0])
	col := func(name string) string {
		for i, c := range Columns {
			if c == name {
				return rows[1][i]
			}
		}
		t.Fatalf("no column %s", name)
		return ""
	}
	assert.Equal(t, "b,odd.png", col("path"))
	assert.Equal(t, "60.0", col("heart_rate_bpm"))
	assert.Equal(t, "", col("pr_ms"), "unknown values are empty cells")
	assert.Equal(t, "1", col("leads_found"))
	assert.Equal(t, "partial", col("status"))
}

func TestShard(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want Shard
		bad  bool
	}{
		{"1/1", Shard{1, 1}, false},
		{"3/8", Shard{3, 8}, false},
		{"0/8", Shard{}, true},
		{"9/8", Shard{}, true},
		{"8", Shard{}, true},
		{"a/b", Shard{}, true},
	} {
		got, err := ParseShard(tc.in)
		if tc.bad {
			assert.Error(t, err, tc.in)
			continue
		}
		require.NoError(t, err, tc.in)
		assert.Equal(t, tc.want, got)
	}

	// Every input lands in exactly one of N shards, and shards are
	// roughly balanced.
	const n, files = 4, 2000
	count := make([]int, n)
	for i := range files {
		rel := fmt.Sprintf("box%02d/scan-%05d.png", i%37, i)
		hits := 0
		for k := 1; k <= n; k++ {
			if (Shard{k, n}).Has(rel) {
				hits++
				count[k-1]++
			}
		}
		require.Equal(t, 1, hits, rel)
	}
	for k, c := range count {
		assert.InDelta(t, files/n, c, files/n*0.2, "shard %d of %d holds %d inputs", k+1, n, c)
	}
	assert.True(t, Shard{}.Has("anything"))
}

func TestScan(t *testing.T) {
	root := t.TempDir()
	write := func(rel string) {
		p := filepath.Join(root, filepath.FromSlash(rel))
		require.NoError(t, os.MkdirAll(filepath.Dir(p), 0o755))
		require.NoError(t, os.WriteFile(p, []byte(rel), 0o644))
	}
	for _, f := range []string{"b.PNG", "a/x.jpg", "a/deep/y.pdf", "notes.txt", ".hidden.png", ".git/z.png", "out/done.png"} {
		write(f)
	}
	in, err := Scan(root, filepath.Join(root, "out"))
	require.NoError(t, err)
	var rels []string
	for _, x := range in {
		rels = append(rels, x.Rel)
	}
	assert.Equal(t, []string{"a/deep/y.pdf", "a/x.jpg", "b.PNG"}, rels)

	_, err = Scan(filepath.Join(root, "nope"))
	assert.ErrorIs(t, err, ecg.ErrUnreadable)

	// The output folder of another run (it holds a catalogue) is not an
	// input, and the skipped folder is recognised through a symbolic link.
	write("old-run/a-overlay.png")
	write("old-run/" + FileName)
	link := filepath.Join(t.TempDir(), "out-link")
	require.NoError(t, os.Symlink(filepath.Join(root, "out"), link))
	in, err = Scan(root, link)
	require.NoError(t, err)
	rels = rels[:0]
	for _, x := range in {
		rels = append(rels, x.Rel)
	}
	assert.Equal(t, []string{"a/deep/y.pdf", "a/x.jpg", "b.PNG"}, rels)
}

func TestHashFile(t *testing.T) {
	p := filepath.Join(t.TempDir(), "abc")
	require.NoError(t, os.WriteFile(p, []byte("abc"), 0o644))
	h, err := HashFile(p)
	require.NoError(t, err)
	// FIPS 180-2, Appendix B.1: SHA-256("abc").
	assert.Equal(t, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad", h)
	_, err = HashFile(p + "-missing")
	assert.ErrorIs(t, err, ecg.ErrUnreadable)
}

// schemaV1 is the catalogue schema before the options column (version 1,
// user_version 0), as older runs left it on disk.
const schemaV1 = `
CREATE TABLE inputs (
	path TEXT PRIMARY KEY, sha256 TEXT NOT NULL, size_bytes INTEGER NOT NULL,
	status TEXT NOT NULL, error_class TEXT NOT NULL DEFAULT '', error TEXT NOT NULL DEFAULT '',
	outputs TEXT NOT NULL DEFAULT '', pages INTEGER NOT NULL DEFAULT 0,
	leads_found INTEGER NOT NULL DEFAULT 0, leads TEXT NOT NULL DEFAULT '',
	quality REAL, heart_rate_bpm REAL, pr_ms REAL, qrs_ms REAL, qt_ms REAL,
	qtc_bazett_ms REAL, seconds REAL, finished_utc TEXT NOT NULL
);
CREATE INDEX inputs_status ON inputs(status);
INSERT INTO inputs (path, sha256, size_bytes, status, error_class, error, pages, leads_found, leads, heart_rate_bpm, finished_utc)
VALUES ('old/a.png', 'aa', 10, 'done', '', '', 1, 2, 'I II', 61, '2026-01-02T03:04:05Z'),
       ('old/b.png', 'bb', 11, 'failed', 'unreadable', 'b.png: not a PNG file', 0, 0, '', NULL, '2026-01-02T03:04:06Z');
`

func TestOpenMigratesVersion1(t *testing.T) {
	ctx := context.Background()
	p := filepath.Join(t.TempDir(), "v1.sqlite")
	raw, err := sql.Open("sqlite", p)
	require.NoError(t, err)
	_, err = raw.Exec(schemaV1)
	require.NoError(t, err)
	require.NoError(t, raw.Close())

	db, err := Open(p)
	require.NoError(t, err)
	a, ok, err := db.Get(ctx, "old/a.png")
	require.NoError(t, err)
	require.True(t, ok, "rows of the old catalogue survive the migration")
	assert.Equal(t, StatusDone, a.Status)
	assert.Equal(t, 61.0, a.HeartBPM)
	assert.Equal(t, "", a.Options, "options of old rows are unknown")
	// Rows of unknown options are redone once, finished or failed: a
	// later change of options must not go unnoticed for ever.
	assert.False(t, a.Settled("aa", "layout=auto", false))
	b, _, err := db.Get(ctx, "old/b.png")
	require.NoError(t, err)
	assert.False(t, b.Settled("bb", "layout=auto", false))

	e := NewEntry("new.png")
	e.Status, e.SHA256, e.Options = StatusDone, "cc", "layout=auto"
	require.NoError(t, db.Put(ctx, e))
	require.NoError(t, db.Close())

	// Reopening a migrated catalogue is a no-op.
	db, err = Open(p)
	require.NoError(t, err)
	defer db.Close()
	all, err := db.All(ctx)
	require.NoError(t, err)
	require.Len(t, all, 3)
	assert.Equal(t, "new.png", all[0].Path, "ordered by path")
	assert.Equal(t, "layout=auto", all[0].Options)
	var v int
	require.NoError(t, db.db.QueryRow("PRAGMA user_version").Scan(&v))
	assert.Equal(t, SchemaVersion, v)
}

func TestOpenRefusesNewerSchema(t *testing.T) {
	p := filepath.Join(t.TempDir(), "v9.sqlite")
	raw, err := sql.Open("sqlite", p)
	require.NoError(t, err)
	_, err = raw.Exec("PRAGMA user_version = 9")
	require.NoError(t, err)
	require.NoError(t, raw.Close())
	_, err = Open(p)
	require.Error(t, err)
	assert.ErrorIs(t, err, ecg.ErrOutput)
	assert.Contains(t, err.Error(), "newer")
}

func TestSettled(t *testing.T) {
	const opts = "layout=auto rate=500"
	row := func(s Status, class, options string) Entry {
		e := NewEntry("a.png")
		e.SHA256, e.Status, e.Class, e.Options = "h1", s, class, options
		return e
	}
	for _, tc := range []struct {
		name  string
		e     Entry
		sha   string
		opts  string
		retry bool
		want  bool
	}{
		{"done, same content and options", row(StatusDone, "", opts), "h1", opts, false, true},
		{"partial, same", row(StatusPartial, "partial", opts), "h1", opts, false, true},
		{"done, content changed", row(StatusDone, "", opts), "h2", opts, false, false},
		{"done, options changed", row(StatusDone, "", opts), "h1", "layout=6x2 rate=500", false, false},
		{"done, row predates options", row(StatusDone, "", ""), "h1", opts, false, false},
		{"partial, row predates options", row(StatusPartial, "partial", ""), "h1", opts, false, false},
		{"done, row predates options, empty run options", row(StatusDone, "", ""), "h1", "", false, false},
		{"done, retry-failed does not redo it", row(StatusDone, "", opts), "h1", opts, true, true},
		{"failed corrupt file, same", row(StatusFailed, "unreadable", opts), "h1", opts, false, true},
		{"failed no ECG, same", row(StatusFailed, "no-ecg", opts), "h1", opts, false, true},
		{"failed, retry asked", row(StatusFailed, "unreadable", opts), "h1", opts, true, false},
		{"failed, options changed", row(StatusFailed, "no-ecg", opts), "h1", "layout=auto rate=250", false, false},
		{"failed, content changed", row(StatusFailed, "unreadable", opts), "h2", opts, false, false},
		{"failed on the output side", row(StatusFailed, "output", opts), "h1", opts, false, false},
		{"failed by a bug (panic)", row(StatusFailed, "internal", opts), "h1", opts, false, false},
		{"failed, row predates options", row(StatusFailed, "unreadable", ""), "h1", opts, false, false},
		{"started (interrupted)", row(StatusStarted, "", opts), "h1", opts, false, false},
		{"input unreadable now (no hash)", row(StatusDone, "", opts), "", opts, false, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			assert.Equal(t, tc.want, tc.e.Settled(tc.sha, tc.opts, tc.retry))
		})
	}
}

func TestMergeStartedRowsDoNotHideResults(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	put := func(p string, e Entry) {
		db, err := Open(p)
		require.NoError(t, err)
		require.NoError(t, db.Put(ctx, e))
		require.NoError(t, db.Close())
	}
	done := NewEntry("x.png")
	done.Status, done.Finished = StatusDone, t0
	started := NewEntry("x.png")
	started.Status, started.Finished = StatusStarted, t0.Add(time.Hour)
	a, b := filepath.Join(dir, "a.sqlite"), filepath.Join(dir, "b.sqlite")
	put(a, done)
	put(b, started) // a later run of the same input that was killed
	m, err := Open(filepath.Join(dir, "m.sqlite"))
	require.NoError(t, err)
	defer m.Close()
	for _, src := range []string{a, b} {
		_, err := m.Merge(ctx, src)
		require.NoError(t, err)
	}
	got, _, err := m.Get(ctx, "x.png")
	require.NoError(t, err)
	assert.Equal(t, StatusDone, got.Status)
}

// BenchmarkPut is the cost of committing one finished input (one
// transaction in WAL mode with synchronous=NORMAL), which every batch
// worker pays once or twice per input.
func BenchmarkPut(b *testing.B) {
	ctx := context.Background()
	db, err := Open(filepath.Join(b.TempDir(), "c.sqlite"))
	require.NoError(b, err)
	defer db.Close()
	e := NewEntry("")
	e.SHA256, e.Status, e.Outputs, e.Leads = "0123456789abcdef", StatusDone, []string{"a.csv", "a.json"}, []string{"I", "II"}
	i := 0
	for b.Loop() {
		e.Path = fmt.Sprintf("ward/%06d.png", i)
		i++
		if err := db.Put(ctx, e); err != nil {
			b.Fatal(err)
		}
	}
}

// TestMergeStartedNeverReplacesCompleted checks the merge rule in both
// orders of the sources: a started row never replaces a completed one,
// a completed row always replaces a started one, whatever their times.
func TestMergeStartedNeverReplacesCompleted(t *testing.T) {
	ctx := context.Background()
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	for _, tc := range []struct {
		name           string
		first, second  Status
		firstAt, sndAt time.Duration
		want           Status
	}{
		{"started newer, merged first", StatusStarted, StatusDone, time.Hour, 0, StatusDone},
		{"started newer, merged second", StatusDone, StatusStarted, 0, time.Hour, StatusDone},
		{"started older, merged first", StatusStarted, StatusDone, 0, time.Hour, StatusDone},
		{"started older, merged second", StatusDone, StatusStarted, time.Hour, 0, StatusDone},
		{"failed older than started", StatusStarted, StatusFailed, time.Hour, 0, StatusFailed},
		{"partial older than started, merged second", StatusStarted, StatusPartial, 2 * time.Hour, time.Hour, StatusPartial},
		{"both completed, later wins", StatusDone, StatusFailed, 0, time.Hour, StatusFailed},
		{"both completed, earlier loses", StatusFailed, StatusDone, time.Hour, 0, StatusFailed},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			src := func(name string, s Status, at time.Duration) string {
				p := filepath.Join(dir, name)
				db, err := Open(p)
				require.NoError(t, err)
				e := NewEntry("x.png")
				e.Status, e.Finished = s, t0.Add(at)
				require.NoError(t, db.Put(ctx, e))
				require.NoError(t, db.Close())
				return p
			}
			a := src("a.sqlite", tc.first, tc.firstAt)
			b := src("b.sqlite", tc.second, tc.sndAt)
			m, err := Open(filepath.Join(dir, "m.sqlite"))
			require.NoError(t, err)
			defer m.Close()
			for _, p := range []string{a, b} {
				_, err := m.Merge(ctx, p)
				require.NoError(t, err)
			}
			got, ok, err := m.Get(ctx, "x.png")
			require.NoError(t, err)
			require.True(t, ok)
			assert.Equal(t, tc.want, got.Status)
		})
	}
}

// TestMergeLeavesSourcesUntouched merges a schema-1 catalogue and a
// current one and checks that neither source file changed by a byte (the
// old one is read as it is, not migrated), and that the old rows arrive
// with unknown options.
func TestMergeLeavesSourcesUntouched(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	v1 := filepath.Join(dir, "v1.sqlite")
	raw, err := sql.Open("sqlite", v1)
	require.NoError(t, err)
	_, err = raw.Exec(schemaV1)
	require.NoError(t, err)
	require.NoError(t, raw.Close())
	v2 := filepath.Join(dir, "v2.sqlite")
	db, err := Open(v2)
	require.NoError(t, err)
	e := NewEntry("new.png")
	e.Status, e.SHA256, e.Options = StatusDone, "cc", "layout=auto"
	require.NoError(t, db.Put(ctx, e))
	require.NoError(t, db.Close())

	before := map[string][]byte{}
	for _, p := range []string{v1, v2} {
		b, err := os.ReadFile(p)
		require.NoError(t, err)
		before[p] = b
	}
	m, err := Open(filepath.Join(dir, "m.sqlite"))
	require.NoError(t, err)
	defer m.Close()
	for _, p := range []string{v1, v2} {
		n, err := m.Merge(ctx, p)
		require.NoError(t, err)
		assert.Positive(t, n)
	}
	for p, b := range before {
		after, err := os.ReadFile(p)
		require.NoError(t, err)
		assert.True(t, bytes.Equal(b, after), "merge changed its source %s", filepath.Base(p))
	}
	raw, err = sql.Open("sqlite", v1)
	require.NoError(t, err)
	var v int
	require.NoError(t, raw.QueryRow("PRAGMA user_version").Scan(&v))
	require.NoError(t, raw.Close())
	assert.Equal(t, 0, v, "the old source is not migrated")

	all, err := m.All(ctx)
	require.NoError(t, err)
	require.Len(t, all, 3)
	// Ordered by path: new.png, old/a.png, old/b.png.
	assert.Equal(t, "layout=auto", all[0].Options)
	assert.Equal(t, "", all[1].Options, "old/a.png: options unknown")
	assert.Equal(t, 61.0, all[1].HeartBPM)
}

func TestOpenReadOnly(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	_, err := OpenReadOnly(filepath.Join(dir, "missing.sqlite"))
	assert.ErrorIs(t, err, ecg.ErrUnreadable)
	_, statErr := os.Stat(filepath.Join(dir, "missing.sqlite"))
	assert.True(t, os.IsNotExist(statErr), "a read-only open creates nothing")

	// Characters with a meaning in a URI name the file itself.
	p := filepath.Join(dir, "odd name #1 ?%41.sqlite")
	db, err := Open(p)
	require.NoError(t, err)
	e := NewEntry("a.png")
	e.Status = StatusDone
	require.NoError(t, db.Put(ctx, e))
	require.NoError(t, db.Close())
	ro, err := OpenReadOnly(p)
	require.NoError(t, err)
	defer ro.Close()
	all, err := ro.All(ctx)
	require.NoError(t, err)
	assert.Len(t, all, 1)
	assert.ErrorIs(t, ro.Put(ctx, e), ecg.ErrOutput)
	ents, err := os.ReadDir(dir)
	require.NoError(t, err)
	for _, d := range ents { // the database, its -wal and -shm
		assert.True(t, strings.HasPrefix(d.Name(), filepath.Base(p)), "file of another name created: %s", d.Name())
	}
}
