package wfdb

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"os"
	"strings"

	"tracelift/ecg"
)

// Annotation is one entry of a MIT-format annotation file.
type Annotation struct {
	Sample int64   // 0-based sample number (frame) of the annotation
	Time   float64 // Sample / fs, seconds
	Code   int     // annotation code (1 N, 5 V, 8 A, 39 '(' …)
	Symbol string  // mnemonic for Code ("N", "V", "(", …)
	Sub    int     // subtype
	Chan   int     // signal number
	Num    int     // annotator-defined number
	Aux    string  // auxiliary text (rhythm "(N" …), trailing NULs removed
}

// Annotation codes used by tracelift (ecgcodes.h).
const (
	CodeNormal  = 1  // N
	CodePVC     = 5  // V
	CodeAPC     = 8  // A
	CodeUnknown = 13 // Q
	CodePWave   = 24 // p
	CodeTWave   = 27 // t
	CodeRhythm  = 28 // +
	CodeWaveOn  = 39 // (
	CodeWaveOff = 40 // )
)

// Pseudo-codes of the MIT format.
const (
	codeSkip = 59
	codeNum  = 60
	codeSub  = 61
	codeChn  = 62
	codeAux  = 63
)

// symbols lists the mnemonics of codes 0–41 (ecgcodes.h / annot(5) of the
// WFDB Software Package; transcribed from memory, and every symbol that
// occurs in the shared reference records matches it).
var symbols = [...]string{
	0: "", 1: "N", 2: "L", 3: "R", 4: "a", 5: "V", 6: "F", 7: "J", 8: "A", 9: "S",
	10: "E", 11: "j", 12: "/", 13: "Q", 14: "~", 15: "", 16: "|", 17: "", 18: "s", 19: "T",
	20: "*", 21: "D", 22: `"`, 23: "=", 24: "p", 25: "B", 26: "^", 27: "t", 28: "+", 29: "u",
	30: "?", 31: "!", 32: "[", 33: "]", 34: "e", 35: "n", 36: "@", 37: "x", 38: "f", 39: "(",
	40: ")", 41: "r",
}

// Symbol returns the mnemonic of an annotation code ("N" for 1), or the
// code in brackets ("[42]") when it has none.
func Symbol(code int) string {
	if code >= 0 && code < len(symbols) && symbols[code] != "" {
		return symbols[code]
	}
	return fmt.Sprintf("[%d]", code)
}

// Code returns the annotation code of a mnemonic, and false if there is
// none.
func Code(symbol string) (int, bool) {
	for c, s := range symbols {
		if s != "" && s == symbol {
			return c, true
		}
	}
	return 0, false
}

// maxAnnotations bounds the number of annotations decoded from one file.
const maxAnnotations = 50_000_000

// ReadAnnotations reads a MIT-format annotation file. fs (Hz) converts
// sample numbers to Time; pass the record's sampling frequency.
func ReadAnnotations(path string, fs float64) ([]Annotation, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("wfdb: %w: %w", ecg.ErrUnreadable, err)
	}
	defer f.Close()
	a, err := DecodeAnnotations(bufio.NewReader(f), fs)
	if err != nil {
		return nil, fmt.Errorf("wfdb: %s: %w", path, err)
	}
	return a, nil
}

// DecodeAnnotations decodes a MIT-format annotation stream. Like the WFDB
// library, the chan and num fields carry over from one annotation to the
// next until a CHN or NUM word changes them; sub and aux do not. A stream
// that ends without the 0-word terminator is accepted if it ends on a
// word boundary; a stream cut inside a word or inside AUX text is an
// error wrapping ecg.ErrUnreadable.
func DecodeAnnotations(r io.Reader, fs float64) ([]Annotation, error) {
	if !(fs > 0) {
		return nil, fmt.Errorf("annotations: sampling frequency %g: %w", fs, ecg.ErrUnreadable)
	}
	var out []Annotation
	var t int64
	chn, num := 0, 0
	var w [2]byte
	word := func() (int, int, error) {
		if _, err := io.ReadFull(r, w[:]); err != nil {
			return 0, 0, err
		}
		v := int(w[0]) | int(w[1])<<8
		return v >> 10, v & 0x3FF, nil
	}
	cur := -1 // index of the annotation that pseudo-codes modify
	for {
		a, i, err := word()
		if err == io.EOF {
			return out, nil
		}
		if err != nil {
			return nil, fmt.Errorf("annotations: truncated word at annotation %d: %w", len(out), ecg.ErrUnreadable)
		}
		switch {
		case a == 0 && i == 0:
			return out, nil
		case a == codeSkip:
			var b [4]byte
			if _, err := io.ReadFull(r, b[:]); err != nil {
				return nil, fmt.Errorf("annotations: truncated SKIP at annotation %d: %w", len(out), ecg.ErrUnreadable)
			}
			hi := int32(uint32(b[0]) | uint32(b[1])<<8)
			lo := uint32(b[2]) | uint32(b[3])<<8
			t += int64(hi<<16) | int64(lo)
			if t < 0 {
				return nil, fmt.Errorf("annotations: SKIP to negative sample %d: %w", t, ecg.ErrUnreadable)
			}
		case a == codeNum:
			num = int(int8(uint8(i)))
			if cur >= 0 {
				out[cur].Num = num
			}
		case a == codeSub:
			if cur >= 0 {
				out[cur].Sub = int(int8(uint8(i)))
			}
		case a == codeChn:
			chn = i & 0xFF
			if cur >= 0 {
				out[cur].Chan = chn
			}
		case a == codeAux:
			n := i
			buf := make([]byte, n+n%2)
			if _, err := io.ReadFull(r, buf); err != nil {
				return nil, fmt.Errorf("annotations: truncated AUX text at annotation %d: %w", len(out), ecg.ErrUnreadable)
			}
			if cur >= 0 {
				out[cur].Aux = strings.TrimRight(string(buf[:n]), "\x00")
			}
		case a >= 50:
			// Codes 50–58 are reserved; skip them with their interval.
			t += int64(i)
		default:
			t += int64(i)
			if len(out) >= maxAnnotations {
				return nil, fmt.Errorf("annotations: more than %d entries: %w", maxAnnotations, ecg.ErrUnreadable)
			}
			out = append(out, Annotation{Sample: t, Time: float64(t) / fs, Code: a, Symbol: Symbol(a), Chan: chn, Num: num})
			cur = len(out) - 1
		}
	}
}

// EncodeAnnotations writes annotations in MIT format, ending with the
// 0-word terminator. Annotations must be in non-decreasing sample order;
// Chan and Num are written (as CHN/NUM words) only where they change, as
// the WFDB library does.
func EncodeAnnotations(w io.Writer, anns []Annotation) error {
	var buf bytes.Buffer
	put := func(a, i int) {
		v := uint16(a<<10 | i&0x3FF)
		buf.WriteByte(byte(v))
		buf.WriteByte(byte(v >> 8))
	}
	var t int64
	chn, num := 0, 0
	for k, an := range anns {
		if an.Code <= 0 || an.Code >= 50 {
			return fmt.Errorf("wfdb: annotation %d: code %d is not an annotation code: %w", k, an.Code, ecg.ErrOutput)
		}
		d := an.Sample - t
		if d < 0 {
			return fmt.Errorf("wfdb: annotation %d at sample %d comes before the previous one (%d): %w", k, an.Sample, t, ecg.ErrOutput)
		}
		if d > 1023 {
			if d > 1<<31-1 {
				return fmt.Errorf("wfdb: annotation %d: step %d too large: %w", k, d, ecg.ErrOutput)
			}
			put(codeSkip, 0)
			u := uint32(d)
			hi, lo := uint16(u>>16), uint16(u)
			buf.Write([]byte{byte(hi), byte(hi >> 8), byte(lo), byte(lo >> 8)})
			d = 0
		}
		put(an.Code, int(d))
		t = an.Sample
		if an.Sub != 0 {
			put(codeSub, an.Sub&0xFF)
		}
		if an.Chan != chn {
			put(codeChn, an.Chan&0xFF)
			chn = an.Chan
		}
		if an.Num != num {
			put(codeNum, an.Num&0xFF)
			num = an.Num
		}
		if an.Aux != "" {
			aux := []byte(an.Aux)
			if len(aux) > 255 {
				aux = aux[:255]
			}
			put(codeAux, len(aux))
			buf.Write(aux)
			if len(aux)%2 == 1 {
				buf.WriteByte(0)
			}
		}
	}
	put(0, 0)
	_, err := w.Write(buf.Bytes())
	if err != nil {
		return fmt.Errorf("wfdb: write annotations: %w: %w", ecg.ErrOutput, err)
	}
	return nil
}
