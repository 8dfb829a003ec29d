package trace_test

import (
	"strings"
	"testing"

	"tracelift/accuracy"
	"tracelift/render"
)

// layoutWarned reports whether a result's warnings carry the note that
// the rhythm layout was a fallback.
func layoutWarned(ws []string) bool {
	for _, w := range ws {
		if strings.Contains(w, "do not read as one continuous lead") {
			return true
		}
	}
	return false
}

// TestRhythmFallbackWarns: a page read as a rhythm strip only because
// no column separator was found, its rows not reading as one lead, says
// so; a real rhythm page does not. LUDB record 108 printed 12 × 1 at
// 20 mm/mV (rows 15 mm apart, its traces wandering over half of that)
// is such a page: rows are lost and the rest are read as lead II. Rhythm
// pages of the corpus under several conditions carry no such warning.
func TestRhythmFallbackWarns(t *testing.T) {
	if testing.Short() {
		t.Skip("renders full pages")
	}
	for _, cond := range []string{"clean", "scan", "fax", "photo", "lowres"} {
		c := accuracy.Case{Condition: cond, Layout: "rhythm", Seed: 1}
		_, page, err := accuracy.RenderCase(c)
		if err != nil {
			t.Fatal(err)
		}
		res, _, _ := digitise(page.Image)
		if res == nil {
			t.Fatalf("%s: nothing read", c.Name())
		}
		if res.Layout.Name != "rhythm" || layoutWarned(res.Warnings) {
			t.Errorf("%s: layout %q, warnings %q", c.Name(), res.Layout.Name, res.Warnings)
		}
	}
	r := realRecord(t, "ludb", "108.hea")
	page, err := render.Render(r, &render.Options{Layout: "12x1", GainMMPerMV: 20})
	if err != nil {
		t.Fatal(err)
	}
	res, _, _ := digitise(page.Image)
	if res == nil {
		t.Fatal("ludb 108: nothing read")
	}
	if res.Layout.Name == "rhythm" && !layoutWarned(res.Warnings) {
		t.Errorf("ludb 108 12x1 at 20 mm/mV read as rhythm without a warning: %q", res.Warnings)
	}
	t.Logf("ludb 108 12x1 at 20 mm/mV: layout %s, %d leads", res.Layout.Name, len(res.Record.Signals))
}
