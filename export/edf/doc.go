// Package edf writes and reads EDF+ files (European Data Format, Kemp B,
// Värri A, Rosa AC, Nielsen KD, Gade J, Clin Neurophysiol 1992; EDF+,
// Kemp B, Olivan J, Clin Neurophysiol 2003;114:1755–61), as summarised in
// the project's reference notes (standards.md §5.1).
//
// Writing produces EDF+C (contiguous) files:
//
//   - a 256-byte fixed header and 256 bytes per signal, printable ASCII,
//     left-justified and space-padded, numbers with '.' as decimal point;
//   - one signal per lead labelled "ECG <lead>" in mV, plus the
//     "EDF Annotations" signal that EDF+ requires;
//   - scaling: digital −32767…32767 maps to a symmetric physical range
//     ±P mV, P the smallest of {1, 2, 5} × 10^k not below the lead's
//     largest magnitude. The step is P/32767 mV: 0.15 µV for P = 5 mV and
//     1 µV for P = 32.767 mV, so the quantisation error is at most half
//     that (≤ 0.5 µV for any lead within ±32 mV);
//   - a sample where the lead was not recorded (NaN) is written as
//     −32768, one below the declared digital minimum, and each such gap
//     is also listed as an annotation "no signal <lead>" with its
//     duration. The reader turns out-of-range digital values back into
//     NaN. The file stays EDF+C because the time axis itself has no gaps;
//   - annotations (TALs, "+onset[\x15duration]\x14text\x14…\x00") carry
//     the beats (text = the beat class letter, N/V/A/Q, at the R time) and
//     wave boundaries ("P on", "P peak", "P off", "QRS on", "QRS off",
//     "T peak", "T end"); every data record starts with its time-keeping
//     TAL "+<record start>\x14\x14\x00";
//   - patient and recording identification are anonymised by default with
//     the EDF+ 'X' convention ("X X X X", "Startdate X X X X"); Options
//     fill them;
//   - data-record duration 1 s, or shorter if a record would exceed
//     61,440 bytes or the sample rate is not a whole number per second.
//
// Reading accepts EDF and EDF+ (C and D): for EDF+D, each record is placed
// at the time of its time-keeping TAL and the gaps between records read as
// NaN.
package edf
