package aecg

import (
	"bytes"
	"errors"
	"testing"

	"tracelift/ecg"
)

func FuzzRead(f *testing.F) {
	rec := page3x4(4)
	for i := range rec.Signals {
		rec.Signals[i].Samples = rec.Signals[i].Samples[1240:1260]
	}
	var b bytes.Buffer
	if err := Write(&b, rec, nil); err != nil {
		f.Fatal(err)
	}
	f.Add(b.Bytes())
	f.Add([]byte(`<AnnotatedECG xmlns="urn:hl7-org:v3"/>`))
	f.Fuzz(func(t *testing.T, in []byte) {
		_, err := Read(bytes.NewReader(in))
		if err != nil && !errors.Is(err, ecg.ErrUnreadable) && !errors.Is(err, ecg.ErrNoECG) {
			t.Fatalf("error %v wraps no error class", err)
		}
	})
}
