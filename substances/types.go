package substances

import (
	"fmt"
	"strings"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/terms"
)

// Group is a Montreal Protocol Annex and Group written as "A/I", "C/II", "F/I"; the empty
// Group means the substance is not controlled by the Protocol.
type Group string

// The Annex groups of the Montreal Protocol.
const (
	GroupNone Group = ""
	GroupAI   Group = "A/I"   // CFCs
	GroupAII  Group = "A/II"  // halons
	GroupBI   Group = "B/I"   // other fully halogenated CFCs
	GroupBII  Group = "B/II"  // carbon tetrachloride
	GroupBIII Group = "B/III" // methyl chloroform
	GroupCI   Group = "C/I"   // HCFCs
	GroupCII  Group = "C/II"  // HBFCs
	GroupCIII Group = "C/III" // bromochloromethane
	GroupEI   Group = "E/I"   // methyl bromide
	GroupFI   Group = "F/I"   // HFCs
	GroupFII  Group = "F/II"  // HFC-23
)

// AllGroups lists the controlled groups in Annex order.
var AllGroups = []Group{GroupAI, GroupAII, GroupBI, GroupBII, GroupBIII, GroupCI, GroupCII, GroupCIII, GroupEI, GroupFI, GroupFII}

// Controlled reports whether the group is a Protocol Annex group.
func (g Group) Controlled() bool { return g != GroupNone }

// Annex returns the Annex letter ("A" for "A/II"), or "" when not controlled.
func (g Group) Annex() string {
	a, _, _ := strings.Cut(string(g), "/")
	return a
}

// GWPSet names a set of 100-year GWP values.
type GWPSet string

// GWP sets. SetProtocol holds the values listed in the Protocol's Annexes (Annex A Group I,
// Annex C Group I and Annex F, Kigali Amendment), which equal IPCC AR4 values; a controlled
// substance with no listed value counts as 0 in the Protocol's CO2-eq arithmetic.
const (
	SetProtocol GWPSet = "MP"
	SetAR4      GWPSet = "AR4"
	SetAR5      GWPSet = "AR5"
	SetAR6      GWPSet = "AR6"
)

// Kind says whether a catalogue entry is a substance or a blend.
type Kind int

// Kinds of catalogue entries.
const (
	KindUnknown Kind = iota
	KindSubstance
	KindBlend
)

// Substance is one catalogue substance: a single compound or a treaty isomer group.
type Substance struct {
	Designation  string   // primary designation, e.g. "HCFC-22", "halon-1301", "carbon tetrachloride"
	Synonyms     []string // other names: "R-22", chemical names, older designations
	ChemicalName string   // IUPAC-style name
	Formula      string   // molecular formula, Hill notation
	Structure    string   // condensed structural formula, e.g. "CHClF2"; empty for isomer groups
	CAS          string   // CAS Registry Number; empty for isomer groups
	Group        Group    // Annex/Group; GroupNone when not controlled
	ODP          float64  // ODP used for the Protocol's calculations (upper end of a range)
	ODPLow       float64  // lower end of the Annex range, 0 when the Annex gives one value
	ODPHigh      float64  // upper end of the Annex range, 0 when the Annex gives one value
	IsomerCount  int      // isomers the entry covers (1 for one compound)
	GWP          map[GWPSet]float64
	Lifetime     float64  // atmospheric lifetime, years (WMO 2018), 0 when unknown
	MolarMass    float64  // g/mol, computed from Formula
	HS2017       []string // HS 2017 subheadings, "2903.39"
	HS2022       []string // HS 2022 subheadings, "2903.45"
	SafetyClass  string   // ASHRAE 34 safety class, "" when unknown
	Sources      string   // publications the values come from
}

// ExactMolarMass returns the molar mass computed from the formula as an exact decimal, and
// false when the formula has none (an element without a carried weight).
func (s *Substance) ExactMolarMass() (exact.Decimal, bool) {
	f, err := ParseFormula(s.Formula)
	if err != nil {
		return exact.Zero, false
	}
	m, err := f.MolarMassExact()
	return m, err == nil
}

// ProtocolGWP returns the GWP the Protocol's CO2-eq arithmetic uses (0 when none is listed).
func (s *Substance) ProtocolGWP() float64 { return s.GWP[SetProtocol] }

// Component is one component of a blend, with its nominal share and tolerances in mass
// percent points.
type Component struct {
	Designation string // designation of a catalogue substance
	MassPct     float64
	TolPlus     float64
	TolMinus    float64 // positive number: allowed deviation below nominal
}

// Blend is a catalogued mixture: a refrigerant blend of the ASHRAE 34 400 or 500 series, or a
// traded mixture without a number (methyl bromide/chloropicrin fumigants).
type Blend struct {
	Designation string // "R-404A"
	Synonyms    []string
	Type        BlendType
	Components  []Component
	SafetyClass string
	Sources     string
}

// String returns the written form, "A/I"; "" when not controlled.
func (g Group) String() string { return string(g) }

// ParseGroup reads an Annex group written as "A/I" (case-insensitively, surrounding spaces
// ignored); empty text gives GroupNone. Its error wraps terms.ErrUnknownValue and lists the
// accepted groups.
func ParseGroup(s string) (Group, error) {
	t := strings.ToUpper(strings.TrimSpace(s))
	if t == "" {
		return GroupNone, nil
	}
	for _, g := range AllGroups {
		if string(g) == t {
			return g, nil
		}
	}
	names := make([]string, len(AllGroups))
	for i, g := range AllGroups {
		names[i] = string(g)
	}
	return GroupNone, fmt.Errorf("%w: Annex group %q; accepted: %s", terms.ErrUnknownValue, terms.Cut(s), strings.Join(names, ", "))
}
