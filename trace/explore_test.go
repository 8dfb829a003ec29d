package trace

import (
	"sort"
	"testing"

	"tracelift/render"
)

func TestExploreClean(t *testing.T) {
	for _, lay := range []string{"3x4+1", "3x4", "3x4+3", "6x2", "12x1", "cabrera-3x4", "rhythm"} {
		rec := synthRecord(t, 1)
		pg := renderPage(t, rec, render.Options{Layout: lay})
		ink := naiveInk(pg.img)
		res, err := Extract(ink, truthCal(pg.truth), truthPulses(pg.truth), nil)
		if err != nil {
			t.Logf("%s: err %v", lay, err)
		}
		if res == nil {
			continue
		}
		writeOverlay(t, "clean-"+lay, pg.img, res)
		sc := SNR(printedTruth(pg.truth), res.Record, Lenient)
		st := SNR(printedTruth(pg.truth), res.Record, SNROptions{})
		var v []float64
		for _, x := range sc.PerLead {
			v = append(v, x)
		}
		sort.Float64s(v)
		t.Logf("%s: detected %s; lenient median %.1f dB shift %.3f; strict median %.1f; per lead %v; warnings %v", lay, res.Layout.Name, sc.Median, sc.ShiftS, st.Median, sc.PerLead, res.Warnings)
	}
}
