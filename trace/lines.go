package trace

import "image"

// dropRuledLines returns a copy of ink without long, thin, perfectly
// horizontal ink lines (grid lines or rules left in the ink map by the
// front end): horizontal pixel runs of at least minLen px whose pixels have
// no ink four rows above or below (lines up to 7 px thick). A trace crossing such a line keeps its
// pixels there, since its ink extends vertically. ink itself is unchanged;
// if nothing is dropped, ink is returned as is.
func dropRuledLines(ink *image.Gray, minLen int) *image.Gray {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	if minLen < 2 || w < minLen {
		return ink
	}
	var out *image.Gray
	isInk := func(y, x int) bool {
		return y >= 0 && y < h && ink.Pix[y*ink.Stride+x] >= inkThreshold
	}
	for y := 0; y < h; y++ {
		row := ink.Pix[y*ink.Stride : y*ink.Stride+w]
		for x := 0; x < w; {
			if x+8 <= w && !inkWord(row[x:x+8]) {
				x += 8 // eight pixels of paper
				continue
			}
			if row[x] < inkThreshold {
				x++
				continue
			}
			e := x
			for e < w && row[e] >= inkThreshold {
				e++
			}
			if e-x >= minLen {
				if out == nil {
					out = image.NewGray(ink.Rect)
					copy(out.Pix, ink.Pix)
				}
				for k := x; k < e; k++ {
					if !isInk(y-4, k) && !isInk(y+4, k) {
						out.Pix[y*out.Stride+k] = 0
					}
				}
			}
			x = e
		}
	}
	if out == nil {
		return ink
	}
	return out
}
