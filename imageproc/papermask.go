package imageproc

import (
	"image"
	"slices"
)

// paperMask finds the sheet of paper in a photo from the background
// estimate: blocks whose paper level (90th percentile luminance) is far
// below the brightest blocks' are the table or background around the
// sheet. Grid and ink never darken a block's 90th percentile, however
// dense. The mask is eroded by one block so that the sheet's edge is
// excluded. It returns nil when every block is paper (scans, faxes).
func paperMask(bg *background) []bool {
	n := bg.nx * bg.ny
	lum := make([]float64, n)
	for i := range lum {
		lum[i] = 0.299*bg.v[0][i] + 0.587*bg.v[1][i] + 0.114*bg.v[2][i]
	}
	sorted := slices.Clone(lum)
	slices.Sort(sorted)
	top := sorted[n*9/10]
	raw := make([]bool, n)
	off := 0
	for i, v := range lum {
		raw[i] = v >= 0.72*top
		if !raw[i] {
			off++
		}
	}
	if off*20 < n {
		return nil
	}
	nx, ny := bg.nx, bg.ny
	mask := make([]bool, n)
	for by := 0; by < ny; by++ {
		for bx := 0; bx < nx; bx++ {
			ok := true
			for yy := by - 1; yy <= by+1 && ok; yy++ {
				for xx := bx - 1; xx <= bx+1; xx++ {
					if xx < 0 || yy < 0 || xx >= nx || yy >= ny || !raw[yy*nx+xx] {
						ok = false
						break
					}
				}
			}
			mask[by*nx+bx] = ok
		}
	}
	return mask
}

// otsu returns the threshold maximising the between-class variance.
func otsu(hist []int) int {
	total, sum := 0, 0
	for v, c := range hist {
		total += c
		sum += v * c
	}
	var wB, sumB int
	best, bt := -1.0, 0
	for t := 0; t < len(hist); t++ {
		wB += hist[t]
		if wB == 0 {
			continue
		}
		wF := total - wB
		if wF == 0 {
			break
		}
		sumB += t * hist[t]
		mB := float64(sumB) / float64(wB)
		mF := float64(sum-sumB) / float64(wF)
		v := float64(wB) * float64(wF) * (mB - mF) * (mB - mF)
		if v > best {
			best, bt = v, t
		}
	}
	return bt
}

// applyMask zeroes the pixels of maps outside the paper blocks.
func applyMask(mask []bool, block int, maps ...*image.Gray) {
	if mask == nil {
		return
	}
	for _, m := range maps {
		w, h := m.Rect.Dx(), m.Rect.Dy()
		nx := (w + block - 1) / block
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride : y*m.Stride+w]
			// Whole blocks at a time (a division per pixel cost more
			// than the rest of the pass).
			mrow := mask[(y/block)*nx : (y/block)*nx+nx]
			for bx, keep := range mrow {
				if !keep {
					clear(row[bx*block : min(w, bx*block+block)])
				}
			}
		}
	}
}
