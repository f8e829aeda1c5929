package validate

import (
	"strings"
	"testing"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// TestExemptPurpose checks the purposes that let an import of a phased-out group pass
// (Art. 1 paras 4-5 and Decision VII/30: feedstock; Art. 1 para 5 and Decision IV/11:
// destruction; Decision X/14: process agents; Art. 2H para 6: QPS for methyl bromide;
// Decisions VI/9, IV/25 and IX/6: laboratory, essential and critical uses).
func TestExemptPurpose(t *testing.T) {
	for p := terms.PurposeUnspecified; p <= terms.PurposeMedicalAerosolBurns; p++ {
		for _, g := range []substances.Group{substances.GroupAI, substances.GroupEI} {
			got := exemptPurpose(p, g) != ""
			want := false
			switch p {
			case terms.PurposeFeedstock, terms.PurposeDestruction, terms.PurposeLaboratory, terms.PurposeEssentialUse, terms.PurposeCriticalUse, terms.PurposeProcessAgent:
				want = true
			case terms.PurposeQPS:
				want = g == substances.GroupEI
			}
			if got != want {
				t.Errorf("exemptPurpose(%v, %s) exempt = %v, want %v", p, g, got, want)
			}
		}
	}
}

func TestParseSeverityAndFormat(t *testing.T) {
	for _, s := range []Severity{SeverityNotice, SeverityWarning, SeverityError} {
		if got, err := ParseSeverity(strings.ToUpper(s.String())); err != nil || got != s {
			t.Errorf("ParseSeverity(%q) = %v, %v", s, got, err)
		}
	}
	if _, err := ParseSeverity("fatal"); err == nil {
		t.Error("ParseSeverity(fatal) should fail")
	}
	for in, want := range map[string]Format{"CSV": FormatCSV, "jsonl": FormatJSONL, "JSON-Lines": FormatJSONL, "ndjson": FormatJSONL} {
		if got, err := ParseFormat(in); err != nil || got != want {
			t.Errorf("ParseFormat(%q) = %v, %v", in, got, err)
		}
	}
	if _, err := ParseFormat("xml"); err == nil {
		t.Error("ParseFormat(xml) should fail")
	}
	for path, want := range map[string]Format{"a/b.CSV": FormatCSV, "x.jsonl": FormatJSONL, "y.ndjson": FormatJSONL, "z.txt": FormatUnknown} {
		if got := FormatOfPath(path); got != want {
			t.Errorf("FormatOfPath(%q) = %v, want %v", path, got, want)
		}
	}
	if _, err := NewReader(FormatUnknown, strings.NewReader("")); err == nil {
		t.Error("NewReader(unknown format) should fail")
	}
}

func TestCutTextKeepsUTF8(t *testing.T) {
	s := strings.Repeat("é", 60) // 120 bytes
	got := cutText(s)
	if !strings.HasSuffix(got, "…") || len(got) > 80+len("…") {
		t.Fatalf("cutText = %q", got)
	}
	if strings.ContainsRune(strings.TrimSuffix(got, "…"), '\uFFFD') || !strings.HasPrefix(s, strings.TrimSuffix(got, "…")) {
		t.Errorf("cutText split a UTF-8 sequence: %q", got)
	}
	if cutText("short") != "short" {
		t.Error("short text must stay")
	}
}

func TestLineErrorMessage(t *testing.T) {
	if got := (&LineError{Line: 12, Reason: "stray quote"}).Error(); got != "line 12: stray quote" {
		t.Errorf("LineError.Error() = %q", got)
	}
}
