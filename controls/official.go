package controls

import (
	"fmt"

	"github.com/halovet/halovet/exact"
	"slices"
	"strings"
)

// Figures set outside the arithmetic, which a year's assessment takes into account:
// baselines and limits as officially set, and authorised exemptions. Each carries its
// source (the decision, the agreed plan), which the assessment repeats.

// OfficialFigure is a baseline or a year's limit as officially set, e.g. a baseline as the
// Parties have set it, or a limit of an agreed plan stricter than the treaty's.
type OfficialFigure struct {
	Value  exact.Decimal // in the scope's unit
	Source string        // the decision or document that sets it
}

// ExemptionUse is the kind of an authorised exemption.
type ExemptionUse string

// Exempted uses. Critical uses exist for methyl bromide only (Art. 2H para 5; Decision
// IX/6); essential uses as the Meeting of the Parties authorises them per Party and year
// (Decision IV/25); laboratory and analytical uses under the global exemption (Decision
// VI/9 and its extensions); the high-ambient-temperature exemption for HFCs (Decision
// XXVIII/2; from memory).
const (
	UseEssential   ExemptionUse = "essential"
	UseCritical    ExemptionUse = "critical"
	UseLaboratory  ExemptionUse = "laboratory"
	UseHighAmbient ExemptionUse = "high-ambient-temperature"
)

// ExemptionUses lists the kinds, in order.
var ExemptionUses = []ExemptionUse{UseEssential, UseCritical, UseLaboratory, UseHighAmbient}

// CheckExemptionScope says whether a kind of exemption exists for a scope; the error text
// says what is accepted.
func CheckExemptionScope(use ExemptionUse, scope Scope) error {
	switch use {
	case UseCritical:
		if scope != ScopeEI {
			return fmt.Errorf("critical-use exemptions exist for methyl bromide (E/I) only (Art. 2H para 5; Decision IX/6), not for %s", scope)
		}
	case UseHighAmbient:
		if scope != ScopeF {
			return fmt.Errorf("the high-ambient-temperature exemption is for HFCs (F) only, not for %s", scope)
		}
	case UseEssential, UseLaboratory:
	default:
		return fmt.Errorf("unknown exempted use %q; accepted: %s", use, joinUses())
	}
	return nil
}

func joinUses() string {
	s := make([]string, len(ExemptionUses))
	for i, u := range ExemptionUses {
		s[i] = string(u)
	}
	return strings.Join(s, ", ")
}

// Exemption is one authorised exemption of one Party, scope and year.
type Exemption struct {
	Use    ExemptionUse
	Amount exact.Decimal // in the scope's unit
	Source string        // the decision that authorises it
}

// Overrides are what a compliance assessment adds to the arithmetic: an official baseline,
// official limits per year, and authorised exemptions per year.
type Overrides struct {
	Baseline   *OfficialFigure
	Limits     map[int]OfficialFigure
	Exemptions map[int][]Exemption
}

// exempted sums a year's exemptions exactly, in a stable order.
func (o Overrides) exempted(year int) (exact.Decimal, []Exemption) {
	es := slices.Clone(o.Exemptions[year])
	slices.SortFunc(es, func(a, b Exemption) int {
		if c := strings.Compare(string(a.Use), string(b.Use)); c != 0 {
			return c
		}
		return strings.Compare(a.Source, b.Source)
	})
	sum := exact.Zero
	for _, e := range es {
		sum = sum.Add(e.Amount)
	}
	return sum, es
}
