package imageproc

import (
	"image"
	"math"
)

// sheet describes a synthetic ECG page drawn analytically for tests: a
// millimetre grid (minor lines every 1 mm, major every 5 mm), three rows
// of a spiky trace with a 1 mV, 0.2 s calibration pulse at the left of
// each row, seen through a homography (paper mm → image px).
type sheet struct {
	wMM, hMM   float64    // paper size, mm
	w, h       int        // image size, px
	paperToImg Homography // paper mm → image px
	grid       [3]uint8   // grid line colour
	ink        [3]uint8
	paper      [3]uint8
	gainMM     float64 // mm per mV
	noGrid     bool
}

// trace returns the trace height in mm above the row baseline at time
// position u mm along the row (25 mm/s): a pulse at 2–7 mm, then beats.
func (s *sheet) trace(u float64) float64 {
	switch {
	case u < 2:
		return 0
	case u < 7:
		return s.gainMM // 1 mV
	case u < 12:
		return 0
	}
	t := math.Mod(u-12, 20) // beat every 0.8 s
	switch {
	case t < 2:
		return 1.5 * math.Sin(math.Pi*t/2) // P
	case t > 4 && t < 5:
		return 12 * (1 - math.Abs(t-4.5)*2) // R
	case t > 9 && t < 14:
		return 2.5 * math.Sin(math.Pi*(t-9)/5) // T
	}
	return 0
}

func (s *sheet) draw() *image.NRGBA {
	img := image.NewNRGBA(image.Rect(0, 0, s.w, s.h))
	inv, _ := Invert(s.paperToImg)
	// px per mm near the centre, for line widths.
	x0, y0 := Apply(s.paperToImg, s.wMM/2, s.hMM/2)
	x1, _ := Apply(s.paperToImg, s.wMM/2+1, s.hMM/2)
	ppm := math.Abs(x1 - x0)
	_ = y0
	rows := []float64{s.hMM * 0.25, s.hMM * 0.5, s.hMM * 0.75}
	for y := 0; y < s.h; y++ {
		for x := 0; x < s.w; x++ {
			u, v := Apply(inv, float64(x), float64(y))
			c := s.paper
			if u < 0 || v < 0 || u > s.wMM || v > s.hMM {
				c = [3]uint8{250, 250, 250} // scanner lid around the sheet
			} else {
				if !s.noGrid {
					du := math.Abs(u - math.Round(u))
					dv := math.Abs(v - math.Round(v))
					majU := int(math.Round(u))%5 == 0
					majV := int(math.Round(v))%5 == 0
					hw := 0.55 / ppm // half a pixel
					if (du < hw || dv < hw) || (majU && du < 1.1/ppm) || (majV && dv < 1.1/ppm) {
						c = s.grid
					}
				}
				for _, r := range rows {
					if u < 1 || u > s.wMM-3 {
						continue
					}
					// Distance to the curve, sampled.
					best := math.Inf(1)
					for k := -2; k <= 2; k++ {
						uu := u + float64(k)*0.1
						vv := r - s.trace(uu)
						best = min(best, math.Hypot(uu-u, vv-v))
					}
					// Vertical edges of the pulse.
					if (math.Abs(u-2) < 0.05 || math.Abs(u-7) < 0.05) && v < r && v > r-s.gainMM {
						best = 0
					}
					if best < 0.9/ppm+0.05 {
						c = s.ink
					}
				}
			}
			i := y*img.Stride + 4*x
			img.Pix[i], img.Pix[i+1], img.Pix[i+2], img.Pix[i+3] = c[0], c[1], c[2], 255
		}
	}
	return img
}

// rotatedSheet returns a sheet at ppm px/mm turned deg counter-clockwise
// (as seen) about the image centre, with a small margin.
func rotatedSheet(wMM, hMM, ppm, deg float64) *sheet {
	th := deg * math.Pi / 180
	c, s := math.Cos(th), math.Sin(th)
	w := int(math.Ceil((wMM*c+hMM*math.Abs(s))*ppm)) + 40
	h := int(math.Ceil((wMM*math.Abs(s)+hMM*c)*ppm)) + 40
	cx, cy := float64(w-1)/2, float64(h-1)/2
	// image = centre + ppm·R(θ)·(mm − centre_mm); counter-clockwise as seen
	// with y down: x' = dx cos + dy sin, y' = −dx sin + dy cos.
	H := Homography{
		ppm * c, ppm * s, cx - ppm*(c*wMM/2+s*hMM/2),
		-ppm * s, ppm * c, cy - ppm*(-s*wMM/2+c*hMM/2),
		0, 0, 1,
	}
	return &sheet{wMM: wMM, hMM: hMM, w: w, h: h, paperToImg: H,
		grid: [3]uint8{240, 150, 160}, ink: [3]uint8{20, 20, 30}, paper: [3]uint8{255, 252, 248}, gainMM: 10}
}
