package validate

import (
	"errors"
	"testing"

	"github.com/halovet/halovet/terms"
)

func TestParseDirection(t *testing.T) {
	cases := []struct {
		in   string
		want terms.Direction
		ok   bool
	}{
		{"import", terms.DirectionImport, true},
		{"IMPORT", terms.DirectionImport, true},
		{"Re-Export", terms.DirectionReExport, true},
		{"re_export", terms.DirectionReExport, true},
		{"RE EXPORT", terms.DirectionReExport, true},
		{"reexport", terms.DirectionReExport, true},
		{"DIRECTION_TRANSIT", terms.DirectionTransit, true},
		{"export", terms.DirectionExport, true},
		{"", terms.DirectionUnspecified, true},
		{"sideways", terms.DirectionUnspecified, false},
		{"im-port!", terms.DirectionUnspecified, false},
	}
	for _, c := range cases {
		got, err := terms.ParseDirection(c.in)
		if got != c.want || (err == nil) != c.ok {
			t.Errorf("terms.ParseDirection(%q) = %v, %v; want %v, ok=%v", c.in, got, err, c.want, c.ok)
		}
		if err != nil && !errors.Is(err, terms.ErrUnknownValue) {
			t.Errorf("terms.ParseDirection(%q) error %v does not wrap terms.ErrUnknownValue", c.in, err)
		}
	}
	for d := terms.DirectionImport; d <= terms.DirectionTransit; d++ {
		if back, err := terms.ParseDirection(d.String()); err != nil || back != d {
			t.Errorf("terms.ParseDirection(%q) = %v, %v; want %v", d.String(), back, err, d)
		}
	}
}

func TestParsePurpose(t *testing.T) {
	cases := map[string]terms.Purpose{
		"Process Agent": terms.PurposeProcessAgent,
		"process_agent": terms.PurposeProcessAgent,
		"QPS":           terms.PurposeQPS,
		"PURPOSE_QPS":   terms.PurposeQPS,
		"essential-use": terms.PurposeEssentialUse,
		"Critical Use":  terms.PurposeCriticalUse,
		"laboratory":    terms.PurposeLaboratory,
		"feedstock":     terms.PurposeFeedstock,
		"destruction":   terms.PurposeDestruction,
		"servicing":     terms.PurposeServicing,
		"manufacturing": terms.PurposeManufacturing,
		"other":         terms.PurposeOther,
		"":              terms.PurposeUnspecified,
	}
	for in, want := range cases {
		got, err := terms.ParsePurpose(in)
		if err != nil || got != want {
			t.Errorf("terms.ParsePurpose(%q) = %v, %v; want %v", in, got, err, want)
		}
	}
	if _, err := terms.ParsePurpose("fun"); !errors.Is(err, terms.ErrUnknownValue) {
		t.Errorf("terms.ParsePurpose(fun) error = %v, want terms.ErrUnknownValue", err)
	}
	for p := terms.PurposeServicing; p <= terms.PurposeMedicalAerosolBurns; p++ {
		if back, err := terms.ParsePurpose(p.String()); err != nil || back != p {
			t.Errorf("terms.ParsePurpose(%q) = %v, %v", p.String(), back, err)
		}
	}
}

func TestParseCondition(t *testing.T) {
	cases := map[string]terms.Condition{
		"virgin": terms.ConditionVirgin, "USED": terms.ConditionUsed, "Recycled": terms.ConditionRecycled,
		"CONDITION_RECLAIMED": terms.ConditionReclaimed, "": terms.ConditionUnspecified,
	}
	for in, want := range cases {
		got, err := terms.ParseCondition(in)
		if err != nil || got != want {
			t.Errorf("terms.ParseCondition(%q) = %v, %v; want %v", in, got, err, want)
		}
	}
	if _, err := terms.ParseCondition("dirty"); !errors.Is(err, terms.ErrUnknownValue) {
		t.Errorf("terms.ParseCondition(dirty) error = %v", err)
	}
	if !terms.ConditionUsed.Recovered() || terms.ConditionVirgin.Recovered() || terms.ConditionUnspecified.Recovered() {
		t.Error("Recovered: used/recycled/reclaimed only")
	}
}
