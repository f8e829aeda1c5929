package terms

import (
	"errors"
	"strings"
	"testing"
)

// Every value's text form reads back as itself (common practice: the word the database
// holds must parse to the value that wrote it), and unspecified is "".
func TestTextFormRoundTrips(t *testing.T) {
	check := func(name string, n int, str func(int) string, parse func(string) (int, error)) {
		if s := str(0); s != "" {
			t.Errorf("%s: unspecified writes %q, want \"\"", name, s)
		}
		for i := 0; i <= n; i++ {
			got, err := parse(str(i))
			if err != nil || got != i {
				t.Errorf("%s %d: %q reads as %d, %v", name, i, str(i), got, err)
			}
		}
	}
	check("direction", len(Directions()), func(i int) string { return Direction(i).String() }, func(s string) (int, error) { d, err := ParseDirection(s); return int(d), err })
	check("purpose", len(Purposes()), func(i int) string { return Purpose(i).String() }, func(s string) (int, error) { d, err := ParsePurpose(s); return int(d), err })
	check("condition", len(Conditions()), func(i int) string { return Condition(i).String() }, func(s string) (int, error) { d, err := ParseCondition(s); return int(d), err })
	check("party type", len(PartyTypes()), func(i int) string { return PartyType(i).String() }, func(s string) (int, error) { d, err := ParsePartyType(s); return int(d), err })
	check("hfc group", len(HFCGroups()), func(i int) string { return HFCGroup(i).String() }, func(s string) (int, error) { d, err := ParseHFCGroup(s); return int(d), err })
	check("licence status", len(LicenceStatuses()), func(i int) string { return LicenceStatus(i).String() }, func(s string) (int, error) { d, err := ParseLicenceStatus(s); return int(d), err })
	check("quota unit", len(QuotaUnits()), func(i int) string { return QuotaUnit(i).String() }, func(s string) (int, error) { d, err := ParseQuotaUnit(s); return int(d), err })
}

// The words the database already holds (store/migrations/00001_schema.sql CHECK
// constraints) are the text forms.
func TestStoredWords(t *testing.T) {
	for _, c := range []struct{ got, want string }{
		{PartyTypeArticle5.String(), "article-5"}, {PartyTypeNonArticle5.String(), "non-article-5"}, {PartyTypeNonParty.String(), "non-party"},
		{HFCGroupNonA5Variant.String(), "non-a5-variant"}, {HFCGroupA5Group2.String(), "a5-group-2"},
		{LicenceSuspended.String(), "suspended"}, {QuotaCO2eTonnes.String(), "co2e-t"}, {QuotaMetricTonnes.String(), "metric-t"},
		{DirectionReExport.String(), "re-export"}, {PurposeProcessAgent.String(), "process-agent"}, {ConditionReclaimed.String(), "reclaimed"},
		{QuotaODPTonnes.Symbol(), "ODP t"}, {QuotaCO2eTonnes.Symbol(), "CO2-eq t"},
	} {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}

func TestParseLeniencyAndErrors(t *testing.T) {
	if d, err := ParseDirection("RE_EXPORT"); err != nil || d != DirectionReExport {
		t.Errorf("RE_EXPORT: %v %v", d, err)
	}
	if d, err := ParseDirection("DIRECTION_TRANSIT"); err != nil || d != DirectionTransit {
		t.Errorf("DIRECTION_TRANSIT: %v %v", d, err)
	}
	if u, err := ParseQuotaUnit("QUOTA_UNIT_ODP_TONNES"); err != nil || u != QuotaODPTonnes {
		t.Errorf("QUOTA_UNIT_ODP_TONNES: %v %v", u, err)
	}
	if p, err := ParsePurpose("  "); err != nil || p != PurposeUnspecified {
		t.Errorf("blank purpose: %v %v", p, err)
	}
	_, err := ParseHFCGroup("group 3")
	if !errors.Is(err, ErrUnknownValue) {
		t.Fatalf("group 3: %v, want ErrUnknownValue", err)
	}
	// The message names the concept, the text and what is accepted (house rule 11).
	for _, want := range []string{"HFC group", `"group 3"`, "accepted: a5-group-1, a5-group-2, non-a5, non-a5-variant"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("message %q lacks %q", err, want)
		}
	}
}

func TestScanAndValue(t *testing.T) {
	var g HFCGroup
	if err := g.Scan("non-a5"); err != nil || g != HFCGroupNonA5 {
		t.Errorf("scan non-a5: %v %v", g, err)
	}
	if err := g.Scan(nil); err != nil || g != HFCGroupUnspecified {
		t.Errorf("scan NULL: %v %v", g, err)
	}
	var s LicenceStatus
	if err := s.Scan([]byte("lapsed")); err == nil || !strings.Contains(err.Error(), "licence status") {
		t.Errorf("scan lapsed: %v", err)
	}
	if v, err := QuotaODPTonnes.Value(); err != nil || v != "odp-t" {
		t.Errorf("value: %v %v", v, err)
	}
	if _, err := Direction(9).Value(); err == nil {
		t.Error("Direction(9).Value() gave no error")
	}
}
