package validate

import (
	"strings"
	"testing"
)

func TestCodeTableWellFormed(t *testing.T) {
	families := map[string]bool{"record": true, "identity": true, "quantity": true, "party": true, "dates": true,
		"licence": true, "quota": true, "phase-out": true, "purpose": true, "mixture": true, "duplicates": true,
		"measurement": true}
	seenFamily := map[string]bool{}
	for _, c := range CodeTable() {
		if c.Code == "" || strings.ToUpper(c.Code) != c.Code || strings.ContainsAny(c.Code, " -") {
			t.Errorf("code %q: want UPPER_SNAKE_CASE", c.Code)
		}
		if c.Severity < SeverityNotice || c.Severity > SeverityError {
			t.Errorf("%s: severity %v", c.Code, c.Severity)
		}
		if !families[c.Family] {
			t.Errorf("%s: unknown family %q", c.Code, c.Family)
		}
		seenFamily[c.Family] = true
		if len(c.Meaning) < 20 || len(c.Accepted) < 5 {
			t.Errorf("%s: meaning and accepted text must say something", c.Code)
		}
		if got, ok := LookupCode(c.Code); !ok || got.Code != c.Code {
			t.Errorf("LookupCode(%s) failed", c.Code)
		}
	}
	for f := range families {
		if !seenFamily[f] {
			t.Errorf("family %s has no code", f)
		}
	}
}

func TestCodeTableMarkdown(t *testing.T) {
	md := CodeTableMarkdown()
	for _, c := range CodeTable() {
		if !strings.Contains(md, "| `"+c.Code+"` | "+c.Severity.String()+" |") {
			t.Errorf("markdown lacks the row of %s", c.Code)
		}
	}
	if strings.Count(md, "### ") != 12 {
		t.Errorf("markdown has %d family sections, want 12", strings.Count(md, "### "))
	}
}

func TestNewFindingUsesTableSeverity(t *testing.T) {
	f := newFinding(CodeQtyNotPositive, "", "x")
	if f.Severity != SeverityError || f.Field != "total_net_quantity" {
		t.Errorf("newFinding(QTY_NOT_POSITIVE) = %+v; want severity error and field total_net_quantity from the table", f)
	}
	if n := newFinding(CodeQuotaNearLimit, "", "x"); n.Severity != SeverityNotice {
		t.Errorf("QUOTA_NEAR_LIMIT severity = %v, want notice", n.Severity)
	}
}

func TestOutcomeAndSort(t *testing.T) {
	fs := []Finding{
		newFinding(CodePurposeMissing, "", "n"),
		newFinding(CodePartnerUnknown, "", "w"),
		newFinding(CodeQtyNotPositive, "", "e1"),
		newFinding(CodeDateFuture, "", "e2"),
	}
	if OutcomeOf(fs) != OutcomeRejected {
		t.Errorf("an error must reject")
	}
	if OutcomeOf(fs[:2]) != OutcomeAcceptedWithWarnings {
		t.Errorf("a warning without errors gives accepted-with-warnings")
	}
	if OutcomeOf(fs[:1]) != OutcomeAccepted || OutcomeOf(nil) != OutcomeAccepted {
		t.Errorf("notices alone are accepted")
	}
	sortFindings(fs)
	got := []string{fs[0].Message, fs[1].Message, fs[2].Message, fs[3].Message}
	want := []string{"e1", "e2", "w", "n"}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("sorted order %v, want %v (errors first, stable within severity)", got, want)
		}
	}
}
