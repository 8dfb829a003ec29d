package imageproc

import (
	"image"
)

// orientation decides how many quarter turns counter-clockwise make the
// page upright, from an ink map of the deskewed page: traces run along x,
// so an upright page has empty rows between its rows of leads while
// almost no column is empty; the traces' calibration pulses and most QRS
// complexes, P and T waves point up from the baseline (common practice).
// The band cue reads ink of at least orientInk; the upside-down cue only
// ink of at least upLevel (orientUpColour on colour pages).
func orientation(ink *image.Gray, upLevel uint8) int {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	rows, cols := inkProfiles(ink)
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
	if upLevel > orientInk {
		// The upside-down cue reads only the darker ink (see orientUpColour).
		m = image.NewGray(ink.Rect)
		for i, v := range ink.Pix {
			if v >= upLevel {
				m.Pix[i] = v
			}
		}
	}
	if q == 1 {
		m = turnGray(m, 1)
	}
	if upwardSkew(m) < 0 {
		q += 2
	}
	return q
}

// upwardSkew is positive when the ink around each trace baseline lies more
// above it than below (an upright page) and negative when upside down.
// Baselines are the strongest peaks of the row profile; each is compared
// over half the distance to its neighbours, and each half of the page
// gives the balance of all its peaks' ink, (Σ above − Σ below) / Σ both,
// so a row votes with the ink around it: a header line has little, and
// on a rhythm strip at 20 mm/mV whose R waves run up through the header
// to the sheet's edge, the date line, with those strokes below it,
// outvoted the strip when every peak counted alike (overlap rhythm seeds
// 5 and 9 were turned upside down).
func upwardSkew(ink *image.Gray) float64 {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	// Left and right halves separately: baselines differ where rows are
	// split into columns, and the pulses sit at the left.
	total := 0.0
	for half := 0; half < 2; half++ {
		x0, x1 := half*w/2, (half+1)*w/2
		prof := make([]float64, h)
		for y := 0; y < h; y++ {
			s := uint64(0) // exact, as the float sum was
			for _, v := range ink.Pix[y*ink.Stride+x0 : y*ink.Stride+x1] {
				s += uint64(v)
			}
			prof[y] = float64(s)
		}
		peaks := profilePeaks(prof, max(4, h/25))
		var sumUp, sumDown float64
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
			sumUp += up
			sumDown += down
		}
		if sumUp+sumDown > 0 {
			total += (sumUp - sumDown) / (sumUp + sumDown)
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
	rows, cols := inkProfiles(ink)
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
	// Nearly empty: below 5 % of the span's mean. (A fraction of the
	// maximum made the flat columns of a page with tall, crossing QRS
	// strokes count as empty: one stroke column outweighs them 30-fold.)
	// Each entry is judged by the mean over ±r entries (r ≈ ½–1 mm at the
	// work scale): a pen line broken by a pixel or two where the confident
	// ink level drops it is not an empty column (a photographed rhythm
	// strip's dotted baseline made a third of its columns 'empty' and the
	// page was turned a quarter), while the gaps between rows of traces
	// are many millimetres wide.
	sum := 0.0
	for _, v := range prof[lo : hi+1] {
		sum += v
	}
	n0 := hi - lo + 1
	lim := 0.05 * sum / float64(n0)
	r := max(1, len(prof)/300)
	win := 0.0
	for i := lo; i <= min(hi, lo+r); i++ {
		win += prof[i]
	}
	n := 0
	for i := lo; i <= hi; i++ {
		// win holds prof[max(lo, i−r) … min(hi, i+r)].
		a, b := max(lo, i-r), min(hi, i+r)
		if win/float64(b-a+1) < lim {
			n++
		}
		if i+r+1 <= hi {
			win += prof[i+r+1]
		}
		if i-r >= lo {
			win -= prof[i-r]
		}
	}
	return float64(n) / float64(n0)
}

// orientInk is the confident-ink level (of 255) for the orientation
// cues. The downscaled work page lightens thin traces: a binarised fax
// baseline (2 px at 204 dpi), a photo's or a 150-dpi page's pen line, the
// flat stretches of a page whose tall strokes dominate. A higher level
// (180, once used for colour pages to drop light grid lines) kept only
// the QRS strokes there, emptied the columns between beats and made
// upright pages look turned. Measured on 126 pages (scan, fax and
// overlap; seven layouts; records 1–3; each upright and turned 90°):
// 180 for colour and 120 for grey pages gave 9 wrong turns and a band
// cue as small as 0.08 on ordinary scans; 120 for the band cue on every
// page, with the mean-relative empty test of emptyFraction, none, |band|
// ≥ 0.33 on every page outside the overlap condition.
const orientInk = 120

// orientUpColour is the ink level the upside-down cue (upwardSkew) reads
// on colour pages: there the fainter ink that orientInk admits (pen
// marks, grid-line residue) tipped two rhythm strips of 60 upside down in
// the eval corpus, while the strong ink had decided all of them right.
const orientUpColour = 180

func orientationInk(wInk *image.Gray, toWork Homography, cw, ch int) *image.Gray {
	ci := image.NewGray(image.Rect(0, 0, cw, ch))
	if toWork != identity {
		warpGrayAffine(ci, wInk, toWork)
	} else {
		copy(ci.Pix, wInk.Pix)
	}
	for i, v := range ci.Pix {
		if v < orientInk {
			ci.Pix[i] = 0
		}
	}
	return ci
}

// inkProfiles returns the ink's row and column sums, added as integers
// and converted once (the float sums of these integers, all below 2^53,
// are exact, so the values are those of adding floats).
func inkProfiles(ink *image.Gray) (rows, cols []float64) {
	w, h := ink.Rect.Dx(), ink.Rect.Dy()
	rows, cols = make([]float64, h), make([]float64, w)
	icols := make([]uint64, w)
	for y := 0; y < h; y++ {
		s := uint64(0)
		for x, v := range ink.Pix[y*ink.Stride : y*ink.Stride+w] {
			s += uint64(v)
			icols[x] += uint64(v)
		}
		rows[y] = float64(s)
	}
	for x, v := range icols {
		cols[x] = float64(v)
	}
	return rows, cols
}

// warpGrayAffine is warpGray(dst, src, toSrc, 0), the same bytes, with
// the projective division left out when toSrc is affine (its last row 0
// 0 1: the divisor is exactly 1, and dividing by 1 changes nothing).
func warpGrayAffine(dst, src *image.Gray, toSrc Homography) {
	if toSrc[6] != 0 || toSrc[7] != 0 || toSrc[8] != 1 {
		warpGray(dst, src, toSrc, 0)
		return
	}
	h := toSrc
	dw, dh := dst.Rect.Dx(), dst.Rect.Dy()
	sw, sh := src.Rect.Dx(), src.Rect.Dy()
	maxX, maxY := float64(sw-1), float64(sh-1)
	for y := 0; y < dh; y++ {
		d := dst.Pix[y*dst.Stride : y*dst.Stride+dw]
		fy := float64(y)
		by, ey := h[1]*fy, h[4]*fy
		for x := range d {
			fx := float64(x)
			// Apply's sums, in its order.
			sx, sy := h[0]*fx+by+h[2], h[3]*fx+ey+h[5]
			if !(sx >= 0 && sy >= 0 && sx <= maxX && sy <= maxY) {
				d[x] = 0
				continue
			}
			d[x] = grayAt(src, sx, sy)
		}
	}
}
