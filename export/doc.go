// Package export writes and reads tracelift's open file formats and builds
// the JSON report.
//
//   - CSV (this package): a time_s column and one column per lead, the
//     twelve standard leads always present in conventional order (I, II,
//     III, aVR, aVL, aVF, V1–V6), values in mV with 4 decimals (0.1 µV), an
//     empty cell where a lead was not recorded; lines end in LF.
//   - JSON report (this package): Report, versioned, with calibration and
//     its origins, per-lead quality, the limb-lead self-check residual and
//     the measurements of package measure, plus the caution text.
//   - EDF+ (package export/edf, Kemp & Olivan 2003), WFDB (package
//     export/wfdb, PhysioNet header(5)/signal(5)/annot(5)), HL7 aECG
//     (package export/aecg) and overlay pictures (package export/overlay).
//
// ReadRecord opens CSV, WFDB and EDF/EDF+ files by extension and content.
// Every writer has a plain form that writes to an io.Writer and a File
// form that writes atomically (temporary file in the same folder, then
// rename; on error no file is left behind). This package imports no image
// packages.
package export
