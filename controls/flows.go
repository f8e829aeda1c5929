package controls

import (
	"fmt"
	"strings"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
)

// Substance is the part of a catalogue substance that consumption arithmetic needs.
type Substance struct {
	Designation string           // e.g. "HCFC-22"
	Group       substances.Group // Annex group; GroupNone for an uncontrolled blend component
	ODP         exact.Decimal    // ODP used for the Protocol's calculations (upper end of a range)
	GWP         exact.Decimal    // Protocol GWP (Annex A/I, C/I, F columns); 0 when none is listed
}

// SubstanceOf takes the designation, group, ODP and Protocol GWP of a catalogue substance.
// The catalogue holds them as the decimals the Annexes list, parsed once from their text;
// exact.OfFloat gives back exactly those decimals (the shortest form that reads back as
// the stored value), as the catalogue's own exact figures do.
func SubstanceOf(s *substances.Substance) Substance {
	return Substance{Designation: s.Designation, Group: s.Group, ODP: exact.OfFloat(s.ODP), GWP: exact.OfFloat(s.ProtocolGWP())}
}

// same reports whether two substances have the same designation, group, ODP and GWP (the
// figures compared as numbers).
func (s Substance) same(t Substance) bool {
	return s.Designation == t.Designation && s.Group == t.Group && s.ODP.Equal(t.ODP) && s.GWP.Equal(t.GWP)
}

// Flows are one substance's quantities in one year, in metric tonnes of substance (net
// mass). Which flows count follows Art. 1 para 5 and Art. 3 [V]; the caller classifies each
// quantity (e.g. which partner is a non-Party for this substance, Art. 4 para 9).
type Flows struct {
	// Production in the Party.
	Production exact.Decimal
	// Imports of new substance for all uses, including imports for feedstock or QPS use
	// (those uses are deducted through Feedstock and QPS).
	Imports exact.Decimal
	// Exports to Parties, including exports for feedstock use abroad: deducted.
	Exports exact.Decimal
	// Exports to non-Parties: reported, not deducted (Art. 3 para 1(c), from 1993).
	ExportsNonParty exact.Decimal
	// Amount destroyed by an approved technology: deducted (Art. 1 para 5).
	Destruction exact.Decimal
	// Amount used entirely as feedstock within the Party: deducted (Art. 1 para 5; Decision
	// VII/30).
	Feedstock exact.Decimal
	// Methyl bromide used for quarantine and pre-shipment: deducted (Art. 2H para 6; Art. 5
	// para 8 ter (g)(iv)). Only valid for Annex E.
	QPS exact.Decimal
	// Imports and exports of used, recycled or reclaimed substance: not counted (Decision
	// IV/24 para 2, Decision VI/19), except in an Article 5 Party's base-year consumption,
	// where the rulebook's count_used column says to count them.
	UsedImports exact.Decimal
	UsedExports exact.Decimal
	// Goods in transit or transhipment: never counted; carried for reporting only.
	Transit exact.Decimal
}

// Add returns the sum of two flows, exactly.
func (f Flows) Add(g Flows) Flows {
	return Flows{
		Production:      f.Production.Add(g.Production),
		Imports:         f.Imports.Add(g.Imports),
		Exports:         f.Exports.Add(g.Exports),
		ExportsNonParty: f.ExportsNonParty.Add(g.ExportsNonParty),
		Destruction:     f.Destruction.Add(g.Destruction),
		Feedstock:       f.Feedstock.Add(g.Feedstock),
		QPS:             f.QPS.Add(g.QPS),
		UsedImports:     f.UsedImports.Add(g.UsedImports),
		UsedExports:     f.UsedExports.Add(g.UsedExports),
		Transit:         f.Transit.Add(g.Transit),
	}
}

// Scaled returns every flow multiplied by fraction, exactly, e.g. a blend component's mass
// fraction.
func (f Flows) Scaled(fraction exact.Decimal) Flows {
	return Flows{
		Production:      f.Production.Mul(fraction),
		Imports:         f.Imports.Mul(fraction),
		Exports:         f.Exports.Mul(fraction),
		ExportsNonParty: f.ExportsNonParty.Mul(fraction),
		Destruction:     f.Destruction.Mul(fraction),
		Feedstock:       f.Feedstock.Mul(fraction),
		QPS:             f.QPS.Mul(fraction),
		UsedImports:     f.UsedImports.Mul(fraction),
		UsedExports:     f.UsedExports.Mul(fraction),
		Transit:         f.Transit.Mul(fraction),
	}
}

// Counted returns calculated consumption in metric tonnes, exactly: production + imports
// − exports to Parties − destruction − feedstock − QPS, plus used imports − used exports
// when countUsed is set. The result may be negative.
func (f Flows) Counted(countUsed bool) exact.Decimal {
	return FlowSums{}.AddFlows(f).Counted(countUsed)
}

// FlowSums are one substance's flows in one year added exactly, so a sum of 0.1 t and
// 0.2 t is 0.3 t.
type FlowSums struct {
	Production, Imports, Exports, ExportsNonParty, Destruction, Feedstock, QPS exact.Decimal
	UsedImports, UsedExports, Transit                                          exact.Decimal
}

// AddFlows returns s plus f, exactly.
func (s FlowSums) AddFlows(f Flows) FlowSums {
	return FlowSums{
		Production:      s.Production.Add(f.Production),
		Imports:         s.Imports.Add(f.Imports),
		Exports:         s.Exports.Add(f.Exports),
		ExportsNonParty: s.ExportsNonParty.Add(f.ExportsNonParty),
		Destruction:     s.Destruction.Add(f.Destruction),
		Feedstock:       s.Feedstock.Add(f.Feedstock),
		QPS:             s.QPS.Add(f.QPS),
		UsedImports:     s.UsedImports.Add(f.UsedImports),
		UsedExports:     s.UsedExports.Add(f.UsedExports),
		Transit:         s.Transit.Add(f.Transit),
	}
}

// Counted is Flows.Counted in exact arithmetic.
func (s FlowSums) Counted(countUsed bool) exact.Decimal {
	t := exact.Sum(s.Production, s.Imports).Sub(exact.Sum(s.Exports, s.Destruction, s.Feedstock, s.QPS))
	if countUsed {
		t = t.Add(s.UsedImports).Sub(s.UsedExports)
	}
	return t
}

// NotCounted is what the arithmetic leaves out: used, recycled and reclaimed trade, and
// transit.
func (s FlowSums) NotCounted() exact.Decimal {
	return exact.Sum(s.UsedImports, s.UsedExports, s.Transit)
}

func (f Flows) fields() []struct {
	name string
	v    exact.Decimal
} {
	return []struct {
		name string
		v    exact.Decimal
	}{
		{"production", f.Production}, {"imports", f.Imports}, {"exports", f.Exports},
		{"exports_non_party", f.ExportsNonParty}, {"destruction", f.Destruction},
		{"feedstock", f.Feedstock}, {"qps", f.QPS}, {"used_imports", f.UsedImports},
		{"used_exports", f.UsedExports}, {"transit", f.Transit},
	}
}

// Record is one substance's flows in one calendar year. Several records for the same
// substance and year are added together (e.g. the pure substance and a blend component).
type Record struct {
	Year      int
	Substance Substance
	Flows     Flows
}

// Years a record may carry.
const (
	MinYear = 1980
	MaxYear = 2100
)

const yearAccepted = "a calendar year from 1980 to 2100"

func checkYear(field string, y int) error {
	if y < MinYear || y > MaxYear {
		return fieldErr(field, yearAccepted, "is %d", y)
	}
	return nil
}

func nonNeg(v exact.Decimal) bool { return v.Sign() >= 0 }

// validate checks one record; i is its index for messages.
func (r Record) validate(i int) error {
	p := fmt.Sprintf("records[%d]", i)
	if err := checkYear(p+".year", r.Year); err != nil {
		return err
	}
	s := r.Substance
	if strings.TrimSpace(s.Designation) == "" {
		return fieldErr(p+".substance.designation", "a catalogue designation such as \"HCFC-22\"", "is empty")
	}
	for _, f := range r.Flows.fields() {
		if !nonNeg(f.v) {
			return fieldErr(p+".flows."+f.name, "a number of metric tonnes ≥ 0", "is %v", f.v)
		}
	}
	if s.Group == substances.GroupNone {
		return nil // uncontrolled component: ODP/GWP do not matter, it is not counted
	}
	if !isGroup(s.Group) {
		return fieldErr(p+".substance.group", "an Annex group such as \"C/I\", or \"\" for uncontrolled", "unknown group %q", string(s.Group))
	}
	if !nonNeg(s.ODP) {
		return fieldErr(p+".substance.odp", "an ODP ≥ 0", "is %v", s.ODP)
	}
	if !nonNeg(s.GWP) {
		return fieldErr(p+".substance.gwp", "a Protocol GWP ≥ 0", "is %v", s.GWP)
	}
	annexF := s.Group == substances.GroupFI || s.Group == substances.GroupFII
	if !annexF && s.ODP.IsZero() {
		return fieldErr(p+".substance.odp", "the ODP from the Annex (> 0 for every Annex A–E substance)",
			"is 0 for %s in group %s", s.Designation, s.Group)
	}
	if annexF && s.GWP.IsZero() {
		return fieldErr(p+".substance.gwp", "the GWP listed in Annex F (> 0 for every HFC)",
			"is 0 for %s in group %s", s.Designation, s.Group)
	}
	if r.Flows.QPS.Sign() > 0 && s.Group != substances.GroupEI {
		return fieldErr(p+".flows.qps", "0 for substances outside Annex E (the QPS exclusion covers methyl bromide only)",
			"is %v for %s in group %s", r.Flows.QPS, s.Designation, s.Group)
	}
	return nil
}

func isGroup(g substances.Group) bool {
	for _, a := range substances.AllGroups {
		if g == a {
			return true
		}
	}
	return false
}
