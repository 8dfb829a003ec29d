package catalog

import (
	"context"
	"database/sql"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"net/url"
	"strconv"
	"strings"
	"time"

	_ "modernc.org/sqlite" // registers the "sqlite" database/sql driver

	"tracelift/ecg"
)

// Status is an input's state in the catalogue.
type Status string

// Statuses of a catalogued input.
const (
	StatusDone    Status = "done"    // every page digitised
	StatusPartial Status = "partial" // outputs written, but some leads or pages failed
	StatusFailed  Status = "failed"  // nothing usable; Error says why
	// StatusStarted marks an input whose digitising began but never
	// finished: the run was interrupted or killed while it was in flight
	// (a row still "started" after the run names the input that was being
	// read when a process died). It is always redone.
	StatusStarted Status = "started"
)

// Finished reports whether an input with status s has a usable result
// (done or partial).
func (s Status) Finished() bool { return s == StatusDone || s == StatusPartial }

// Entry is one catalogued input. Measurements are NaN when unknown (stored
// as SQL NULL).
type Entry struct {
	Path     string   // input path relative to the input folder, slash-separated
	SHA256   string   // hex SHA-256 of the input's bytes
	Size     int64    // bytes
	Status   Status   //
	Class    string   // error class: "", "unreadable", "no-ecg", "partial", "output", "internal"
	Error    string   // one-line reason when Status is not done
	Outputs  []string // outputs written, relative to the output folder, slash-separated
	Pages    int      // pages digitised
	Leads    []string // lead names found on the first page
	Quality  float64  // mean per-lead trace quality of the first page, 0…1
	HeartBPM float64  // heart rate, beats per minute
	PRMS     float64  // PR interval, ms
	QRSMS    float64  // QRS duration, ms
	QTMS     float64  // QT interval, ms
	QTcMS    float64  // QTc by Bazett's formula, ms
	Seconds  float64  // processing time, s
	Finished time.Time
	// Options is the fingerprint of the options that shape the result
	// (see Settled); "" in rows written before options were recorded.
	Options string
}

// Settled reports whether e, the catalogued entry of an input, makes
// digitising it again unnecessary when the input's bytes now hash to sha
// and the run's options fingerprint is options:
//
//   - started rows (interrupted) and rows of other content are never
//     settled;
//   - done and partial rows are settled when the options match; a row
//     with an unknown fingerprint ("": written before options were
//     recorded) is never settled, so every such input is redone once,
//     under the current options, and its new row carries their
//     fingerprint (safest: an upgraded catalogue cannot make a later
//     change of options go unnoticed);
//   - failed rows are settled when the options match and the failure is
//     one the input's bytes decide (class "unreadable" or "no-ecg"),
//     unless retryFailed is set: a corrupt file stays corrupt, the same
//     bytes read with the same options fail the same way. Failures on the
//     output side (disk full, permissions) and internal errors (bugs) are
//     tried again.
func (e Entry) Settled(sha, options string, retryFailed bool) bool {
	if sha == "" || e.SHA256 != sha {
		return false
	}
	switch e.Status {
	case StatusDone, StatusPartial:
		return e.Options != "" && e.Options == options
	case StatusFailed:
		return !retryFailed && (e.Class == "unreadable" || e.Class == "no-ecg") &&
			e.Options != "" && e.Options == options
	}
	return false
}

// Supersedes reports whether e should replace old, an entry for the same
// path, when catalogues are merged: a started entry never replaces a
// completed one (done, partial or failed: a later attempt that was killed
// says nothing about the input), a completed entry always replaces a
// started one, and between two of the same kind the one finished later
// wins (ties go to e).
func (e Entry) Supersedes(old Entry) bool {
	eStarted, oldStarted := e.Status == StatusStarted, old.Status == StatusStarted
	if eStarted != oldStarted {
		return oldStarted
	}
	return !old.Finished.After(e.Finished)
}

// Columns are the catalogue's CSV columns, in order.
var Columns = []string{
	"path", "sha256", "size_bytes", "status", "error_class", "error", "outputs",
	"pages", "leads_found", "leads", "quality", "heart_rate_bpm", "pr_ms",
	"qrs_ms", "qt_ms", "qtc_bazett_ms", "seconds", "finished_utc", "options",
}

// SchemaVersion is the catalogue schema written by this package (SQLite
// user_version). Version 1 had no options column; Open adds it.
const SchemaVersion = 2

const schema = `
CREATE TABLE IF NOT EXISTS inputs (
	path           TEXT PRIMARY KEY,
	sha256         TEXT NOT NULL,
	size_bytes     INTEGER NOT NULL,
	status         TEXT NOT NULL,
	error_class    TEXT NOT NULL DEFAULT '',
	error          TEXT NOT NULL DEFAULT '',
	outputs        TEXT NOT NULL DEFAULT '',
	pages          INTEGER NOT NULL DEFAULT 0,
	leads_found    INTEGER NOT NULL DEFAULT 0,
	leads          TEXT NOT NULL DEFAULT '',
	quality        REAL,
	heart_rate_bpm REAL,
	pr_ms          REAL,
	qrs_ms         REAL,
	qt_ms          REAL,
	qtc_bazett_ms  REAL,
	seconds        REAL,
	finished_utc   TEXT NOT NULL,
	options        TEXT NOT NULL DEFAULT ''
);
CREATE INDEX IF NOT EXISTS inputs_status ON inputs(status);
`

// DB is an open catalogue. It is safe for concurrent use; writes are
// serialised.
type DB struct {
	db       *sql.DB
	path     string
	readOnly bool
	// hasOptions is false for a read-only catalogue of schema version 1
	// (no options column): its rows read with Options "".
	hasOptions bool
}

// Open opens or creates the catalogue at path (write-ahead-log mode, a
// busy timeout so that readers and the single writer do not fail each
// other). Errors wrap ecg.ErrOutput: the catalogue belongs to the output.
func Open(path string) (*DB, error) {
	q := url.Values{}
	q.Add("_pragma", "journal_mode(WAL)")
	q.Add("_pragma", "busy_timeout(10000)")
	q.Add("_pragma", "synchronous(NORMAL)")
	db, err := sql.Open("sqlite", dsn(path, q))
	if err != nil {
		return nil, fmt.Errorf("catalog: open %s: %w: %v", path, ecg.ErrOutput, err)
	}
	// One connection: SQLite has one writer anyway, and a single
	// connection keeps WAL checkpoints simple.
	db.SetMaxOpenConns(1)
	if _, err := db.Exec(schema); err != nil {
		db.Close()
		return nil, fmt.Errorf("catalog: open %s: %w: %v", path, ecg.ErrOutput, err)
	}
	if err := migrate(db); err != nil {
		db.Close()
		return nil, fmt.Errorf("catalog: open %s: %w: %v", path, ecg.ErrOutput, err)
	}
	return &DB{db: db, path: path, hasOptions: true}, nil
}

// OpenReadOnly opens the existing catalogue at path for reading only
// (SQLite URI mode=ro and PRAGMA query_only): nothing is created, migrated
// or checkpointed, so the file's bytes stay as they are. Catalogues of
// schema version 1 are read as they are, with every Options "". Put on a
// read-only catalogue fails. Errors wrap ecg.ErrUnreadable.
func OpenReadOnly(path string) (*DB, error) {
	fail := func(err error) error {
		return fmt.Errorf("catalog: open %s: %w: %v", path, ecg.ErrUnreadable, err)
	}
	q := url.Values{}
	q.Add("mode", "ro")
	q.Add("_pragma", "busy_timeout(10000)")
	q.Add("_pragma", "query_only(1)")
	db, err := sql.Open("sqlite", dsn(path, q))
	if err != nil {
		return nil, fail(err)
	}
	db.SetMaxOpenConns(1)
	var v int
	if err := db.QueryRow("PRAGMA user_version").Scan(&v); err != nil {
		db.Close()
		return nil, fail(err)
	}
	if v > SchemaVersion {
		db.Close()
		return nil, fail(fmt.Errorf("catalogue schema version %d is newer than this program's %d", v, SchemaVersion))
	}
	cols, err := columnNames(db)
	if err != nil {
		db.Close()
		return nil, fail(err)
	}
	if !cols["path"] {
		db.Close()
		return nil, fail(errors.New("not a catalogue (no table inputs)"))
	}
	return &DB{db: db, path: path, readOnly: true, hasOptions: cols["options"]}, nil
}

// dsn is the SQLite URI of the file path with the query q: the path is
// percent-escaped, so that a name holding "#", "?" or "%" opens that very
// file (a raw "file:a#b.sqlite" would open "a").
func dsn(path string, q url.Values) string {
	u := url.URL{Scheme: "file", Opaque: (&url.URL{Path: path}).EscapedPath(), RawQuery: q.Encode()}
	return u.String()
}

// columnNames returns the columns of table inputs (none if it is missing).
func columnNames(db *sql.DB) (map[string]bool, error) {
	rows, err := db.Query("SELECT name FROM pragma_table_info('inputs')")
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	cols := make(map[string]bool)
	for rows.Next() {
		var name string
		if err := rows.Scan(&name); err != nil {
			return nil, err
		}
		cols[name] = true
	}
	return cols, rows.Err()
}

// migrate brings a catalogue written by an earlier version to
// SchemaVersion: version 1 lacks the options column, which is added with
// an empty string (options unknown) in every existing row. A catalogue from a newer
// version is refused rather than misread.
func migrate(db *sql.DB) error {
	var v int
	if err := db.QueryRow("PRAGMA user_version").Scan(&v); err != nil {
		return err
	}
	if v > SchemaVersion {
		return fmt.Errorf("catalogue schema version %d is newer than this program's %d", v, SchemaVersion)
	}
	cols, err := columnNames(db)
	if err != nil {
		return err
	}
	if !cols["options"] {
		if _, err := db.Exec("ALTER TABLE inputs ADD COLUMN options TEXT NOT NULL DEFAULT ''"); err != nil {
			return err
		}
	}
	if v < SchemaVersion {
		if _, err := db.Exec(fmt.Sprintf("PRAGMA user_version = %d", SchemaVersion)); err != nil {
			return err
		}
	}
	return nil
}

// Path returns the file the catalogue lives in.
func (d *DB) Path() string { return d.path }

// Close checkpoints the write-ahead log (unless read-only) and closes the
// database.
func (d *DB) Close() error {
	if !d.readOnly {
		_, _ = d.db.Exec("PRAGMA wal_checkpoint(TRUNCATE)")
	}
	return d.db.Close()
}

const selectCols = `path, sha256, size_bytes, status, error_class, error, outputs, pages,
	leads, quality, heart_rate_bpm, pr_ms, qrs_ms, qt_ms, qtc_bazett_ms, seconds, finished_utc, options`

// selectColsV1 reads a schema-1 catalogue (no options column).
const selectColsV1 = `path, sha256, size_bytes, status, error_class, error, outputs, pages,
	leads, quality, heart_rate_bpm, pr_ms, qrs_ms, qt_ms, qtc_bazett_ms, seconds, finished_utc, ''`

// cols is the column list to select from d's table.
func (d *DB) cols() string {
	if d.hasOptions {
		return selectCols
	}
	return selectColsV1
}

// Get returns the entry for the relative path p; ok is false if there is
// none.
func (d *DB) Get(ctx context.Context, p string) (e Entry, ok bool, err error) {
	row := d.db.QueryRowContext(ctx, "SELECT "+d.cols()+" FROM inputs WHERE path = ?", p)
	e, err = scanEntry(row)
	if errors.Is(err, sql.ErrNoRows) {
		return Entry{}, false, nil
	}
	if err != nil {
		return Entry{}, false, fmt.Errorf("catalog: get %s: %w", p, err)
	}
	return e, true, nil
}

// Put records e, replacing any earlier entry for the same path, in one
// transaction. Errors wrap ecg.ErrOutput.
func (d *DB) Put(ctx context.Context, e Entry) error {
	if d.readOnly {
		return fmt.Errorf("catalog: put %s: %w: %s is open read-only", e.Path, ecg.ErrOutput, d.path)
	}
	if e.Finished.IsZero() {
		e.Finished = time.Now()
	}
	tx, err := d.db.BeginTx(ctx, nil)
	if err != nil {
		return fmt.Errorf("catalog: put %s: %w: %v", e.Path, ecg.ErrOutput, err)
	}
	_, err = tx.ExecContext(ctx, `INSERT OR REPLACE INTO inputs (`+selectCols+`, leads_found)
		VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)`,
		e.Path, e.SHA256, e.Size, string(e.Status), e.Class, e.Error,
		strings.Join(e.Outputs, ";"), e.Pages, strings.Join(e.Leads, " "),
		null(e.Quality), null(e.HeartBPM), null(e.PRMS), null(e.QRSMS), null(e.QTMS),
		null(e.QTcMS), null(e.Seconds), e.Finished.UTC().Format(time.RFC3339), e.Options, len(e.Leads))
	if err != nil {
		tx.Rollback()
		return fmt.Errorf("catalog: put %s: %w: %v", e.Path, ecg.ErrOutput, err)
	}
	if err := tx.Commit(); err != nil {
		return fmt.Errorf("catalog: put %s: %w: %v", e.Path, ecg.ErrOutput, err)
	}
	return nil
}

// All returns every entry ordered by path.
func (d *DB) All(ctx context.Context) ([]Entry, error) {
	rows, err := d.db.QueryContext(ctx, "SELECT "+d.cols()+" FROM inputs ORDER BY path")
	if err != nil {
		return nil, fmt.Errorf("catalog: list: %w", err)
	}
	defer rows.Close()
	var out []Entry
	for rows.Next() {
		e, err := scanEntry(rows)
		if err != nil {
			return nil, fmt.Errorf("catalog: list: %w", err)
		}
		out = append(out, e)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("catalog: list: %w", err)
	}
	return out, nil
}

// Counts returns the number of entries per status.
func (d *DB) Counts(ctx context.Context) (map[Status]int, error) {
	rows, err := d.db.QueryContext(ctx, "SELECT status, COUNT(*) FROM inputs GROUP BY status")
	if err != nil {
		return nil, fmt.Errorf("catalog: count: %w", err)
	}
	defer rows.Close()
	out := make(map[Status]int)
	for rows.Next() {
		var s string
		var n int
		if err := rows.Scan(&s, &n); err != nil {
			return nil, fmt.Errorf("catalog: count: %w", err)
		}
		out[Status(s)] = n
	}
	return out, rows.Err()
}

// Merge copies every entry of the catalogue file src into d. Where both
// hold the same path (see Supersedes): a started (never finished) entry
// never replaces a completed one (done, partial or failed), a completed
// entry always replaces a started one, and otherwise the entry finished
// later wins. src is opened read-only (OpenReadOnly) and left byte for
// byte as it was, whatever its schema version. It returns the number of
// entries copied or replaced.
func (d *DB) Merge(ctx context.Context, src string) (int, error) {
	s, err := OpenReadOnly(src)
	if err != nil {
		return 0, fmt.Errorf("catalog: merge %s: %w", src, err)
	}
	entries, err := s.All(ctx)
	s.Close()
	if err != nil {
		return 0, fmt.Errorf("catalog: merge %s: %w", src, err)
	}
	n := 0
	for _, e := range entries {
		old, ok, err := d.Get(ctx, e.Path)
		if err != nil {
			return n, fmt.Errorf("catalog: merge %s: %w", src, err)
		}
		if ok && !e.Supersedes(old) {
			continue
		}
		if err := d.Put(ctx, e); err != nil {
			return n, fmt.Errorf("catalog: merge %s: %w", src, err)
		}
		n++
	}
	return n, nil
}

// WriteCSV writes every entry as CSV with the header Columns; unknown
// numbers are empty cells.
func (d *DB) WriteCSV(ctx context.Context, w io.Writer) error {
	entries, err := d.All(ctx)
	if err != nil {
		return err
	}
	cw := csv.NewWriter(w)
	if err := cw.Write(Columns); err != nil {
		return fmt.Errorf("catalog: csv: %w", err)
	}
	for _, e := range entries {
		rec := []string{
			e.Path, e.SHA256, strconv.FormatInt(e.Size, 10), string(e.Status), e.Class, e.Error,
			strings.Join(e.Outputs, ";"), strconv.Itoa(e.Pages), strconv.Itoa(len(e.Leads)),
			strings.Join(e.Leads, " "), num(e.Quality, 3), num(e.HeartBPM, 1), num(e.PRMS, 0),
			num(e.QRSMS, 0), num(e.QTMS, 0), num(e.QTcMS, 0), num(e.Seconds, 3),
			e.Finished.UTC().Format(time.RFC3339), e.Options,
		}
		if err := cw.Write(rec); err != nil {
			return fmt.Errorf("catalog: csv: %w", err)
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("catalog: csv: %w", err)
	}
	return nil
}

type scanner interface{ Scan(dest ...any) error }

func scanEntry(r scanner) (Entry, error) {
	var e Entry
	var status, outputs, leads, fin string
	var q, hr, pr, qrs, qt, qtc, secs sql.NullFloat64
	err := r.Scan(&e.Path, &e.SHA256, &e.Size, &status, &e.Class, &e.Error, &outputs, &e.Pages,
		&leads, &q, &hr, &pr, &qrs, &qt, &qtc, &secs, &fin, &e.Options)
	if err != nil {
		return e, err
	}
	e.Status = Status(status)
	if outputs != "" {
		e.Outputs = strings.Split(outputs, ";")
	}
	if leads != "" {
		e.Leads = strings.Fields(leads)
	}
	e.Quality, e.HeartBPM, e.PRMS = val(q), val(hr), val(pr)
	e.QRSMS, e.QTMS, e.QTcMS, e.Seconds = val(qrs), val(qt), val(qtc), val(secs)
	e.Finished, _ = time.Parse(time.RFC3339, fin)
	return e, nil
}

func null(v float64) any {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return v
}

func val(v sql.NullFloat64) float64 {
	if !v.Valid {
		return math.NaN()
	}
	return v.Float64
}

func num(v float64, prec int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'f', prec, 64)
}
