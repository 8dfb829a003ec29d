// Package wfdb reads and writes PhysioNet WFDB records: the header (.hea),
// signal files in formats 16 and 212 (plus the common 8-, 24- and 32-bit
// variants on reading) and MIT-format annotation files (.atr and the like).
//
// The formats follow the WFDB man pages header(5), signal(5) and annot(5)
// of the WFDB Software Package (Moody GB, PhysioNet), summarised in the
// project's reference notes (standards.md §5.2):
//
//   - physical value = (digital − baseline) / gain, gain in ADC units per
//     physical unit (200 when the header gives 0 or nothing), baseline
//     defaulting to the ADC zero;
//   - format 16: 16-bit two's complement, least significant byte first;
//     format 212: two 12-bit two's-complement samples packed in 3 bytes;
//     samples of the signals that share a file are interleaved frame by
//     frame;
//   - the invalid ("missing") sample is −32768 in format 16 and −2048 in
//     format 212; it reads as NaN and NaN is written as it;
//   - header checksum = 16-bit wrapping sum of all samples of a signal,
//     initial value = its first sample; the reader verifies both and
//     reports a mismatch as a warning;
//   - annotations: 16-bit words, top 6 bits code, low 10 bits the sample
//     step, with the SKIP/NUM/SUB/CHN/AUX pseudo-codes; the code table is
//     the one in the WFDB library's ecgcodes.h (codes 1–41, transcribed
//     from memory and checked against the symbols in the shared reference
//     records).
//
// Library functions never print; bad input gives an error naming the file
// and wrapping ecg.ErrUnreadable.
package wfdb
