package ecg

import "testing"

func TestParseLeadRoundTrip(t *testing.T) {
	for l := LeadI; l < numLeads; l++ {
		for _, s := range []string{l.String(), " " + l.String() + " ", "ECG " + l.String(), "ecg" + l.String()} {
			got, err := ParseLead(s)
			if err != nil || got != l {
				t.Errorf("ParseLead(%q) = %v, %v; want %v", s, got, err, l)
			}
		}
	}
}

func TestParseLeadSpellings(t *testing.T) {
	cases := []struct {
		in   string
		want Lead
	}{
		{"avr", LeadAVR}, {"AVL", LeadAVL}, {"aVf", LeadAVF},
		{"i", LeadI}, {"ii", LeadII}, {"III", LeadIII},
		{"v1", LeadV1}, {"V6", LeadV6}, {"v4r", LeadV4R}, {"V9", LeadV9},
		{"MLII", LeadII}, {"MLI", LeadI}, {"mliii", LeadIII},
		{"D1", LeadI}, {"D2", LeadII}, {"d3", LeadIII},
		{"Lead II", LeadII}, {"lead iii", LeadIII},
		{"vx", LeadX}, {"VY", LeadY}, {"z", LeadZ},
		{"ECG V2", LeadV2}, {"ECG aVR", LeadAVR},
	}
	for _, c := range cases {
		got, err := ParseLead(c.in)
		if err != nil || got != c.want {
			t.Errorf("ParseLead(%q) = %v, %v; want %v", c.in, got, err, c.want)
		}
	}
	for _, bad := range []string{"", "?", "V10", "aV", "-aVR", "lead", "ECG", "foo", "V3L"} {
		if l, err := ParseLead(bad); err == nil {
			t.Errorf("ParseLead(%q) = %v, want an error", bad, l)
		}
	}
}

func TestLeadProperties(t *testing.T) {
	if LeadUnknown.Valid() || !LeadV6.Valid() || Lead(99).Valid() || Lead(-1).Valid() {
		t.Error("Valid")
	}
	if Lead(99).String() != "Lead(99)" || LeadAVR.String() != "aVR" {
		t.Errorf("String: %q %q", Lead(99).String(), LeadAVR.String())
	}
	for i, l := range Standard12 {
		if l.Index() != i {
			t.Errorf("%v.Index() = %d, want %d", l, l.Index(), i)
		}
		if l.IsLimb() != (i < 6) {
			t.Errorf("%v.IsLimb() = %v", l, l.IsLimb())
		}
	}
	if LeadV4R.Index() != -1 || LeadX.IsLimb() {
		t.Error("non-standard leads")
	}
}
