package edf

import (
	"bytes"
	"errors"
	"testing"

	"tracelift/ecg"
)

// Any byte string decodes without panicking; failures wrap ErrUnreadable.
func FuzzDecode(f *testing.F) {
	// Small seeds keep the fuzzer fast: three leads at 50 Hz for 2 s.
	rec := demoRecord(9, 2)
	rec.Signals = rec.Signals[:3]
	for i := range rec.Signals {
		rec.Signals[i] = ecg.Resample(rec.Signals[i], 50)
	}
	var b bytes.Buffer
	if err := Write(&b, rec, nil); err != nil {
		f.Fatal(err)
	}
	f.Add(b.Bytes())
	f.Add(b.Bytes()[:256*4+100])
	d := append([]byte(nil), b.Bytes()...)
	copy(d[192:], "EDF+D")
	f.Add(d)
	f.Fuzz(func(t *testing.T, in []byte) {
		file, err := Decode(in)
		if err != nil {
			if !errors.Is(err, ecg.ErrUnreadable) {
				t.Fatalf("error %v does not wrap ErrUnreadable", err)
			}
			return
		}
		_ = file.Record()
	})
}

// TAL bytes of any content parse without panicking.
func FuzzParseTALs(f *testing.F) {
	f.Add([]byte("+0\x14\x14\x00+0.5\x150.2\x14N\x14QRS on\x14\x00\x00"))
	f.Add([]byte("+1\x14\x14\x00"))
	f.Add([]byte("-3\x15\x14\x14\x00"))
	f.Fuzz(func(t *testing.T, in []byte) {
		anns, _, err := parseTALs(in)
		if err == nil {
			_ = Beats(anns)
		}
	})
}
