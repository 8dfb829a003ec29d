package render

import (
	"os"
	"path/filepath"
	"testing"
)

// TestLook writes sample pages for visual inspection when
// TRACELIFT_RENDER_LOOK names a folder.
func TestLook(t *testing.T) {
	dir := os.Getenv("TRACELIFT_RENDER_LOOK")
	if dir == "" {
		t.Skip("set TRACELIFT_RENDER_LOOK to a folder to write sample pages")
	}
	rec := testRecord(500, 10)
	for _, c := range []struct {
		name string
		o    Options
	}{
		{"3x4+1", Options{Layout: "3x4+1"}},
	} {
		h := DemoHeader(1)
		c.o.Header = &h
		p, err := Render(rec, &c.o)
		if err != nil {
			t.Fatal(err)
		}
		f, _ := os.Create(filepath.Join(dir, c.name+".png"))
		if err := p.WritePNG(f); err != nil {
			t.Fatal(err)
		}
		f.Close()
	}
}
