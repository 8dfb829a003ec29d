// Package testrecord builds the invented, seeded ECG records that the
// tests of the writers and readers (CSV, JSON, EDF+, WFDB, HL7 aECG)
// round-trip: one sinusoid a lead (the lead's position as its phase) plus
// seeded Gaussian noise (math/rand/v2 PCG), with the gap patterns of
// common page layouts (3 × 4 with a rhythm strip; chest leads in one
// window). The data are synthetic test material, not physiology; only
// tests import this package.
package testrecord
