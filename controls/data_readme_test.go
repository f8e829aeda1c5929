package controls

import (
	"os"
	"strconv"
	"strings"
	"testing"
)

// TestDataReadme checks that data/README.md explains every status mark the parser accepts and
// every mark the embedded data uses, and lists every column of both data files under the
// file's own heading, so that no mark or column in the rule data goes unexplained.
func TestDataReadme(t *testing.T) {
	raw, err := os.ReadFile("data/README.md")
	if err != nil {
		t.Fatalf("the rule data needs its README: %v", err)
	}
	readme := string(raw)
	marksSection := readmeSection(t, readme, "## Status marks")
	explained := func(s Status) bool { return strings.Contains(marksSection, "\n| `"+string(s)+"` |") }

	for _, s := range []Status{Verified, Derived, Partial, Unverified} {
		if !explained(s) {
			t.Errorf("status mark %s (%s) accepted by the parser is not explained in data/README.md", s, s.Meaning())
		}
	}
	rb := mustRulebook(t)
	used := map[Status]string{}
	for _, r := range rb.Rules {
		used[r.Status] = "schedules.csv line " + strconv.Itoa(r.Line)
	}
	for _, b := range rb.Baselines {
		used[b.Status] = "baselines.csv line " + strconv.Itoa(b.Line)
		used[b.CountUsedStatus] = "baselines.csv line " + strconv.Itoa(b.Line) + " (count_used_status)"
	}
	if len(used) < 2 {
		t.Fatalf("the embedded data uses %d status marks; expected several", len(used))
	}
	for s, where := range used {
		if !explained(s) {
			t.Errorf("status mark %q used at %s is not explained in data/README.md", s, where)
		}
	}

	for heading, cols := range map[string][]string{
		"## `schedules.csv` columns": scheduleColumns,
		"## `baselines.csv` columns": baselineColumns,
	} {
		sec := readmeSection(t, readme, heading)
		for _, c := range cols {
			if !strings.Contains(sec, "\n| `"+c+"` |") {
				t.Errorf("column %s is not described under %q in data/README.md", c, heading)
			}
		}
	}
}

// readmeSection returns the text from heading to the next heading of the same level.
func readmeSection(t *testing.T, readme, heading string) string {
	t.Helper()
	_, after, ok := strings.Cut(readme, "\n"+heading+"\n")
	if !ok {
		t.Fatalf("data/README.md has no heading %q", heading)
	}
	if i := strings.Index(after, "\n## "); i >= 0 {
		after = after[:i]
	}
	return "\n" + after
}
