package export

import (
	"bytes"
	"io"
	"testing"

	"tracelift/export/aecg"
	"tracelift/export/edf"
	"tracelift/export/wfdb"
)

// Writers on a 10 s, 13-lead record at 500 Hz (a digitised page).
func BenchmarkWriteCSV(b *testing.B) {
	rec := demoRecord(1, 10)
	for b.Loop() {
		WriteCSV(io.Discard, rec)
	}
}

func BenchmarkWriteEDF(b *testing.B) {
	rec := demoRecord(1, 10)
	for b.Loop() {
		edf.Write(io.Discard, rec, nil)
	}
}

func BenchmarkWriteAECG(b *testing.B) {
	rec := demoRecord(1, 10)
	for b.Loop() {
		aecg.Write(io.Discard, rec, nil)
	}
}

func BenchmarkWriteWFDB(b *testing.B) {
	rec := demoRecord(1, 10)
	dir := b.TempDir()
	for b.Loop() {
		wfdb.WriteRecord(dir, "bench", rec, nil)
	}
}

func BenchmarkReadCSV(b *testing.B) {
	var buf bytes.Buffer
	WriteCSV(&buf, demoRecord(1, 10))
	data := buf.Bytes()
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		ReadCSV(bytes.NewReader(data), nil)
	}
}
