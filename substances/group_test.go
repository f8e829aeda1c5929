package substances

import (
	"errors"
	"strings"
	"testing"

	"github.com/halovet/halovet/terms"
)

// The Annex groups as the Protocol's Annexes A to F name them (Montreal Protocol, Annexes A,
// B, C, E and F).
func TestParseGroup(t *testing.T) {
	for _, g := range AllGroups {
		got, err := ParseGroup(strings.ToLower(g.String()) + " ")
		if err != nil || got != g {
			t.Errorf("%s: %v %v", g, got, err)
		}
	}
	if g, err := ParseGroup(""); err != nil || g != GroupNone {
		t.Errorf("empty: %v %v", g, err)
	}
	_, err := ParseGroup("D/I") // Annex D lists products, not substances in groups
	if !errors.Is(err, terms.ErrUnknownValue) || !strings.Contains(err.Error(), `"D/I"`) || !strings.Contains(err.Error(), "accepted: A/I, A/II") {
		t.Errorf("D/I: %v", err)
	}
}
