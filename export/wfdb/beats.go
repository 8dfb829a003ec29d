package wfdb

import (
	"math"
	"sort"

	"tracelift/ecg"
)

// isBeat reports whether an annotation code labels a QRS complex (the
// WFDB library's isqrs table: N L R a V F J A S E j / Q B ? e n f r).
func isBeat(code int) bool {
	switch code {
	case 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 25, 30, 34, 35, 38, 41:
		return true
	}
	return false
}

// beatCode maps an ecg.BeatClass to an annotation code: N=1, V=5, A=8,
// Q=13, other single-letter WFDB symbols by their code, anything else Q.
func beatCode(c ecg.BeatClass) int {
	if code, ok := Code(string(rune(c))); ok && isBeat(code) {
		return code
	}
	return CodeUnknown
}

// sampleOf converts a time on the record's time base to a frame number of
// a file whose frame 0 is at t0 (s) and whose rate is fs (Hz).
func sampleOf(t, t0, fs float64) int64 { return int64(math.Round((t - t0) * fs)) }

// BeatAnnotations converts beats to beat annotations (one per beat at its R
// time), for a file at fs Hz whose frame 0 is at t0 seconds. Beats with a
// NaN R or falling before t0 are left out.
func BeatAnnotations(beats []ecg.Beat, fs, t0 float64) []Annotation {
	var out []Annotation
	for _, b := range beats {
		if math.IsNaN(b.R) || b.R < t0-0.5/fs {
			continue
		}
		c := beatCode(b.Class)
		s := sampleOf(b.R, t0, fs)
		out = append(out, Annotation{Sample: s, Time: float64(s) / fs, Code: c, Symbol: Symbol(c)})
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Sample < out[j].Sample })
	return out
}

// WaveAnnotations converts the beats' wave boundaries to the delineation
// convention of the QT Database and LUDB: for each wave present, '('
// onset, the peak ('p' for P, the beat code for QRS, 't' for T) and ')'
// offset. A QRS without onset and offset gets only its peak; a T wave
// without a peak gets its end mark alone. Beats before t0 are left out.
func WaveAnnotations(beats []ecg.Beat, fs, t0 float64) []Annotation {
	var out []Annotation
	add := func(t float64, code int) {
		if math.IsNaN(t) || t < t0-0.5/fs {
			return
		}
		s := sampleOf(t, t0, fs)
		out = append(out, Annotation{Sample: s, Time: float64(s) / fs, Code: code, Symbol: Symbol(code)})
	}
	for _, b := range beats {
		if !math.IsNaN(b.PPeak) || !math.IsNaN(b.POn) {
			add(b.POn, CodeWaveOn)
			add(b.PPeak, CodePWave)
			add(b.POff, CodeWaveOff)
		}
		add(b.QRSOn, CodeWaveOn)
		add(b.R, beatCode(b.Class))
		add(b.QRSOff, CodeWaveOff)
		if !math.IsNaN(b.TPeak) || !math.IsNaN(b.TEnd) {
			add(b.TPeak, CodeTWave)
			add(b.TEnd, CodeWaveOff)
		}
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Sample < out[j].Sample })
	return out
}

// Beats turns annotations into beats. Every beat annotation (isqrs code)
// starts a beat at its time. Delineation marks are attached as the QT
// Database and LUDB write them: a '(' immediately before a peak mark is
// that wave's onset and a ')' immediately after is its offset; a QRS peak
// mark (a beat code) takes the onset/offset as QRSOn/QRSOff, a 'p' wave is
// given to the next beat and a 't' wave to the previous one, each only if
// within 1.2 s of the beat's R. For a T wave written as "t)" without a
// peak mark, see the ')' after 't'. Beats come out in time order.
func Beats(anns []Annotation, fs float64) []ecg.Beat {
	var beats []ecg.Beat
	for _, a := range anns {
		if isBeat(a.Code) {
			beats = append(beats, ecg.NewBeat(ecg.BeatClass(a.Symbol[0]), float64(a.Sample)/fs))
		}
	}
	sort.SliceStable(beats, func(i, j int) bool { return beats[i].R < beats[j].R })
	// nearest beat index at or after / before time t.
	after := func(t float64) int {
		return sort.Search(len(beats), func(i int) bool { return beats[i].R >= t })
	}
	const reach = 1.2 // s
	for i, a := range anns {
		if a.Code != CodePWave && a.Code != CodeTWave && !isBeat(a.Code) {
			continue
		}
		on, off := math.NaN(), math.NaN()
		if i > 0 && anns[i-1].Code == CodeWaveOn && anns[i-1].Chan == a.Chan {
			on = float64(anns[i-1].Sample) / fs
		}
		if i+1 < len(anns) && anns[i+1].Code == CodeWaveOff && anns[i+1].Chan == a.Chan {
			off = float64(anns[i+1].Sample) / fs
		}
		t := float64(a.Sample) / fs
		switch {
		case isBeat(a.Code):
			k := after(t)
			if k < len(beats) && beats[k].R == t {
				beats[k].QRSOn, beats[k].QRSOff = on, off
			}
		case a.Code == CodePWave:
			k := after(t)
			if k < len(beats) && beats[k].R-t <= reach {
				beats[k].POn, beats[k].PPeak, beats[k].POff = on, t, off
			}
		case a.Code == CodeTWave:
			k := after(t) - 1
			if k >= 0 && t-beats[k].R <= reach {
				beats[k].TPeak, beats[k].TEnd = t, off
			}
		}
	}
	return beats
}
