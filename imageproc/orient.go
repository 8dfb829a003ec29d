package imageproc

import (
	"image"
)

// orientation decides how many quarter turns counter-clockwise make the
// page upright, from an ink map of the deskewed page: traces run along x,
// so an upright page has empty rows between its rows of leads while
// almost no column is empty; the traces' calibration pulses and most QRS
// complexes, P and T waves point up from the baseline (common practice).
func orientation(ink *image.Gray) int {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	rows, cols := make([]float64, h), make([]float64, w)
	for y := 0; y < h; y++ {
		for x, v := range ink.Pix[y*ink.Stride : y*ink.Stride+w] {
			rows[y] += float64(v)
			cols[x] += float64(v)
		}
	}
	// Between rows of traces lie empty rows; columns are rarely empty.
	score := 2 * (emptyFraction(rows) - emptyFraction(cols))
	if w >= h {
		score += 0.15 // ECG pages are usually landscape
	} else {
		score -= 0.15
	}
	q := 0
	if score < 0 {
		q = 1
	}
	m := ink
	if q == 1 {
		m = turnGray(ink, 1)
	}
	if upwardSkew(m) < 0 {
		q += 2
	}
	return q
}

// upwardSkew is positive when the ink around each trace baseline lies more
// above it than below (an upright page) and negative when upside down.
// Baselines are the strongest peaks of the row profile; each is compared
// over half the distance to its neighbours.
func upwardSkew(ink *image.Gray) float64 {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	// Left and right halves separately: baselines differ where rows are
	// split into columns, and the pulses sit at the left.
	total := 0.0
	for half := 0; half < 2; half++ {
		x0, x1 := half*w/2, (half+1)*w/2
		prof := make([]float64, h)
		for y := 0; y < h; y++ {
			for _, v := range ink.Pix[y*ink.Stride+x0 : y*ink.Stride+x1] {
				prof[y] += float64(v)
			}
		}
		peaks := profilePeaks(prof, max(4, h/25))
		for i, b := range peaks {
			lo, hi := 0, h-1
			if i > 0 {
				lo = (peaks[i-1] + b) / 2
			} else {
				lo = max(0, b-(h/12))
			}
			if i < len(peaks)-1 {
				hi = (peaks[i+1] + b) / 2
			} else {
				hi = min(h-1, b+h/12)
			}
			gap := max(2, h/300)
			up, down := 0.0, 0.0
			for y := lo; y < b-gap; y++ {
				up += prof[y]
			}
			for y := b + gap + 1; y <= hi; y++ {
				down += prof[y]
			}
			if up+down > 0 {
				total += (up - down) / (up + down)
			}
		}
	}
	return total
}

// profilePeaks returns the indices of local maxima of prof at least sep
// apart, each at least 35 % of the strongest, in increasing order.
func profilePeaks(prof []float64, sep int) []int {
	mx := 0.0
	for _, v := range prof {
		mx = max(mx, v)
	}
	var out []int
	for i := 1; i < len(prof)-1; i++ {
		v := prof[i]
		if v < 0.35*mx {
			continue
		}
		isMax := true
		for j := max(0, i-sep); j <= min(len(prof)-1, i+sep); j++ {
			if prof[j] > v || (prof[j] == v && j < i) {
				isMax = false
				break
			}
		}
		if isMax {
			out = append(out, i)
		}
	}
	return out
}

// orientationScores exposes the two cues for tests: the log ratio of row
// to column band contrast and the upward skew.
func orientationScores(ink *image.Gray) (band, up float64) {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	rows, cols := make([]float64, h), make([]float64, w)
	for y := 0; y < h; y++ {
		for x, v := range ink.Pix[y*ink.Stride : y*ink.Stride+w] {
			rows[y] += float64(v)
			cols[x] += float64(v)
		}
	}
	return emptyFraction(rows) - emptyFraction(cols), upwardSkew(ink)
}

// emptyFraction returns the fraction of nearly empty entries of an ink
// profile within the span holding the central 90 % of the ink.
func emptyFraction(prof []float64) float64 {
	total, mx := 0.0, 0.0
	for _, v := range prof {
		total += v
		mx = max(mx, v)
	}
	if total == 0 {
		return 0
	}
	lo, hi, acc := 0, len(prof)-1, 0.0
	for i, v := range prof {
		acc += v
		if acc >= 0.05*total {
			lo = i
			break
		}
	}
	acc = 0
	for i := len(prof) - 1; i >= 0; i-- {
		acc += prof[i]
		if acc >= 0.05*total {
			hi = i
			break
		}
	}
	if hi <= lo {
		return 0
	}
	n := 0
	for _, v := range prof[lo : hi+1] {
		if v < 0.02*mx {
			n++
		}
	}
	return float64(n) / float64(hi-lo+1)
}

// Confident-ink levels (of 255) for the orientation cues: colour pages
// keep ink above orientInkColour, so that light grid lines fall below;
// grey and 1-bit pages (faxes) use the lower orientInkGrey, because the
// downscaled work page lightens thin binarised traces (a 2 px baseline
// at 204 dpi) below the colour level, which emptied the columns between
// beats and made upright pages look turned. Measured on the fax corpus
// (seeds 1–2, seven layouts, each upright and turned 90°: 28 pages): 180
// gave 2 wrong turns and a band cue against the page (6x2 seed 2, decided
// by the landscape prior alone), 120 none, with |band| ≥ 0.17 throughout.
const (
	orientInkColour = 180
	orientInkGrey   = 120
)

// orientationInk returns the confident-ink map that orientation reads,
// on the deskewed work page (cw×ch px; toWork maps its pixels to the
// work image's): wInk resampled, weaker ink cleared.
func orientationInk(wInk *image.Gray, toWork Homography, cw, ch int, colour bool) *image.Gray {
	ci := image.NewGray(image.Rect(0, 0, cw, ch))
	if toWork != identity {
		warpGray(ci, wInk, toWork, 0)
	} else {
		copy(ci.Pix, wInk.Pix)
	}
	var thr uint8 = orientInkColour
	if !colour {
		thr = orientInkGrey
	}
	for i, v := range ci.Pix {
		if v < thr {
			ci.Pix[i] = 0
		}
	}
	return ci
}
