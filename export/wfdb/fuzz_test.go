package wfdb

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"testing"

	"tracelift/ecg"
)

// Malformed headers never panic; every failure wraps ecg.ErrUnreadable.
func FuzzParseHeader(f *testing.F) {
	f.Add("# unnecessary comment\n100 2 360 650000\r\n100.dat 212 200 11 1024 995 -22131 0 MLII\n\r\n100.dat 212 200 11 1024 1011 20052 0 V5\r\n")
	f.Add("sel100 2 250/360 225000\r\nsel100.dat 212 200(0) 11 1024 945 -13873 0 MLII\r\nsel100.dat 212 200(0) 11 1024 955 14507 0 V5\r\n")
	f.Add("1 12 500 5000\n1.dat 16 1716(6)/mV 0 0 -120 -32198 0 i\n")
	f.Add("r 1 250(3)/128 10 12:00:00 01/02/2003\nr.dat 16x1:2+512 0 12\n")
	f.Fuzz(func(t *testing.T, s string) {
		h, err := ParseHeader(bytes.NewReader([]byte(s)))
		if err != nil {
			if !errors.Is(err, ecg.ErrUnreadable) {
				t.Fatalf("error %v does not wrap ErrUnreadable", err)
			}
			return
		}
		for _, sg := range h.Signals {
			if sg.Gain <= 0 {
				t.Fatalf("gain %g accepted", sg.Gain)
			}
		}
	})
}

// Signal files of any content with any header never panic.
func FuzzReadRecord(f *testing.F) {
	f.Add("r 2 500 4\nr.dat 212 200 12 0 0 0 0 I\nr.dat 212 200 12 0 0 0 0 II\n", []byte{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12})
	f.Add("r 2 500\nr.dat 16 200 16 0 0 0 0 I\nr.dat 16:1 200 16 0 0 0 0 V1\n", []byte{1, 2, 3, 4, 5, 6, 7})
	f.Add("r 1 500 3\nr.dat 24+1 200 16 0 0 0 0 I\n", []byte{0, 1, 2, 3, 4, 5, 6, 7, 8, 9})
	f.Add("r 1 500 99999999999\nr.dat 80 200\n", []byte{1})
	f.Fuzz(func(t *testing.T, hea string, dat []byte) {
		dir := t.TempDir()
		if err := os.WriteFile(filepath.Join(dir, "r.hea"), []byte(hea), 0o644); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, "r.dat"), dat, 0o644); err != nil {
			t.Fatal(err)
		}
		_, _, err := ReadRecord(filepath.Join(dir, "r.hea"))
		if err != nil && !errors.Is(err, ecg.ErrUnreadable) {
			t.Fatalf("error %v does not wrap ErrUnreadable", err)
		}
	})
}

// Annotation streams of any content never panic, and whatever decodes
// re-encodes and decodes to the same annotations.
func FuzzDecodeAnnotations(f *testing.F) {
	f.Add([]byte{0x12, 0x70, 0x03, 0xfc, 0x28, 0x4e, 0x00, 0x00, 0x3b, 0x04})
	f.Add([]byte{0x00, 0xec, 0x01, 0x00, 0x00, 0x10, 0x64, 0x04, 0, 0})
	f.Add([]byte{0x64, 0x04, 0x05, 0xf0, 0x03, 0xf4, 0, 0})
	f.Fuzz(func(t *testing.T, b []byte) {
		a, err := DecodeAnnotations(bytes.NewReader(b), 360)
		if err != nil {
			if !errors.Is(err, ecg.ErrUnreadable) {
				t.Fatalf("error %v does not wrap ErrUnreadable", err)
			}
			return
		}
		var buf bytes.Buffer
		if err := EncodeAnnotations(&buf, a); err != nil {
			return // e.g. steps beyond 2^31 cannot be re-encoded
		}
		a2, err := DecodeAnnotations(&buf, 360)
		if err != nil || len(a2) != len(a) {
			t.Fatalf("re-decode: %v, %d vs %d", err, len(a2), len(a))
		}
		for i := range a {
			if a[i].Sample != a2[i].Sample || a[i].Code != a2[i].Code || a[i].Sub != a2[i].Sub || a[i].Chan != a2[i].Chan || a[i].Num != a2[i].Num {
				t.Fatalf("annotation %d: %+v vs %+v", i, a[i], a2[i])
			}
		}
	})
}
