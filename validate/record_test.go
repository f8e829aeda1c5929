package validate

import (
	"errors"
	"testing"
)

func TestParseDirection(t *testing.T) {
	cases := []struct {
		in   string
		want Direction
		ok   bool
	}{
		{"import", DirectionImport, true},
		{"IMPORT", DirectionImport, true},
		{"Re-Export", DirectionReExport, true},
		{"re_export", DirectionReExport, true},
		{"RE EXPORT", DirectionReExport, true},
		{"reexport", DirectionReExport, true},
		{"DIRECTION_TRANSIT", DirectionTransit, true},
		{"export", DirectionExport, true},
		{"", DirectionUnspecified, true},
		{"sideways", DirectionUnspecified, false},
		{"im-port!", DirectionUnspecified, false},
	}
	for _, c := range cases {
		got, err := ParseDirection(c.in)
		if got != c.want || (err == nil) != c.ok {
			t.Errorf("ParseDirection(%q) = %v, %v; want %v, ok=%v", c.in, got, err, c.want, c.ok)
		}
		if err != nil && !errors.Is(err, ErrUnknownValue) {
			t.Errorf("ParseDirection(%q) error %v does not wrap ErrUnknownValue", c.in, err)
		}
	}
	for d := DirectionImport; d <= DirectionTransit; d++ {
		if back, err := ParseDirection(d.String()); err != nil || back != d {
			t.Errorf("ParseDirection(%q) = %v, %v; want %v", d.String(), back, err, d)
		}
	}
}

func TestParsePurpose(t *testing.T) {
	cases := map[string]Purpose{
		"Process Agent": PurposeProcessAgent,
		"process_agent": PurposeProcessAgent,
		"QPS":           PurposeQPS,
		"PURPOSE_QPS":   PurposeQPS,
		"essential-use": PurposeEssentialUse,
		"Critical Use":  PurposeCriticalUse,
		"laboratory":    PurposeLaboratory,
		"feedstock":     PurposeFeedstock,
		"destruction":   PurposeDestruction,
		"servicing":     PurposeServicing,
		"manufacturing": PurposeManufacturing,
		"other":         PurposeOther,
		"":              PurposeUnspecified,
	}
	for in, want := range cases {
		got, err := ParsePurpose(in)
		if err != nil || got != want {
			t.Errorf("ParsePurpose(%q) = %v, %v; want %v", in, got, err, want)
		}
	}
	if _, err := ParsePurpose("fun"); !errors.Is(err, ErrUnknownValue) {
		t.Errorf("ParsePurpose(fun) error = %v, want ErrUnknownValue", err)
	}
	for p := PurposeServicing; p <= purposeMax; p++ {
		if back, err := ParsePurpose(p.String()); err != nil || back != p {
			t.Errorf("ParsePurpose(%q) = %v, %v", p.String(), back, err)
		}
	}
}

func TestParseCondition(t *testing.T) {
	cases := map[string]Condition{
		"virgin": ConditionVirgin, "USED": ConditionUsed, "Recycled": ConditionRecycled,
		"CONDITION_RECLAIMED": ConditionReclaimed, "": ConditionUnspecified,
	}
	for in, want := range cases {
		got, err := ParseCondition(in)
		if err != nil || got != want {
			t.Errorf("ParseCondition(%q) = %v, %v; want %v", in, got, err, want)
		}
	}
	if _, err := ParseCondition("dirty"); !errors.Is(err, ErrUnknownValue) {
		t.Errorf("ParseCondition(dirty) error = %v", err)
	}
	if !ConditionUsed.Recovered() || ConditionVirgin.Recovered() || ConditionUnspecified.Recovered() {
		t.Error("Recovered: used/recycled/reclaimed only")
	}
}
