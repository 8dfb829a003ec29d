// Package ecg is tracelift's shared record model: lead identities, signals
// in millivolts on a common time base, records with their metadata, the
// lead-system identities of Einthoven and Goldberger, and resampling to a
// uniform rate.
//
// The package is a leaf: it imports only the standard library, so the
// image pipeline, the measurement core and the file formats can all share
// it without importing each other.
//
// Lead relations (common practice; see any electrocardiography text):
//
//	III = II − I                 (Einthoven: II = I + III)
//	aVR = −(I + II)/2
//	aVL = I − II/2
//	aVF = II − I/2               (Goldberger's augmented leads)
package ecg
