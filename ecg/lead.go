package ecg

import (
	"fmt"
	"strings"
)

// Lead identifies an ECG lead. The zero value is LeadUnknown.
type Lead int

// The standard twelve leads first, in their conventional order, then
// right-sided and posterior chest leads, then the orthogonal Frank leads.
const (
	LeadUnknown Lead = iota
	LeadI
	LeadII
	LeadIII
	LeadAVR
	LeadAVL
	LeadAVF
	LeadV1
	LeadV2
	LeadV3
	LeadV4
	LeadV5
	LeadV6
	LeadV3R
	LeadV4R
	LeadV5R
	LeadV6R
	LeadV7
	LeadV8
	LeadV9
	LeadX
	LeadY
	LeadZ
	numLeads
)

var leadNames = [numLeads]string{
	"?", "I", "II", "III", "aVR", "aVL", "aVF",
	"V1", "V2", "V3", "V4", "V5", "V6",
	"V3R", "V4R", "V5R", "V6R", "V7", "V8", "V9",
	"X", "Y", "Z",
}

// Standard12 lists the twelve standard leads in conventional order.
var Standard12 = []Lead{
	LeadI, LeadII, LeadIII, LeadAVR, LeadAVL, LeadAVF,
	LeadV1, LeadV2, LeadV3, LeadV4, LeadV5, LeadV6,
}

// LimbLeads lists the six frontal-plane leads.
var LimbLeads = []Lead{LeadI, LeadII, LeadIII, LeadAVR, LeadAVL, LeadAVF}

// String returns the lead's standard name ("I", "aVR", "V1", …).
func (l Lead) String() string {
	if l < 0 || l >= numLeads {
		return fmt.Sprintf("Lead(%d)", int(l))
	}
	return leadNames[l]
}

// Valid reports whether l names a known lead.
func (l Lead) Valid() bool { return l > LeadUnknown && l < numLeads }

// IsLimb reports whether l is one of the six frontal-plane leads.
func (l Lead) IsLimb() bool { return l >= LeadI && l <= LeadAVF }

// Index returns the lead's position in Standard12, or -1 for other leads.
func (l Lead) Index() int {
	if l >= LeadI && l <= LeadV6 {
		return int(l - LeadI)
	}
	return -1
}

// aliases maps lower-case spellings found in files to leads.
var aliases = map[string]Lead{
	"d1": LeadI, "d2": LeadII, "d3": LeadIII,
	"lead i": LeadI, "lead ii": LeadII, "lead iii": LeadIII,
	"mlii": LeadII, "mli": LeadI, "mliii": LeadIII,
	"-avr": LeadUnknown,
	"vx":   LeadX, "vy": LeadY, "vz": LeadZ,
}

// ParseLead reads a lead name case-insensitively, accepting the standard
// names ("I", "aVR", "V1", "V4R") and common spellings in files
// ("ECG I", "avr", "MLII", "D2"). Modified leads such as MLII map to the
// lead they approximate. It returns an error for anything else.
func ParseLead(s string) (Lead, error) {
	t := strings.ToLower(strings.TrimSpace(s))
	t = strings.TrimPrefix(t, "ecg ")
	t = strings.TrimPrefix(t, "ecg")
	t = strings.TrimSpace(t)
	for l := LeadI; l < numLeads; l++ {
		if strings.ToLower(leadNames[l]) == t {
			return l, nil
		}
	}
	if l, ok := aliases[t]; ok && l != LeadUnknown {
		return l, nil
	}
	return LeadUnknown, fmt.Errorf("ecg: unknown lead name %q", s)
}
