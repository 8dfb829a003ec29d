// Package catalog keeps the record of an archive run: one row per input
// file with its content hash (SHA-256), status, error, the outputs written
// and the key measurements of its first page. The catalogue is an embedded
// SQLite database (modernc.org/sqlite, pure Go) in write-ahead-log mode;
// every finished input is committed in its own transaction, so a run that
// is killed at any moment keeps everything already finished. An input is
// marked "started" before it is digitised, so the input in flight when a
// process died is named and redone. Each row also records a fingerprint
// of the options that shaped it, and Entry.Settled decides what a rerun
// may skip: the same bytes (SHA-256) read with the same options, finished
// or failed in a way the bytes decide (a corrupt file stays corrupt).
// Catalogues of schema version 1 (no options column) are migrated on Open;
// their rows have an unknown fingerprint and are never settled, so each
// such input is redone once under the current options. OpenReadOnly reads
// a catalogue of any known schema without changing its file (SQLite URI
// mode=ro, PRAGMA query_only); Merge reads its sources that way, and a
// started row never replaces a completed one there (Entry.Supersedes).
//
// The package also lists the inputs of a folder tree (Scan), splits them
// deterministically into shards (Shard) so that independent machines can
// share an archive, merges catalogues of several shards (Merge) and exports
// a catalogue as CSV (WriteCSV).
//
// SQLite's write-ahead log and its crash guarantees are described at
// https://www.sqlite.org/wal.html; the shard function is 64-bit FNV-1a
// (Fowler, Noll, Vo; IETF draft-eastlake-fnv) of the slash-separated
// relative path.
package catalog
