package substances

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Blend GWP conventions. Both are reported, labelled.
const (
	// ConventionAllComponents weights every component that has a GWP in the set (the EU
	// F-gas method; hydrocarbons and HFOs add a little).
	ConventionAllComponents = "all-components"
	// ConventionAnnexFOnly weights only the Annex F (HFC) components, as the Protocol's CO2-eq
	// consumption counts; HCFC components count in ODP tonnes in their own group.
	ConventionAnnexFOnly = "annex-f-only"
)

// Share is one component of an ad-hoc composition.
type Share struct {
	Identifier string  // designation, synonym, CAS number or formula of a catalogue substance
	MassPct    float64 // mass percent, above 0 and at most 100
}

// GWPFigure is a mixture's 100-year GWP under one set of values and one convention.
type GWPFigure struct {
	Set        GWPSet
	Convention string  // ConventionAllComponents or ConventionAnnexFOnly
	GWP        float64 // mass-fraction-weighted sum, unrounded
	Complete   bool    // every component the convention counts has a value in the set
}

// ComponentFigures are the figures of one component of an evaluated quantity.
type ComponentFigures struct {
	Designation string
	Group       Group
	MassPct     float64
	MassKg      float64 // net mass of this component
	ODP         float64 // the component's ODP for the Protocol's calculations
	ODPTonnes   float64 // metric tonnes × ODP, counted in the component's own group
	ProtocolGWP float64 // the GWP listed in the Protocol's Annexes (0 when none is listed)
	CO2eTonnes  float64 // metric tonnes × ProtocolGWP, for Annex F components only
	SafetyClass string
}

// Evaluation gives ODP, GWP and CO2-eq figures of a net mass of a substance or mixture.
type Evaluation struct {
	Designation string // designation of the substance or blend; empty for an ad-hoc composition
	Kind        Kind
	ODP         float64     // mass-fraction-weighted ODP
	GWPs        []GWPFigure // MP annex-f-only, then AR4, AR5, AR6 each all-components and annex-f-only
	Components  []ComponentFigures
	NetMassKg   float64
	ODPTonnes   float64 // sum over components (each counts in its own Annex group)
	CO2eTonnes  float64 // Protocol CO2-eq tonnes: Annex F components × Annex GWP
	SafetyClass string  // ASHRAE 34 class of the substance or blend; empty when unknown
	Cautions    []string
	HS2022      string // HS 2022 subheading(s)
	HS2017      string // HS 2017 subheading(s)
	HSNote      string
}

// GWP returns the figure for a set and convention.
func (e Evaluation) GWP(set GWPSet, convention string) (GWPFigure, bool) {
	for _, g := range e.GWPs {
		if g.Set == set && g.Convention == convention {
			return g, true
		}
	}
	return GWPFigure{}, false
}

// ErrInvalidInput is wrapped by errors about evaluation input: mass, shares, composition.
var ErrInvalidInput = errors.New("invalid input")

// InputError names the input field that was rejected and why.
type InputError struct {
	Field  string // e.g. "net_mass_kg", "shares[2].mass_pct"
	Reason string // what is wrong and what is accepted
}

func (e *InputError) Error() string { return e.Field + ": " + e.Reason }

// Unwrap makes errors.Is(err, ErrInvalidInput) hold.
func (e *InputError) Unwrap() error { return ErrInvalidInput }

// CompositionError reports mass percentages that do not sum to 100 ± 0.01.
type CompositionError struct {
	Sum float64
}

func (e *CompositionError) Error() string {
	sum := strconv.FormatFloat(math.Round(e.Sum*1e4)/1e4, 'f', -1, 64)
	return fmt.Sprintf("composition sums to %s %%, must be 100 %% ± %g", sum, compositionTolerance)
}

// Unwrap makes errors.Is(err, ErrInvalidInput) hold.
func (e *CompositionError) Unwrap() error { return ErrInvalidInput }

// Identifier errors.
var (
	ErrUnknownIdentifier   = errors.New("unknown identifier")
	ErrAmbiguousIdentifier = errors.New("ambiguous identifier")
)

// IdentifierError says an identifier did not name exactly one catalogue entry.
type IdentifierError struct {
	Field      string // e.g. "designation", "shares[1].identifier"
	Identifier string
	Resolution Resolution
}

func (e *IdentifierError) Error() string {
	if e.Resolution.Ambiguous || len(e.Resolution.Candidates) > 1 {
		var names []string
		for i, c := range e.Resolution.Candidates {
			if i == maxSuggestions {
				names = append(names, fmt.Sprintf("and %d more", len(e.Resolution.Candidates)-i))
				break
			}
			names = append(names, c.Designation)
		}
		return fmt.Sprintf("%s: %q is ambiguous, it may mean %s; give the designation or CAS number", e.Field, e.Identifier, strings.Join(names, ", "))
	}
	msg := fmt.Sprintf("%s: %q matches no catalogue entry", e.Field, e.Identifier)
	if n := e.Resolution.Note; n != "" && !strings.HasPrefix(n, "no catalogue entry has") {
		msg += " (" + n + ")"
	}
	if len(e.Resolution.Suggestions) > 0 {
		msg += "; did you mean " + strings.Join(e.Resolution.Suggestions, ", ") + "?"
	}
	return msg
}

// Unwrap returns ErrAmbiguousIdentifier or ErrUnknownIdentifier.
func (e *IdentifierError) Unwrap() error {
	if e.Resolution.Ambiguous || len(e.Resolution.Candidates) > 1 {
		return ErrAmbiguousIdentifier
	}
	return ErrUnknownIdentifier
}

// gwpSets are the GWP sets of the figures, in reporting order.
var gwpSets = [...]GWPSet{SetProtocol, SetAR4, SetAR5, SetAR6}

// compData is what the arithmetic needs of one component.
type compData struct {
	designation string
	formula     string
	group       Group
	pct         float64
	odp         float64
	mpGWP       float64
	gwp         [len(gwpSets)]float64
	has         [len(gwpSets)]bool
	safety      string
	halogen     bool
}

func annexF(g Group) bool { return g == GroupFI || g == GroupFII }

func newCompData(s *Substance, f Formula, pct float64) compData {
	d := compData{designation: s.Designation, formula: s.Formula, group: s.Group, pct: pct, odp: s.ODP, mpGWP: s.GWP[SetProtocol], safety: s.SafetyClass}
	for i, set := range gwpSets {
		d.gwp[i], d.has[i] = s.GWP[set]
	}
	for _, el := range []string{"F", "Cl", "Br", "I"} {
		if f.Count(el) > 0 {
			d.halogen = true
		}
	}
	return d
}

// gwpFigures computes the mixture GWPs. Sums run over mass percentages and are divided by
// 100 at the end, which keeps integer percentages exact.
func gwpFigures(comps []compData) []GWPFigure {
	out := make([]GWPFigure, 0, 2*len(gwpSets)-1)
	for i, set := range gwpSets {
		if set != SetProtocol {
			sum, complete := 0.0, true
			for _, c := range comps {
				if !c.has[i] {
					complete = false
					continue
				}
				sum += c.pct * c.gwp[i]
			}
			out = append(out, GWPFigure{Set: set, Convention: ConventionAllComponents, GWP: sum / 100, Complete: complete})
		}
		sum, complete := 0.0, true
		for _, c := range comps {
			if !annexF(c.group) {
				continue
			}
			if !c.has[i] {
				complete = false
				continue
			}
			sum += c.pct * c.gwp[i]
		}
		out = append(out, GWPFigure{Set: set, Convention: ConventionAnnexFOnly, GWP: sum / 100, Complete: complete})
	}
	return out
}

// fillMass sets the mass-dependent figures of e for net mass m, reusing buf when it is
// large enough.
func fillMass(e *Evaluation, comps []compData, m float64, buf []ComponentFigures) {
	e.NetMassKg = m
	if cap(buf) >= len(comps) {
		e.Components = buf[:len(comps)]
	} else {
		e.Components = make([]ComponentFigures, len(comps))
	}
	e.ODPTonnes, e.CO2eTonnes = 0, 0
	for i := range comps {
		c := &comps[i]
		kg := m * c.pct / 100
		t := kg / 1000
		cf := ComponentFigures{Designation: c.designation, Group: c.group, MassPct: c.pct, MassKg: kg,
			ODP: c.odp, ODPTonnes: t * c.odp, ProtocolGWP: c.mpGWP, SafetyClass: c.safety}
		if annexF(c.group) {
			cf.CO2eTonnes = t * c.mpGWP
		}
		e.Components[i] = cf
		e.ODPTonnes += cf.ODPTonnes
		e.CO2eTonnes += cf.CO2eTonnes
	}
}

// mixtureBase computes the mass-independent figures of a composition.
func mixtureBase(designation string, kind Kind, class string, comps []compData) Evaluation {
	e := Evaluation{Designation: designation, Kind: kind, SafetyClass: class, GWPs: gwpFigures(comps)}
	odp := 0.0
	for _, c := range comps {
		odp += c.pct * c.odp
	}
	e.ODP = odp / 100
	e.Cautions = cautionsFor(class, comps)
	if kind == KindBlend || len(comps) > 1 {
		shares := make([]HSShare, len(comps))
		for i, c := range comps {
			shares[i] = HSShare{Designation: c.designation, Group: c.group, MassPct: c.pct, Formula: c.formula}
		}
		var notes []string
		var n22, n17 string
		e.HS2022, n22 = MixtureHS2022(shares)
		e.HS2017, n17 = MixtureHS2017(shares)
		for _, n := range []string{n22, n17} {
			if n != "" {
				notes = append(notes, n)
			}
		}
		e.HSNote = strings.Join(notes, "; ")
	}
	return e
}

// substanceHS fills the HS fields of a single substance's evaluation.
func substanceHS(e *Evaluation, s *Substance) {
	e.HS2022 = strings.Join(s.HS2022, " ")
	e.HS2017 = strings.Join(s.HS2017, " ")
	if len(s.HS2022) == 0 && len(s.HS2017) == 0 {
		e.HSNote = "no HS subheading is recorded for " + s.Designation
		return
	}
	var notes []string
	for _, ed := range []struct {
		ed    HSEdition
		codes []string
	}{{HS2022, s.HS2022}, {HS2017, s.HS2017}} {
		for _, code := range ed.codes {
			if sh, ok := LookupHS(ed.ed, code); ok && sh.Shared {
				notes = append(notes, fmt.Sprintf("%s %s also covers substances that are not controlled: declare the designation or CAS number with it", hsEditionLabel(ed.ed), code))
			}
		}
	}
	e.HSNote = strings.Join(notes, "; ")
}

// hsEditionLabel writes an edition as people do: "HS 2022".
func hsEditionLabel(ed HSEdition) string {
	return strings.Replace(string(ed), "HS", "HS ", 1)
}

// prepareEvaluations caches the mass-independent figures of every substance and blend.
func (c *Catalogue) prepareEvaluations() {
	for i := range c.subs {
		e := &c.subs[i]
		e.comps = []compData{newCompData(e.s, e.formula, 100)}
		e.base = mixtureBase(e.s.Designation, KindSubstance, e.s.SafetyClass, e.comps)
		substanceHS(&e.base, e.s)
	}
	for i := range c.blends {
		e := &c.blends[i]
		e.comps = make([]compData, len(e.b.Components))
		for k, comp := range e.b.Components {
			se := c.subEntryFor(comp.Designation)
			e.comps[k] = newCompData(se.s, se.formula, comp.MassPct)
		}
		e.groups = c.blendGroups(e.b)
		e.base = mixtureBase(e.b.Designation, KindBlend, e.b.SafetyClass, e.comps)
	}
}

func checkMass(m float64) error {
	if math.IsNaN(m) || math.IsInf(m, 0) || m < 0 {
		return &InputError{Field: "net_mass_kg", Reason: fmt.Sprintf("%v is not accepted; give the net mass in kg as a finite number >= 0", m)}
	}
	return nil
}

// targetFor finds the one entry an identifier names: an exact name first, else Resolve.
func (c *Catalogue) targetFor(identifier, field string) (target, error) {
	if i, ok := c.lookupName(identifier); ok {
		return c.hits[i].t, nil
	}
	r := c.Resolve(identifier)
	cand, ok := r.Unique()
	if !ok {
		return target{}, &IdentifierError{Field: field, Identifier: identifier, Resolution: r}
	}
	i, _ := c.lookupName(cand.Designation)
	return c.hits[i].t, nil
}

// Evaluate gives the figures of netMassKg of a substance (one component at 100 %) or a
// blend, named by designation or synonym (any identifier that resolves uniquely is
// accepted). The mass-independent figures are cached, so a call costs one pass over the
// components.
func (c *Catalogue) Evaluate(designation string, netMassKg float64) (Evaluation, error) {
	var ev Evaluation
	err := c.EvaluateInto(&ev, designation, netMassKg)
	return ev, err
}

// EvaluateInto is Evaluate writing into dst, whose Components slice it reuses when large
// enough: a loop over many records that keeps one Evaluation allocates nothing. The
// GWPs and Cautions slices it sets are shared with the catalogue and must not be modified.
func (c *Catalogue) EvaluateInto(dst *Evaluation, designation string, netMassKg float64) error {
	if err := checkMass(netMassKg); err != nil {
		return err
	}
	t, err := c.targetFor(designation, "designation")
	if err != nil {
		return err
	}
	var comps []compData
	var base *Evaluation
	if t.kind == KindBlend {
		comps, base = c.blends[t.idx].comps, &c.blends[t.idx].base
	} else {
		comps, base = c.subs[t.idx].comps, &c.subs[t.idx].base
	}
	buf := dst.Components
	*dst = *base
	fillMass(dst, comps, netMassKg, buf)
	return nil
}

// EvaluateShares gives the figures of netMassKg of an ad-hoc composition. Each identifier must
// resolve to exactly one catalogue substance, no substance may appear twice, and the mass
// percentages must sum to 100 ± 0.01 (else *CompositionError).
func (c *Catalogue) EvaluateShares(shares []Share, netMassKg float64) (Evaluation, error) {
	if err := checkMass(netMassKg); err != nil {
		return Evaluation{}, err
	}
	if len(shares) == 0 {
		return Evaluation{}, &InputError{Field: "shares", Reason: "no components given; list each substance with its mass percentage"}
	}
	if err := checkComponentCount("shares", len(shares)); err != nil {
		return Evaluation{}, err
	}
	comps := make([]compData, len(shares))
	ids := make([]int32, len(shares))
	sum := 0.0
	for i, sh := range shares {
		if math.IsNaN(sh.MassPct) || sh.MassPct <= 0 || sh.MassPct > 100 {
			return Evaluation{}, &InputError{Field: fmt.Sprintf("shares[%d].mass_pct", i), Reason: fmt.Sprintf("%v is not accepted; give a mass percentage above 0 and at most 100", sh.MassPct)}
		}
		t, err := c.targetFor(sh.Identifier, "")
		if err != nil {
			ie := err.(*IdentifierError)
			ie.Field = fmt.Sprintf("shares[%d].identifier", i)
			return Evaluation{}, ie
		}
		if t.kind != KindSubstance {
			return Evaluation{}, &InputError{Field: fmt.Sprintf("shares[%d].identifier", i), Reason: fmt.Sprintf("%q is the blend %s; list its components, or evaluate the blend by its designation", sh.Identifier, c.entryName(t))}
		}
		for k := 0; k < i; k++ {
			if ids[k] == t.idx {
				return Evaluation{}, &InputError{Field: fmt.Sprintf("shares[%d].identifier", i), Reason: fmt.Sprintf("%q names %s, already given as shares[%d]", sh.Identifier, c.entryName(t), k)}
			}
		}
		ids[i] = t.idx
		e := &c.subs[t.idx]
		comps[i] = e.comps[0]
		comps[i].pct = sh.MassPct
		sum += sh.MassPct
	}
	if math.Abs(sum-100) > compositionTolerance {
		return Evaluation{}, &CompositionError{Sum: sum}
	}
	if len(comps) == 1 {
		e := &c.subs[ids[0]]
		ev := e.base
		fillMass(&ev, e.comps, netMassKg, nil)
		return ev, nil
	}
	base := c.adhocBase(ids, comps)
	ev := base.base
	fillMass(&ev, base.comps, netMassKg, nil)
	return ev, nil
}

// adhocEntry caches the mass-independent figures of an ad-hoc composition.
type adhocEntry struct {
	base  Evaluation
	comps []compData
}

// adhocBase returns the cached figures of a composition, computing them at first sight.
// Batches repeat compositions, and the HS classification of a mixture is the costly part.
func (c *Catalogue) adhocBase(ids []int32, comps []compData) *adhocEntry {
	key := make([]byte, 0, 12*len(comps))
	for i := range comps {
		key = binary.LittleEndian.AppendUint32(key, uint32(ids[i]))
		key = binary.LittleEndian.AppendUint64(key, math.Float64bits(comps[i].pct))
	}
	if v, ok := c.adhoc.Load(string(key)); ok {
		return v.(*adhocEntry)
	}
	e := &adhocEntry{base: mixtureBase("", KindBlend, "", comps), comps: comps}
	if c.adhocN.Load() < maxCachedResolutions {
		if _, loaded := c.adhoc.LoadOrStore(string(key), e); !loaded {
			c.adhocN.Add(1)
		}
	}
	return e
}
