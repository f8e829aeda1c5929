package controls

import "testing"

func TestScopeFullName(t *testing.T) {
	for _, c := range []struct {
		scope Scope
		want  string
	}{
		{ScopeCI, "Annex C Group I (HCFCs)"},                 // source: Montreal Protocol Annex C Group I
		{ScopeAII, "Annex A Group II (halons)"},              // source: Montreal Protocol Annex A Group II
		{ScopeBIII, "Annex B Group III (methyl chloroform)"}, // source: Montreal Protocol Annex B Group III
		{ScopeEI, "Annex E Group I (methyl bromide)"},        // source: Montreal Protocol Annex E Group I
		{ScopeF, "Annex F (HFCs)"},                           // source: Montreal Protocol Annex F (Groups I and II)
		{Scope("Z/IX"), ""},
	} {
		if got := c.scope.FullName(); got != c.want {
			t.Errorf("%q.FullName() = %q, want %q", c.scope, got, c.want)
		}
	}
}
