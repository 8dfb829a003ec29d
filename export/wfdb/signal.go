package wfdb

import (
	"fmt"
	"math"
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

func defaultADCRes(format int) int {
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

// invalidValue returns the digital value that marks an invalid (missing)
// sample in a format (WFDB_INVALID_SAMPLE and the per-format table of the
// WFDB Python package).
func invalidValue(format int) int {
	switch format {
	case 80:
		return -128
	case 212:
		return -2048
	case 24:
		return -(1 << 23)
	case 32:
		return math.MinInt32
	}
	return -32768
}

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
		st, err := os.Stat(p)
		if err != nil {
			return nil, fmt.Errorf("signal file: %w: %w", ecg.ErrUnreadable, err)
		}
		size := st.Size() - g.offset
		if size < 0 {
			size = 0
		}
		if size > maxSignalBytes {
			return nil, fmt.Errorf("signal file %s is larger than %d bytes: %w", p, int64(maxSignalBytes), ecg.ErrUnreadable)
		}
		ns := int64(len(g.signals))
		frames := nsamp
		if frames == 0 {
			frames = size * 8 / int64(bitsPerSample(g.format)) / ns
		}
		if frames > maxSignalBytes*8/int64(bitsPerSample(g.format))/ns {
			return nil, fmt.Errorf("signal file %s is truncated: header announces %d samples of %d signals, file holds %d bytes: %w",
				p, frames, ns, size, ecg.ErrUnreadable)
		}
		need := byteLen(frames*ns, g.format)
		if size < need {
			return nil, fmt.Errorf("signal file %s is truncated: %d bytes, header needs %d for %d samples of %d signals: %w",
				p, size, need, frames, ns, ecg.ErrUnreadable)
		}
		f, err := os.Open(p)
		if err != nil {
			return nil, fmt.Errorf("signal file: %w: %w", ecg.ErrUnreadable, err)
		}
		buf := make([]byte, need)
		_, err = f.ReadAt(buf, g.offset)
		f.Close()
		if err != nil {
			return nil, fmt.Errorf("signal file %s: %w: %w", p, ecg.ErrUnreadable, err)
		}
		all := make([]int, frames*ns)
		decode(all, buf, g.format)
		for k, si := range g.signals {
			col := make([]int, frames)
			for t := int64(0); t < frames; t++ {
				col[t] = all[t*ns+int64(k)]
			}
			out[si] = col
		}
		if nsamp == 0 {
			nsamp = frames
		}
	}
	for i := range h.Signals {
		s := &h.Signals[i]
		d := out[i]
		if s.HasInitVal && len(d) > 0 && d[0] != s.InitVal {
			h.Warnings = append(h.Warnings, fmt.Sprintf("signal %d (%s): first sample %d, header initial value %d", i, s.Description, d[0], s.InitVal))
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
	phys := make([][]float64, len(dig))
	for i, d := range dig {
		s := &h.Signals[i]
		p := make([]float64, len(d))
		for t, v := range d {
			p[t] = s.Physical(v)
		}
		phys[i] = p
	}
	return h, phys, nil
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
	return rec, h, nil
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
