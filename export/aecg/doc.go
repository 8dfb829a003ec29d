// Package aecg writes HL7 v3 annotated ECG (aECG) XML documents (HL7 aECG
// Release 1, schema PORT_MT020001; structure as summarised in the
// project's reference notes, standards.md §5.3).
//
// Document layout: an AnnotatedECG root in the urn:hl7-org:v3 namespace
// with id, code 93000 (CPT-4, "electrocardiogram, routine, with at least
// 12 leads"), effectiveTime, the subject chain componentOf/timepointEvent/
// componentOf/subjectAssignment/subject/trialSubject (anonymous "X" by
// default), and one component/series of type RHYTHM. The series holds one
// sequenceSet per recording window: a TIME_ABSOLUTE sequence (GLIST_TS
// with head and increment) and one SLIST_PQ sequence per lead (origin and
// scale in µV, integer digits) with MDC_ECG_LEAD_* codes from the MDC
// code system 2.16.840.1.113883.6.24. Beats and wave boundaries, and the
// global intervals when given, go into subjectOf/annotationSet.
//
// Missing samples: aECG has no "not recorded" value, so each lead is
// written only over the stretches where it was recorded. The leads are
// split into runs of recorded samples; runs with the same start and end
// share a sequenceSet whose time sequence starts at that run's first
// sample. On a 3 × 4 page this gives one sequenceSet per column (I, II,
// III; aVR, aVL, aVF; V1–V3; V4–V6) and one for the full-length rhythm
// strip.
//
// The MDC lead and annotation code spellings (MDC_ECG_LEAD_I,
// MDC_ECG_WAVC_PWAVE, MDC_ECG_TIME_PD_QT …) and the ROIFULL/IVL_TS
// boundary form are written from memory of the aECG implementation
// guide; the structure was checked by parsing the output back and by
// biosig's aECG reader.
package aecg
