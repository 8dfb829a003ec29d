// Package synth generates seeded synthetic 12-lead ECGs whose true beat
// fiducials are known, the ground truth for tests of the image pipeline
// and of the measurement code.
//
// # Model
//
// The waveform follows the dynamical model of McSharry, Clifford, Tarassenko
// and Smith, "A dynamical model for generating synthetic electrocardiogram
// signals", IEEE Trans. Biomed. Eng. 50(3):289–294, 2003: each beat is a sum
// of Gaussian waves (P, Q, R, S, T) placed on the cardiac cycle, wave
// positions and widths tie to the length of the beat's RR interval, and the
// RR tachogram has McSharry's bimodal spectrum (Mayer-wave peak at 0.1 Hz,
// respiratory peak at 0.25 Hz, both 0.01 Hz wide, LF/HF power ratio 0.5).
// We use the model's closed-form phase-domain solution (the Gaussian sum
// itself, without the relaxation term that pulls z back to baseline), so
// every wave's centre and width are known exactly.
//
// Following the multichannel extension of Sameni and colleagues (Sameni,
// Clifford, Jutten and Shamsollahi, IEEE Trans. Biomed. Eng.
// 54(12):2172–2185, 2007; the three-dimensional dipole form is, from
// memory, set out in Sameni, Shamsollahi, Jutten and Clifford, EURASIP J.
// Adv. Signal Process. 2007, article 43407; both citations unverified),
// each Gaussian carries a three-dimensional amplitude: the
// model drives a heart vector in the Frank axes (X toward the patient's
// left, Y toward the feet, Z toward the back). Leads are projections of the
// vector:
//
//   - Leads I and II use the ideal Einthoven triangle (I along 0°, II along
//     +60° in the frontal plane, common practice; standards.md §1.3) scaled
//     by 0.7; III, aVR, aVL and aVF are then derived with ecg.DeriveLimb so
//     Einthoven's and Goldberger's laws hold exactly, noise included.
//   - V1–V6 use Dower's transform from the Frank leads (Dower, Machado and
//     Osborne, Clin. Cardiol. 3:87–95, 1980, as tabulated by Edenbrandt and
//     Pahlm, J. Electrocardiol. 21:361–367, 1988; coefficients from memory).
//
// The frontal QRS axis is set by rotating the QRS and T vectors in the
// frontal plane until the net QRS amplitudes of I and aVF give the requested
// axis with θ = atan2(2·aVF, √3·I) (standards.md §2.3).
//
// # Intervals and fiducials
//
// Each wave group (P, QRS, T) of a beat is a time-scaled copy of a template.
// A group's onset and offset are where its envelope — the largest absolute
// value the group alone produces in any of the twelve leads — rises above
// and falls back below 5 % of the envelope's peak: the global earliest-onset,
// latest-offset definition of standards.md §4.4 applied to the group in
// isolation. PPeak and TPeak are the envelope maxima; R is the centre of the
// main QRS Gaussian (for a ventricular beat, the centre of its two broad
// lobes). The QRS template is scaled so QRSOff − QRSOn equals the
// requested QRS duration, the P group is placed so QRSOn − POn equals PR,
// and the T group so TEnd − QRSOn equals QT.
//
// QT scales with the preceding RR interval by Fridericia's cube-root law
// (QT = QTc·RR^(1/3), Fridericia 1920; standards.md §2.2) — the shortening
// of the cycle McSharry's model obtains by placing waves at fixed phases,
// with the strength of the scaling taken from the QT literature; the
// default QT is that of a QTc of 400 ms at the requested rate.
//
// Optional respiratory modulation scales each beat's amplitude by a slow
// sine at a breathing rate of 12–20 per minute (common practice: breathing
// shifts the heart against the electrodes).
//
// Premature ventricular beats are wide, have no P wave and a T wave opposite
// to the QRS, and are followed by a compensatory pause; premature atrial
// beats come early with an ectopic P wave and reset the sinus rhythm.
package synth
