package controls

import (
	"fmt"
	"strings"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
)

// Scope is what one control measure limits: one Annex group ("A/I" … "E/I"), or Annex F as
// a whole ("F"), since Art. 2J limits HFC consumption of Groups I and II together in
// CO2-eq (Art. 2J para 1 [V]).
type Scope string

// Control scopes, in Annex order.
const (
	ScopeAI   Scope = "A/I"   // CFCs
	ScopeAII  Scope = "A/II"  // halons
	ScopeBI   Scope = "B/I"   // other fully halogenated CFCs
	ScopeBII  Scope = "B/II"  // carbon tetrachloride
	ScopeBIII Scope = "B/III" // methyl chloroform
	ScopeCI   Scope = "C/I"   // HCFCs
	ScopeCII  Scope = "C/II"  // HBFCs
	ScopeCIII Scope = "C/III" // bromochloromethane
	ScopeEI   Scope = "E/I"   // methyl bromide
	ScopeF    Scope = "F"     // HFCs, Annex F Groups I and II together
)

// AllScopes lists the control scopes in Annex order.
var AllScopes = []Scope{ScopeAI, ScopeAII, ScopeBI, ScopeBII, ScopeBIII, ScopeCI, ScopeCII, ScopeCIII, ScopeEI, ScopeF}

// Unit names the unit a figure is counted in.
type Unit string

// Units.
const (
	UnitTonnes     Unit = "t"        // metric tonnes of substance
	UnitODPTonnes  Unit = "ODP t"    // metric tonnes × ODP
	UnitCO2eTonnes Unit = "CO2-eq t" // metric tonnes × Protocol GWP
)

// Exact returns the row of exact.Units the unit's figures are shown and derived with.
func (u Unit) Exact() exact.Unit {
	switch u {
	case UnitODPTonnes:
		return exact.ODPTonnes
	case UnitCO2eTonnes:
		return exact.CO2eTonnes
	}
	return exact.Tonnes
}

// ParseScope reads a scope name; "F/I" and "F/II" are accepted as "F", since the HFC
// control measures apply to Annex F as a whole.
func ParseScope(s string) (Scope, error) {
	t := strings.TrimSpace(s)
	if strings.EqualFold(t, "F/I") || strings.EqualFold(t, "F/II") || strings.EqualFold(t, "F") {
		return ScopeF, nil
	}
	for _, sc := range AllScopes {
		if strings.EqualFold(t, string(sc)) {
			return sc, nil
		}
	}
	return "", fieldErr("scope", scopeAccepted, "unknown scope %q", s)
}

const scopeAccepted = "A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I or F"

// ScopeOf returns the scope a substance group is controlled in, or "" for GroupNone.
func ScopeOf(g substances.Group) Scope {
	switch g {
	case substances.GroupNone:
		return ""
	case substances.GroupFI, substances.GroupFII:
		return ScopeF
	}
	return Scope(g)
}

// Groups returns the Annex groups a scope covers.
func (s Scope) Groups() []substances.Group {
	if s == ScopeF {
		return []substances.Group{substances.GroupFI, substances.GroupFII}
	}
	return []substances.Group{substances.Group(s)}
}

// Unit returns the unit compliance is measured in: CO2-eq t for Annex F, ODP t otherwise
// (Art. 3 [V]).
func (s Scope) Unit() Unit {
	if s == ScopeF {
		return UnitCO2eTonnes
	}
	return UnitODPTonnes
}

func (s Scope) valid() bool {
	for _, sc := range AllScopes {
		if s == sc {
			return true
		}
	}
	return false
}

func (s Scope) check(field string) error {
	if !s.valid() {
		return fieldErr(field, scopeAccepted, "unknown scope %q", string(s))
	}
	return nil
}

// scopeNames are the short names of what each scope controls.
var scopeNames = map[Scope]string{
	ScopeAI: "CFCs", ScopeAII: "halons", ScopeBI: "other CFCs", ScopeBII: "carbon tetrachloride",
	ScopeBIII: "methyl chloroform", ScopeCI: "HCFCs", ScopeCII: "HBFCs", ScopeCIII: "bromochloromethane",
	ScopeEI: "methyl bromide", ScopeF: "HFCs",
}

// label is a short human name for messages: "C/I (HCFCs)".
func (s Scope) label() string {
	return fmt.Sprintf("%s (%s)", string(s), scopeNames[s])
}

// FullName is the scope's name for titles: "Annex C Group I (HCFCs)", "Annex F (HFCs)";
// "" for an unknown scope.
func (s Scope) FullName() string {
	if !s.valid() {
		return ""
	}
	if s == ScopeF {
		return "Annex F (" + scopeNames[s] + ")"
	}
	annex, group, _ := strings.Cut(string(s), "/")
	return fmt.Sprintf("Annex %s Group %s (%s)", annex, group, scopeNames[s])
}
