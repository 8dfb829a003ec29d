package export

import (
	"errors"
	"io"
	"math"
	"testing"

	"tracelift/ecg"
	"tracelift/export/aecg"
	"tracelift/export/edf"
	"tracelift/export/wfdb"
)

// Hostile records: every writer either writes or returns an error
// wrapping ecg.ErrOutput; none panics or allocates without bound.
func TestWritersOnHostileRecords(t *testing.T) {
	inf, nan := math.Inf(1), math.NaN()
	recs := map[string]ecg.Record{
		"empty":        {},
		"no samples":   {Signals: []ecg.Signal{{Lead: ecg.LeadI, SampleRate: 500}}},
		"zero rate":    {Signals: []ecg.Signal{{Lead: ecg.LeadI, Samples: []float64{1, 2}}}},
		"nan rate":     {Signals: []ecg.Signal{{Lead: ecg.LeadI, SampleRate: nan, Samples: []float64{1, 2}}}},
		"nan start":    {Signals: []ecg.Signal{{Lead: ecg.LeadI, SampleRate: 500, Start: nan, Samples: []float64{1}}}},
		"far start":    {Signals: []ecg.Signal{{Lead: ecg.LeadI, SampleRate: 500, Samples: []float64{1}}, {Lead: ecg.LeadII, SampleRate: 500, Start: 1e12, Samples: []float64{1}}}},
		"all nan":      {Signals: []ecg.Signal{{Lead: ecg.LeadI, SampleRate: 500, Samples: []float64{nan, nan}}}},
		"inf samples":  {Signals: []ecg.Signal{{Lead: ecg.LeadI, SampleRate: 500, Samples: []float64{inf, 1, -inf, 2}}}},
		"huge values":  {Signals: []ecg.Signal{{Lead: ecg.LeadI, SampleRate: 500, Samples: []float64{1e300, -1e300}}}},
		"odd rate":     {Signals: []ecg.Signal{{Lead: ecg.LeadI, SampleRate: 333.3333, Samples: []float64{1, 2, 3}}}},
		"unknown lead": {Signals: []ecg.Signal{{Lead: ecg.LeadUnknown, SampleRate: 500, Samples: []float64{1, 2, 3}}}},
		"negative start": {Signals: []ecg.Signal{{Lead: ecg.LeadI, SampleRate: 250, Start: -1.3, Samples: []float64{1, 2, 3}}},
			Beats: []ecg.Beat{ecg.NewBeat(ecg.BeatNormal, -1.3), ecg.NewBeat(0, nan)}},
	}
	writers := map[string]func(ecg.Record) error{
		"csv":  func(r ecg.Record) error { return WriteCSV(io.Discard, r) },
		"edf":  func(r ecg.Record) error { return edf.Write(io.Discard, r, nil) },
		"aecg": func(r ecg.Record) error { return aecg.Write(io.Discard, r, nil) },
		"wfdb16": func(r ecg.Record) error {
			_, err := wfdb.WriteRecord(t.TempDir(), "h", r, nil)
			return err
		},
		"wfdb212": func(r ecg.Record) error {
			_, err := wfdb.WriteRecord(t.TempDir(), "h", r, &wfdb.WriteOptions{Format: 212})
			return err
		},
		"json": func(r ecg.Record) error { return WriteJSON(io.Discard, NewReport(r)) },
	}
	// The JSON report is written for every one of them.
	for rn := range recs {
		if err := WriteJSON(io.Discard, NewReport(recs[rn])); err != nil {
			t.Errorf("json report of %q: %v", rn, err)
		}
	}
	for rn, rec := range recs {
		for wn, w := range writers {
			err := w(rec.Clone())
			if err != nil && !errors.Is(err, ecg.ErrOutput) {
				t.Errorf("%s / %s: error %v does not wrap ErrOutput", rn, wn, err)
			}
		}
	}
}
