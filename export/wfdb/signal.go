package wfdb

import (
	"fmt"
	"os"
	"path/filepath"
	"time"

	"tracelift/ecg"
)

// maxSignalBytes bounds one signal file read into memory (a 24-hour
// 12-lead record at 500 Hz in format 16 is about 1 GB; refuse beyond 2 GB).
const maxSignalBytes = 2 << 30

func supportedFormat(f int) bool {
	switch f {
	case 16, 61, 80, 160, 212, 24, 32:
		return true
	}
	return false
}

// bitsPerSample returns the storage size of one sample in bits.
func bitsPerSample(format int) int {
	switch format {
	case 80:
		return 8
	case 212:
		return 12
	case 24:
		return 24
	case 32:
		return 32
	}
	return 16
}

// defaultADCRes returns the ADC resolution (bits) a header implies when it
// gives none: the stored width of the format (header(5): 8 for format 80,
// 12 for 212, 16 otherwise; 24 and 32 for those formats).
func defaultADCRes(format int) int { return bitsPerSample(format) }

// invalidValue returns the digital value that marks an invalid (missing)
// sample in a format (WFDB_INVALID_SAMPLE and the per-format table of the
// WFDB Python package): the most negative value of the stored width.
func invalidValue(format int) int { return -1 << (bitsPerSample(format) - 1) }

// decode unpacks n samples stored in format from b into dst (which must
// hold n values). b must hold enough bytes (see frameBytes).
func decode(dst []int, b []byte, format int) {
	n := len(dst)
	switch format {
	case 16:
		for i := 0; i < n; i++ {
			dst[i] = int(int16(uint16(b[2*i]) | uint16(b[2*i+1])<<8))
		}
	case 61:
		for i := 0; i < n; i++ {
			dst[i] = int(int16(uint16(b[2*i+1]) | uint16(b[2*i])<<8))
		}
	case 160:
		for i := 0; i < n; i++ {
			dst[i] = int(uint16(b[2*i])|uint16(b[2*i+1])<<8) - 32768
		}
	case 80:
		for i := 0; i < n; i++ {
			dst[i] = int(b[i]) - 128
		}
	case 24:
		for i := 0; i < n; i++ {
			v := int32(uint32(b[3*i]) | uint32(b[3*i+1])<<8 | uint32(b[3*i+2])<<16)
			dst[i] = int(v<<8) >> 8
		}
	case 32:
		for i := 0; i < n; i++ {
			dst[i] = int(int32(uint32(b[4*i]) | uint32(b[4*i+1])<<8 | uint32(b[4*i+2])<<16 | uint32(b[4*i+3])<<24))
		}
	case 212:
		for i := 0; i < n; i += 2 {
			j := 3 * (i / 2)
			s0 := int(b[j]) | int(b[j+1]&0x0F)<<8
			dst[i] = int(int32(s0<<20) >> 20) // sign-extend 12 bits
			if i+1 < n {
				s1 := int(b[j+2]) | int(b[j+1]&0xF0)<<4
				dst[i+1] = int(int32(s1<<20) >> 20)
			}
		}
	default:
		panic(fmt.Sprintf("wfdb: decode: unsupported format %d", format))
	}
}

// byteLen returns the bytes needed to store n samples in format.
func byteLen(n int64, format int) int64 {
	bits := int64(bitsPerSample(format))
	return (n*bits + 7) / 8
}

// fileGroup is the set of header signals stored in one file.
type fileGroup struct {
	file    string
	format  int
	offset  int64
	signals []int // indices into Header.Signals, in frame order
}

func groups(h *Header) ([]fileGroup, error) {
	var gs []fileGroup
	idx := map[string]int{}
	for i := range h.Signals {
		s := &h.Signals[i]
		k, ok := idx[s.File]
		if !ok {
			idx[s.File] = len(gs)
			gs = append(gs, fileGroup{file: s.File, format: s.Format, offset: s.ByteOffset})
			k = len(gs) - 1
		}
		g := &gs[k]
		if g.format != s.Format {
			return nil, fmt.Errorf("signals in %s mix formats %d and %d: %w", s.File, g.format, s.Format, ecg.ErrUnreadable)
		}
		g.signals = append(g.signals, i)
	}
	return gs, nil
}

// groupFrames returns the number of frames in a file group: the
// header's count, or what the file holds when the header gives none. It
// checks the file is long enough.
func groupFrames(p string, g *fileGroup, nsamp int64) (frames, size int64, err error) {
	st, err := os.Stat(p)
	if err != nil {
		return 0, 0, fmt.Errorf("signal file: %w: %w", ecg.ErrUnreadable, err)
	}
	size = max(st.Size()-g.offset, 0)
	if size > maxSignalBytes {
		return 0, 0, fmt.Errorf("signal file %s is larger than %d bytes: %w", p, int64(maxSignalBytes), ecg.ErrUnreadable)
	}
	ns := int64(len(g.signals))
	frames = nsamp
	if frames == 0 {
		frames = size * 8 / int64(bitsPerSample(g.format)) / ns
	}
	if frames > maxSignalBytes*8/int64(bitsPerSample(g.format))/ns {
		return 0, 0, fmt.Errorf("signal file %s is truncated: header announces %d samples of %d signals, file holds %d bytes: %w",
			p, frames, ns, size, ecg.ErrUnreadable)
	}
	if need := byteLen(frames*ns, g.format); size < need {
		return 0, 0, fmt.Errorf("signal file %s is truncated: %d bytes, header needs %d for %d samples of %d signals: %w",
			p, size, need, frames, ns, ecg.ErrUnreadable)
	}
	return frames, size, nil
}

// readGroup reads frames [from, from+n) of a file group (the caller has
// checked they exist) and returns one column per signal of the group.
func readGroup(p string, g *fileGroup, from, n int64) ([][]int, error) {
	ns := int64(len(g.signals))
	// Format 212 packs two samples in 3 bytes: start on an even sample.
	s0 := from * ns
	lead := int64(0)
	if g.format == 212 && s0%2 == 1 {
		s0--
		lead = 1
	}
	cnt := n*ns + lead
	off := g.offset + s0*int64(bitsPerSample(g.format))/8
	buf := make([]byte, byteLen(cnt, g.format))
	f, err := os.Open(p)
	if err != nil {
		return nil, fmt.Errorf("signal file: %w: %w", ecg.ErrUnreadable, err)
	}
	_, err = f.ReadAt(buf, off)
	f.Close()
	if err != nil {
		return nil, fmt.Errorf("signal file %s: %w: %w", p, ecg.ErrUnreadable, err)
	}
	all := make([]int, cnt)
	decode(all, buf, g.format)
	all = all[lead:]
	cols := make([][]int, ns)
	for k := range cols {
		col := make([]int, n)
		for t := int64(0); t < n; t++ {
			col[t] = all[t*ns+int64(k)]
		}
		cols[k] = col
	}
	return cols, nil
}

// ReadDigital reads every signal of the record described by h, whose
// header lives in dir, and returns the digital samples per signal
// (len(h.Signals) slices, each of the record's length). It checks initial
// values and checksums and appends any mismatch to h.Warnings.
func ReadDigital(dir string, h *Header) ([][]int, error) {
	gs, err := groups(h)
	if err != nil {
		return nil, err
	}
	out := make([][]int, len(h.Signals))
	nsamp := h.NSamp
	for gi := range gs {
		g := &gs[gi]
		p := filepath.Join(dir, g.file)
		frames, _, err := groupFrames(p, g, nsamp)
		if err != nil {
			return nil, err
		}
		cols, err := readGroup(p, g, 0, frames)
		if err != nil {
			return nil, err
		}
		for k, si := range g.signals {
			out[si] = cols[k]
		}
		if nsamp == 0 {
			nsamp = frames
		}
	}
	for i := range h.Signals {
		s := &h.Signals[i]
		d := out[i]
		if s.HasInitVal && len(d) > 0 && d[0] != s.InitVal {
			h.Warnings = append(h.Warnings, initValueWarning(i, s, d[0]))
		}
		if s.HasChecksum {
			var sum int16
			for _, v := range d {
				sum += int16(v)
			}
			if int(sum) != s.Checksum {
				h.Warnings = append(h.Warnings, fmt.Sprintf("signal %d (%s): checksum %d, header says %d", i, s.Description, sum, s.Checksum))
			}
		}
		if s.Skew > 0 && len(d) > 0 {
			// A skewed signal is delayed by Skew frames: sample t belongs
			// to frame t − Skew. Shift it back and mark the tail invalid.
			inv := invalidValue(s.Format)
			copy(d, d[min(s.Skew, len(d)):])
			for t := max(0, len(d)-s.Skew); t < len(d); t++ {
				d[t] = inv
			}
		}
	}
	if h.NSamp == 0 {
		h.NSamp = nsamp
	}
	return out, nil
}

// ReadSegment reads frames [from, from+n) of a record into an ecg.Record
// (as ReadRecord does for the whole record), reading only those bytes of
// the signal files, so that a window of a 24-hour record costs what the
// window costs. Signal.Start is from/fs. n ≤ 0 or a window past the end is
// cut to the record's length. Checksums cannot be verified on a segment;
// the initial value is checked when from is 0.
func ReadSegment(heaPath string, from, n int64) (ecg.Record, *Header, error) {
	h, err := ReadHeader(heaPath)
	if err != nil {
		return ecg.Record{}, nil, err
	}
	wrap := func(err error) error { return fmt.Errorf("wfdb: %s: %w", heaPath, err) }
	if from < 0 {
		return ecg.Record{}, h, wrap(fmt.Errorf("segment start %d is negative: %w", from, ecg.ErrUnreadable))
	}
	gs, err := groups(h)
	if err != nil {
		return ecg.Record{}, h, wrap(err)
	}
	dir := filepath.Dir(heaPath)
	dig := make([][]int, len(h.Signals))
	nsamp := h.NSamp
	for gi := range gs {
		g := &gs[gi]
		p := filepath.Join(dir, g.file)
		frames, _, err := groupFrames(p, g, nsamp)
		if err != nil {
			return ecg.Record{}, h, wrap(err)
		}
		if nsamp == 0 {
			nsamp = frames
		}
		skew := 0
		for _, si := range g.signals {
			skew = max(skew, h.Signals[si].Skew)
		}
		m := n
		if m <= 0 || from+m > frames {
			m = max(frames-from, 0)
		}
		extra := min(int64(skew), frames-from-m)
		cols, err := readGroup(p, g, from, m+max(extra, 0))
		if err != nil {
			return ecg.Record{}, h, wrap(err)
		}
		for k, si := range g.signals {
			d := cols[k]
			if sk := int64(h.Signals[si].Skew); sk > 0 {
				inv := invalidValue(g.format)
				sh := make([]int, m)
				for t := range sh {
					if t+int(sk) < len(d) {
						sh[t] = d[t+int(sk)]
					} else {
						sh[t] = inv
					}
				}
				d = sh
			}
			dig[si] = d[:m]
		}
	}
	if h.NSamp == 0 {
		h.NSamp = nsamp
	}
	for i := range h.Signals {
		s := &h.Signals[i]
		if from == 0 && s.HasInitVal && len(dig[i]) > 0 && s.Skew == 0 && dig[i][0] != s.InitVal {
			h.Warnings = append(h.Warnings, initValueWarning(i, s, dig[i][0]))
		}
	}
	rec := toRecord(heaPath, h, physical(h, dig))
	for i := range rec.Signals {
		rec.Signals[i].Start = float64(from) / h.Fs
	}
	return rec, h, nil
}

// ReadSignals reads a record and returns every signal in physical units
// (NaN for invalid samples), one slice per header signal line.
func ReadSignals(heaPath string) (*Header, [][]float64, error) {
	h, err := ReadHeader(heaPath)
	if err != nil {
		return nil, nil, err
	}
	dig, err := ReadDigital(filepath.Dir(heaPath), h)
	if err != nil {
		return nil, nil, fmt.Errorf("wfdb: %s: %w", heaPath, err)
	}
	return h, physical(h, dig), nil
}

// physical converts the digital samples of each of h's signals to its
// physical units (NaN for invalid samples).
func physical(h *Header, dig [][]int) [][]float64 {
	phys := make([][]float64, len(dig))
	for i, d := range dig {
		s := &h.Signals[i]
		p := make([]float64, len(d))
		for t, v := range d {
			p[t] = s.Physical(v)
		}
		phys[i] = p
	}
	return phys
}

// initValueWarning is the warning for signal i, s, whose first stored
// sample first differs from the header's initial value.
func initValueWarning(i int, s *SignalSpec, first int) string {
	return fmt.Sprintf("signal %d (%s): first sample %d, header initial value %d", i, s.Description, first, s.InitVal)
}

// ReadRecord reads a WFDB record into an ecg.Record, in millivolts.
// Signals whose description names an ECG lead (ecg.ParseLead: "MLII" → II,
// "vx" → X…) become the record's signals; the others (and any second
// signal for a lead already taken) stay out of the Record and can be read
// with ReadSignals. Signals in µV or V are converted to mV. The returned
// Header carries every signal line, and Warnings lists failed
// initial-value or checksum checks (also copied to Record.Meta.Notes).
func ReadRecord(heaPath string) (ecg.Record, *Header, error) {
	h, phys, err := ReadSignals(heaPath)
	if err != nil {
		return ecg.Record{}, h, err
	}
	return toRecord(heaPath, h, phys), h, nil
}

// toRecord builds the Record from physical signals (see ReadRecord).
func toRecord(heaPath string, h *Header, phys [][]float64) ecg.Record {
	rec := ecg.Record{Meta: ecg.Metadata{Source: filepath.Base(heaPath), Acquired: h.Start}}
	for i := range h.Signals {
		s := &h.Signals[i]
		l := s.Lead()
		if l == ecg.LeadUnknown || rec.Signal(l) != nil {
			continue
		}
		scale, ok := toMV(s.Units)
		if !ok {
			continue
		}
		v := phys[i]
		if scale != 1 {
			for k := range v {
				v[k] *= scale
			}
		}
		rec.Set(ecg.Signal{Lead: l, SampleRate: h.Fs, Samples: v})
	}
	rec.Meta.Notes = append(rec.Meta.Notes, h.Warnings...)
	return rec
}

// toMV returns the factor converting a WFDB unit string to millivolts.
func toMV(units string) (float64, bool) {
	switch units {
	case "mV", "mv", "MV", "":
		return 1, true
	case "uV", "uv", "µV", "μV":
		return 1e-3, true
	case "V":
		return 1e3, true
	}
	return 0, false
}

// startTime is a helper for writers: the header time and date strings of t.
func startTime(t time.Time) (string, string) {
	if t.IsZero() {
		return "", ""
	}
	return t.Format("15:04:05"), t.Format("02/01/2006")
}
