// Package accuracy scores digitised pages against their ground truth and
// summarises the scores per test condition: the project's reproducible
// accuracy benchmark (the eval command) and the demo's accuracy line.
//
// Per page it records per-lead signal-to-noise ratios in two variants —
// aligned (one time shift per page within ±60 ms and per-lead mean removal,
// a lead not returned scoring 0 dB) and strict (the PhysioNet/CinC
// Challenge 2024 definition, SNR = 10·log10(Σx² / Σ(y − x)²) with no shift
// and no offset removal; Reyna et al., Computing in Cardiology 2024;51,
// and the Challenge's evaluate_model.py) — leads found, lead swaps,
// calibration errors and interval errors against the synthetic fiducials.
//
// Percentiles use linear interpolation between order statistics (Hyndman
// and Fan, The American Statistician 1996;50:361–5, definition 7, the
// default of R and NumPy).
package accuracy
