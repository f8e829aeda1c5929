package exact

import (
	"fmt"
	"os"
	"strings"
	"testing"
)

// TestUnitsTableInDevelopersGuide: DEVELOPERS.md ("Figures on the wire") states the same
// display and derived places as Units, row for row.
func TestUnitsTableInDevelopersGuide(t *testing.T) {
	b, err := os.ReadFile("../DEVELOPERS.md")
	if err != nil {
		t.Fatalf("DEVELOPERS.md: %v", err)
	}
	doc := string(b)
	_, sec, ok := strings.Cut(doc, "## Figures on the wire")
	if !ok {
		t.Fatal(`DEVELOPERS.md has no "## Figures on the wire" section`)
	}
	places := func(p int32) string {
		switch {
		case p < 0:
			return "in full"
		case p == 1:
			return "1 decimal"
		}
		return fmt.Sprintf("%d decimals", p)
	}
	for _, u := range Units {
		name := u.Name
		if name == "" {
			name = map[Unit]string{ODP: "ODP", GWP: "GWP", Ratio: "ratio"}[u.Unit]
		}
		prefix := "| " + name + " |"
		var row string
		for _, line := range strings.Split(sec, "\n") {
			if strings.HasPrefix(line, prefix) {
				row = line
				break
			}
		}
		if row == "" {
			t.Errorf("DEVELOPERS.md's table has no row for %q", name)
			continue
		}
		cells := strings.Split(strings.Trim(row, "|"), "|")
		if len(cells) != 4 {
			t.Errorf("row %q: want 4 cells", row)
			continue
		}
		if got, want := strings.TrimSpace(cells[2]), places(u.Places); got != want && got != "at most "+want {
			t.Errorf("row %q shows %q; exact.Units says %q", name, got, want)
		}
		if got, want := strings.TrimSpace(cells[3]), places(u.DerivedPlaces); got != want {
			t.Errorf("row %q derives to %q; exact.Units says %q", name, got, want)
		}
		if u.Suffix != "" && !strings.Contains(cells[1], "`"+u.Suffix+"`") {
			t.Errorf("row %q does not name the suffix %s", name, u.Suffix)
		}
	}
}
