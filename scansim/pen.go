package scansim

import (
	"image"
	"math"
	"math/rand/v2"
)

// drawPenMarks draws n ballpoint strokes (blue or black, about 0.3 mm wide
// on an A4 page) across img: long curves crossing the traces, ellipses
// circling a region, and short zig-zag scribbles, as readers mark up
// printed ECGs.
func drawPenMarks(img *image.NRGBA, n int, rng *rand.Rand) {
	w, h := float64(img.Rect.Dx()), float64(img.Rect.Dy())
	size := max(w, h)
	width := max(1.2, size/900) // px
	for range n {
		ink := [3]float64{25, 45, 160} // blue ballpoint
		if rng.IntN(3) == 0 {
			ink = [3]float64{25, 25, 35} // black
		}
		var pts [][2]float64
		x0, y0 := w*rng.Float64(), h*rng.Float64()
		switch rng.IntN(3) {
		case 0: // a long cubic Bézier curve
			L := size * (0.1 + 0.3*rng.Float64())
			a := 2 * math.Pi * rng.Float64()
			x3, y3 := x0+L*math.Cos(a), y0+L*math.Sin(a)
			c1x, c1y := x0+L*(rng.Float64()-0.5), y0+L*(rng.Float64()-0.5)
			c2x, c2y := x3+L*(rng.Float64()-0.5), y3+L*(rng.Float64()-0.5)
			for k := 0; k <= 200; k++ {
				t := float64(k) / 200
				u := 1 - t
				pts = append(pts, [2]float64{
					u*u*u*x0 + 3*u*u*t*c1x + 3*u*t*t*c2x + t*t*t*x3,
					u*u*u*y0 + 3*u*u*t*c1y + 3*u*t*t*c2y + t*t*t*y3})
			}
		case 1: // an ellipse drawn by hand: a little more than one turn, wobbling
			rx, ry := size*(0.02+0.05*rng.Float64()), size*(0.015+0.03*rng.Float64())
			tilt, turn := rng.Float64()-0.5, 2*math.Pi*(1.05+0.15*rng.Float64())
			ph := 2 * math.Pi * rng.Float64()
			for k := 0; k <= 240; k++ {
				a := ph + turn*float64(k)/240
				wob := 1 + 0.06*math.Sin(3*a+ph)
				ex, ey := rx*wob*math.Cos(a), ry*wob*math.Sin(a)
				pts = append(pts, [2]float64{x0 + ex*math.Cos(tilt) - ey*math.Sin(tilt), y0 + ex*math.Sin(tilt) + ey*math.Cos(tilt)})
			}
		default: // a zig-zag scribble
			step, amp := size*(0.004+0.006*rng.Float64()), size*(0.01+0.02*rng.Float64())
			a := 2 * math.Pi * rng.Float64()
			ux, uy := math.Cos(a), math.Sin(a)
			for k := 0; k <= 8+rng.IntN(12); k++ {
				s := amp * (1 - 2*float64(k%2)) * (0.7 + 0.3*rng.Float64())
				pts = append(pts, [2]float64{x0 + float64(k)*step*ux - s*uy, y0 + float64(k)*step*uy + s*ux})
			}
		}
		stroke(img, pts, width*(0.8+0.4*rng.Float64()), ink, 0.75+0.2*rng.Float64())
	}
}

// stroke paints the polyline pts with a round pen of the given width,
// anti-aliased, compositing ink at opacity alpha (each pixel once).
func stroke(img *image.NRGBA, pts [][2]float64, width float64, ink [3]float64, alpha float64) {
	if len(pts) < 2 {
		return
	}
	W, H := img.Rect.Dx(), img.Rect.Dy()
	r := width / 2
	minX, minY, maxX, maxY := math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)
	for _, p := range pts {
		minX, minY, maxX, maxY = min(minX, p[0]), min(minY, p[1]), max(maxX, p[0]), max(maxY, p[1])
	}
	bx0, by0 := max(0, int(minX-r-2)), max(0, int(minY-r-2))
	bx1, by1 := min(W, int(maxX+r+3)), min(H, int(maxY+r+3))
	if bx0 >= bx1 || by0 >= by1 {
		return
	}
	bw := bx1 - bx0
	cov := make([]float32, bw*(by1-by0))
	for k := 1; k < len(pts); k++ {
		ax, ay, qx, qy := pts[k-1][0], pts[k-1][1], pts[k][0], pts[k][1]
		x0, y0 := max(bx0, int(min(ax, qx)-r-1)), max(by0, int(min(ay, qy)-r-1))
		x1, y1 := min(bx1, int(max(ax, qx)+r+2)), min(by1, int(max(ay, qy)+r+2))
		dx, dy := qx-ax, qy-ay
		l2 := dx*dx + dy*dy
		for y := y0; y < y1; y++ {
			for x := x0; x < x1; x++ {
				px, py := float64(x)+0.5, float64(y)+0.5
				t := 0.0
				if l2 > 0 {
					t = max(0, min(1, ((px-ax)*dx+(py-ay)*dy)/l2))
				}
				d := math.Hypot(px-ax-t*dx, py-ay-t*dy)
				c := float32(max(0, min(1, r+0.5-d)))
				i := (y-by0)*bw + (x - bx0)
				cov[i] = max(cov[i], c)
			}
		}
	}
	for y := by0; y < by1; y++ {
		row := img.Pix[y*img.Stride:]
		for x := bx0; x < bx1; x++ {
			a := alpha * float64(cov[(y-by0)*bw+(x-bx0)])
			if a == 0 {
				continue
			}
			for c := range 3 {
				v := float64(row[4*x+c])
				// Ink absorbs: multiply-like blend toward the ink colour.
				row[4*x+c] = uint8(v*(1-a) + a*min(v, ink[c]) + 0.5)
			}
		}
	}
}
