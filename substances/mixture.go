package substances

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/halovet/halovet/exact"
)

// Share is one component of an ad-hoc composition.
type Share struct {
	Identifier string // designation, synonym, CAS number or formula of a catalogue substance
	// MassPct is the mass percent, above 0 and at most 100. It is read as the shortest
	// decimal that gives this float64 (exact.FromFloat), so a share written as "33.3" is
	// 33.3 exactly in the arithmetic.
	MassPct float64
}

// percent returns the share's exact mass percent.
func (sh Share) percent() exact.Decimal { return exact.OfFloat(sh.MassPct) }

// GWPFigure is a mixture's 100-year GWP under one set of values and one convention.
type GWPFigure struct {
	Set        GWPSet
	Convention GWPConvention
	Value      exact.Decimal // mass-fraction-weighted sum, exact
	GWP        float64       // Value as the nearest float64, for callers that still compute in floats
	Complete   bool          // every component the convention counts has a value in the set
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
	// Exact holds the same figures as exact decimals; the float64 fields above are their
	// nearest floats, kept for callers that still compute in floats (validate, controls).
	// A ComponentFigures built outside this package may leave Exact unset.
	Exact ComponentExact
}

// ComponentExact are a component's figures as exact decimals: products of the stored
// figures and the net mass, never rounded.
type ComponentExact struct {
	MassPct     exact.Decimal
	MassKg      exact.Decimal
	ODP         exact.Decimal
	ODPTonnes   exact.Decimal
	ProtocolGWP exact.Decimal
	CO2eTonnes  exact.Decimal
}

// EvaluationExact are an evaluation's totals as exact decimals.
type EvaluationExact struct {
	ODP        exact.Decimal // mass-fraction-weighted ODP
	NetMassKg  exact.Decimal
	ODPTonnes  exact.Decimal
	CO2eTonnes exact.Decimal
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
	// Exact holds ODP, NetMassKg, ODPTonnes and CO2eTonnes as exact decimals; the float64
	// fields are their nearest floats.
	Exact EvaluationExact
}

// GWP returns the figure for a set and convention.
func (e Evaluation) GWP(set GWPSet, convention GWPConvention) (GWPFigure, bool) {
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
	// The same figures as exact decimals, from the stored values.
	pctX   exact.Decimal
	odpX   exact.Decimal
	mpGWPX exact.Decimal
	gwpX   [len(gwpSets)]exact.Decimal
}

// withPct returns d with its share set to p.
func (d compData) withPct(p exact.Decimal) compData {
	d.pctX, d.pct = p, p.Float64()
	return d
}

func annexF(g Group) bool { return g == GroupFI || g == GroupFII }

func newCompData(s *Substance, f Formula, pct float64) compData {
	d := compData{designation: s.Designation, formula: s.Formula, group: s.Group, pct: pct, odp: s.ODP, mpGWP: s.GWP[SetProtocol], safety: s.SafetyClass,
		pctX: exact.OfFloat(pct), odpX: exact.OfFloat(s.ODP), mpGWPX: exact.OfFloat(s.GWP[SetProtocol])}
	for i, set := range gwpSets {
		d.gwp[i], d.has[i] = s.GWP[set]
		d.gwpX[i] = exact.OfFloat(d.gwp[i])
	}
	for _, el := range []string{"F", "Cl", "Br", "I"} {
		if f.Count(el) > 0 {
			d.halogen = true
		}
	}
	return d
}

// gwpFigures computes the mixture GWPs as exact weighted sums: Σ share% × GWP / 100.
func gwpFigures(comps []compData) []GWPFigure {
	out := make([]GWPFigure, 0, 2*len(gwpSets)-1)
	figure := func(i int, convention GWPConvention, counts func(compData) bool) GWPFigure {
		sum, complete := exact.Zero, true
		for _, c := range comps {
			if !counts(c) {
				continue
			}
			if !c.has[i] {
				complete = false
				continue
			}
			sum = sum.Add(c.gwpX[i].Percent(c.pctX))
		}
		return GWPFigure{Set: gwpSets[i], Convention: convention, Value: sum, GWP: sum.Float64(), Complete: complete}
	}
	for i, set := range gwpSets {
		if set != SetProtocol {
			out = append(out, figure(i, ConventionAllComponents, func(compData) bool { return true }))
		}
		out = append(out, figure(i, ConventionAnnexFOnly, func(c compData) bool { return annexF(c.group) }))
	}
	return out
}

// fillMass sets the mass-dependent figures of e for net mass m in float64 only, reusing
// buf when it is large enough: the bulk check's loop (EvaluateInto) allocates nothing.
// Exact figures are added by fillExact.
func fillMass(e *Evaluation, comps []compData, m float64, buf []ComponentFigures) {
	e.NetMassKg = m
	if cap(buf) >= len(comps) {
		e.Components = buf[:len(comps)]
	} else {
		e.Components = make([]ComponentFigures, len(comps))
	}
	e.ODPTonnes, e.CO2eTonnes = 0, 0
	e.Exact.NetMassKg, e.Exact.ODPTonnes, e.Exact.CO2eTonnes = exact.Zero, exact.Zero, exact.Zero
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

// fillExact sets the mass-dependent figures of e for net mass m as exact decimals, and the
// float64 fields to their nearest floats. Every figure is an exact product: kg = m ×
// share% / 100, t = kg / 1000, ODP t = t × ODP, CO2-eq t = t × Annex GWP (Annex F only).
func fillExact(e *Evaluation, comps []compData, m exact.Decimal) {
	if len(e.Components) != len(comps) {
		e.Components = make([]ComponentFigures, len(comps))
	}
	odpT, co2e := exact.Zero, exact.Zero
	for i := range comps {
		c := &comps[i]
		kg := m.Percent(c.pctX)
		t := kg.Shift(-3)
		x := ComponentExact{MassPct: c.pctX, MassKg: kg, ODP: c.odpX, ODPTonnes: t.Mul(c.odpX), ProtocolGWP: c.mpGWPX}
		if annexF(c.group) {
			x.CO2eTonnes = t.Mul(c.mpGWPX)
		}
		e.Components[i] = ComponentFigures{Designation: c.designation, Group: c.group, MassPct: c.pct, MassKg: kg.Float64(),
			ODP: c.odp, ODPTonnes: x.ODPTonnes.Float64(), ProtocolGWP: c.mpGWP, CO2eTonnes: x.CO2eTonnes.Float64(),
			SafetyClass: c.safety, Exact: x}
		odpT = odpT.Add(x.ODPTonnes)
		co2e = co2e.Add(x.CO2eTonnes)
	}
	e.Exact.NetMassKg, e.Exact.ODPTonnes, e.Exact.CO2eTonnes = m, odpT, co2e
	e.NetMassKg, e.ODPTonnes, e.CO2eTonnes = m.Float64(), odpT.Float64(), co2e.Float64()
}

// mixtureBase computes the mass-independent figures of a composition.
func mixtureBase(designation string, kind Kind, class string, comps []compData) Evaluation {
	e := Evaluation{Designation: designation, Kind: kind, SafetyClass: class, GWPs: gwpFigures(comps)}
	odp := exact.Zero
	for _, c := range comps {
		odp = odp.Add(c.odpX.Percent(c.pctX))
	}
	e.Exact.ODP, e.ODP = odp, odp.Float64()
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

func checkMassExact(m exact.Decimal) error {
	if m.Sign() < 0 {
		return &InputError{Field: "net_mass_kg", Reason: fmt.Sprintf("%s is not accepted; give the net mass in kg as a decimal >= 0", m)}
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
	comps, err := c.evaluateInto(dst, designation)
	if err == nil {
		fillMass(dst, comps, netMassKg, dst.Components)
	}
	return err
}

// EvaluateExact is Evaluate for a net mass given as an exact decimal (as the API carries it).
func (c *Catalogue) EvaluateExact(designation string, netMassKg exact.Decimal) (Evaluation, error) {
	var ev Evaluation
	if err := checkMassExact(netMassKg); err != nil {
		return ev, err
	}
	comps, err := c.evaluateInto(&ev, designation)
	if err == nil {
		fillExact(&ev, comps, netMassKg)
	}
	return ev, err
}

// evaluateInto copies the cached mass-independent figures of the entry into dst, keeping
// dst's Components buffer, and returns the entry's components.
func (c *Catalogue) evaluateInto(dst *Evaluation, designation string) ([]compData, error) {
	t, err := c.targetFor(designation, "designation")
	if err != nil {
		return nil, err
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
	dst.Components = buf
	return comps, nil
}

// EvaluateShares gives the figures of netMassKg of an ad-hoc composition. Each identifier must
// resolve to exactly one catalogue substance, no substance may appear twice, and the mass
// percentages must sum to 100 ± 0.01 (else *CompositionError).
func (c *Catalogue) EvaluateShares(shares []Share, netMassKg float64) (Evaluation, error) {
	if err := checkMass(netMassKg); err != nil {
		return Evaluation{}, err
	}
	return c.EvaluateSharesExact(shares, exact.OfFloat(netMassKg))
}

// EvaluateSharesExact is EvaluateShares for a net mass given as an exact decimal.
func (c *Catalogue) EvaluateSharesExact(shares []Share, netMassKg exact.Decimal) (Evaluation, error) {
	if err := checkMassExact(netMassKg); err != nil {
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
	sum := exact.Zero
	for i, sh := range shares {
		if math.IsNaN(sh.MassPct) || math.IsInf(sh.MassPct, 0) {
			return Evaluation{}, &InputError{Field: fmt.Sprintf("shares[%d].mass_pct", i), Reason: fmt.Sprintf("%v is not accepted; give a mass percentage above 0 and at most 100", sh.MassPct)}
		}
		pct := sh.percent()
		if pct.Sign() <= 0 || pct.Cmp(exact.Hundred) > 0 {
			return Evaluation{}, &InputError{Field: fmt.Sprintf("shares[%d].mass_pct", i), Reason: fmt.Sprintf("%s is not accepted; give a mass percentage above 0 and at most 100", pct)}
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
		comps[i] = e.comps[0].withPct(pct)
		sum = sum.Add(pct)
	}
	if sum.Sub(exact.Hundred).Abs().Cmp(exact.OfFloat(compositionTolerance)) > 0 {
		return Evaluation{}, &CompositionError{Sum: sum.Float64()}
	}
	if len(comps) == 1 {
		e := &c.subs[ids[0]]
		ev := e.base
		fillExact(&ev, e.comps, netMassKg)
		return ev, nil
	}
	base := c.adhocBase(ids, comps)
	ev := base.base
	fillExact(&ev, base.comps, netMassKg)
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
	key := make([]byte, 0, 16*len(comps))
	for i := range comps {
		key = binary.LittleEndian.AppendUint32(key, uint32(ids[i]))
		key = append(key, comps[i].pctX.String()...)
		key = append(key, 0)
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
