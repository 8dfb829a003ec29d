package imageproc

import (
	"math"
	"testing"
)

// A fax in standard mode is 204 dpi along the line and 98 lines per inch
// down the page (ITU-T T.4; standards.md §6.1): the page arrives squashed
// to half height. With the resolution given, Prepare resamples it to square
// pixels and the skew is measured on the paper's true angle.
func TestPrepareAnisotropic(t *testing.T) {
	const deg = 2.5
	s := rotatedSheet(110, 70, 8.03, deg)
	// Squash y by 3.86/8.03 through the sheet's homography.
	k := 3.86 / 8.03
	for i := 3; i < 6; i++ {
		s.paperToImg[i] *= k
	}
	s.h = int(float64(s.h)*k) + 1
	p, err := Prepare(s.draw(), &Options{DPIX: 204, DPIY: 98})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(p.RotationDeg-deg) > 0.1 {
		t.Errorf("skew %.3f°, want %.1f°", p.RotationDeg, deg)
	}
	if p.DPIY != p.DPIX || len(p.Warnings) == 0 {
		t.Errorf("dpi %g×%g, warnings %v: want square pixels and a warning", p.DPIX, p.DPIY, p.Warnings)
	}
	// ToSource still maps to the squashed input: the page's centre row
	// goes to about k × its upright y.
	_, y := Apply(p.ToSource, float64(p.Ink.Rect.Dx())/2, float64(p.Ink.Rect.Dy())/2)
	if want := float64(s.h-1) / 2; math.Abs(y-want) > 3 {
		t.Errorf("centre maps to y %.1f, want %.1f", y, want)
	}
}
