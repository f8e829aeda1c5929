package service

import (
	"context"
	"errors"
	"fmt"
	"strings"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/substances"
)

// UpsertSubstance adds or corrects a substance. The formula, structure, designation
// and CAS number must agree with each other, and the catalogue with the change must
// still be consistent (blends, names); then the change is stored, audited, announced to
// every replica, and this replica's snapshot is reloaded before the reply.
func (c *catalogueServer) UpsertSubstance(ctx context.Context, req *halovetv1.UpsertSubstanceRequest) (*halovetv1.UpsertSubstanceResponse, error) {
	p := req.GetSubstance()
	if p == nil {
		return nil, invalid(fieldViolation{"substance", "is required"})
	}
	s, vs := substanceFromProto(p)
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if strings.TrimSpace(req.GetReason()) == "" {
		return nil, invalid(fieldViolation{"reason", "say why the catalogue changes; it is kept in the audit log"})
	}
	// The new snapshot must hold together with every other entry.
	cur := c.srv.cat.Load()
	subs := make([]substances.Substance, 0, len(cur.Substances())+1)
	for _, x := range cur.Substances() {
		if x.Designation != s.Designation {
			subs = append(subs, *x)
		}
	}
	subs = append(subs, s)
	blends := make([]substances.Blend, 0, len(cur.Blends()))
	for _, b := range cur.Blends() {
		blends = append(blends, *b)
	}
	if _, err := substances.NewCatalogue(subs, blends); err != nil {
		return nil, invalid(fieldViolation{"substance", err.Error()})
	}
	created, err := c.srv.store.UpsertSubstance(ctx, &s, req.GetReason())
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	if err := c.srv.cat.Reload(ctx, c.srv.store); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	got, _ := c.srv.cat.Load().Substance(s.Designation)
	return &halovetv1.UpsertSubstanceResponse{Substance: substanceToProto(got), Created: created}, nil
}

// substanceFromProto checks an administrator's substance: formula parses; structure,
// designation number and CAS check digit, where given, agree with it; ODP and GWPs are
// in range; the Annex group is known.
func substanceFromProto(p *halovetv1.Substance) (substances.Substance, []fieldViolation) {
	var vs []fieldViolation
	s := substances.Substance{Designation: strings.TrimSpace(p.GetDesignation()), Synonyms: p.GetSynonyms(),
		ChemicalName: p.GetChemicalName(), Structure: p.GetStructure(), Group: substances.Group(p.GetAnnexGroup()),
		IsomerCount: int(p.GetIsomerCount()), SafetyClass: p.GetSafetyClass(), Sources: p.GetSources(),
		GWP: map[substances.GWPSet]float64{}}
	_, s.ODP = figureIn("substance.odp", p.GetOdp(), &vs)
	_, s.ODPLow = figureIn("substance.odp_range_low", p.GetOdpRangeLow(), &vs)
	_, s.ODPHigh = figureIn("substance.odp_range_high", p.GetOdpRangeHigh(), &vs)
	_, s.Lifetime = figureIn("substance.lifetime_years", p.GetLifetimeYears(), &vs)
	if s.Designation == "" {
		vs = append(vs, fieldViolation{"substance.designation", "must not be empty"})
	}
	if s.Group != "" && !validGroup(string(s.Group)) {
		vs = append(vs, fieldViolation{"substance.annex_group", fmt.Sprintf("%q is not an Annex group (A/I ... F/II, or empty)", s.Group)})
	}
	if s.ODP < 0 || (s.ODPHigh > 0 && (s.ODPLow > s.ODPHigh || s.ODP != s.ODPHigh)) {
		vs = append(vs, fieldViolation{"substance.odp", "must be 0 or more and, with a range, equal its upper end"})
	}
	if strings.TrimSpace(s.Sources) == "" {
		vs = append(vs, fieldViolation{"substance.sources", "name the publication the values come from"})
	}
	f, err := substances.ParseFormula(p.GetFormula())
	if err != nil {
		vs = append(vs, fieldViolation{"substance.formula", err.Error()})
		return s, vs
	}
	s.Formula = f.Hill()
	if m, err := f.MolarMass(); err == nil {
		s.MolarMass = m
	} else {
		vs = append(vs, fieldViolation{"substance.formula", err.Error()})
	}
	if s.Structure != "" {
		if sf, err := substances.ParseFormula(s.Structure); err != nil {
			vs = append(vs, fieldViolation{"substance.structure", err.Error()})
		} else if !sf.Equal(f) {
			vs = append(vs, fieldViolation{"substance.structure", fmt.Sprintf("%s is %s, not the formula %s", s.Structure, sf.Hill(), s.Formula)})
		}
	}
	if d, err := substances.ParseDesignation(s.Designation); err == nil {
		if !d.Formula.Equal(f) {
			vs = append(vs, fieldViolation{"substance.designation", fmt.Sprintf("%s decodes to %s by the ASHRAE 34 numbering, not %s", s.Designation, d.Formula.Hill(), s.Formula)})
		}
	} else if !errors.Is(err, substances.ErrNotSingleCompound) && looksNumbered(s.Designation) {
		vs = append(vs, fieldViolation{"substance.designation", err.Error()})
	}
	if p.GetCasNumber() != "" {
		cas, err := substances.ParseCAS(p.GetCasNumber())
		if err != nil {
			vs = append(vs, fieldViolation{"substance.cas_number", err.Error()})
		}
		s.CAS = cas
	}
	for i, g := range p.GetGwps() {
		set, ok := wireterms.GWPSetFromWire(g.GetGwpSet())
		if !ok || set == "" {
			vs = append(vs, fieldViolation{fmt.Sprintf("substance.gwps[%d].gwp_set", i), fmt.Sprintf("%v is not a GWP set; use GWP_SET_PROTOCOL_ANNEXES, GWP_SET_IPCC_AR4, GWP_SET_IPCC_AR5 or GWP_SET_IPCC_AR6", g.GetGwpSet())})
		}
		field := fmt.Sprintf("substance.gwps[%d].gwp_100yr", i)
		if strings.TrimSpace(g.GetGwp_100Yr()) == "" {
			vs = append(vs, fieldViolation{field, "missing; give the 100-year GWP as a decimal, e.g. \"1430\""})
		}
		_, s.GWP[set] = figureIn(field, g.GetGwp_100Yr(), &vs)
	}
	for i, h := range p.GetHsCodes() {
		code, err := substances.NormalizeHS(h.GetSubheading())
		if err != nil {
			vs = append(vs, fieldViolation{fmt.Sprintf("substance.hs_codes[%d].subheading", i), err.Error()})
			continue
		}
		ed, _ := wireterms.HSEditionFromWire(h.GetEdition())
		switch ed {
		case substances.HS2017:
			s.HS2017 = append(s.HS2017, code)
		case substances.HS2022:
			s.HS2022 = append(s.HS2022, code)
		default:
			vs = append(vs, fieldViolation{fmt.Sprintf("substance.hs_codes[%d].edition", i), fmt.Sprintf("%v is not an HS edition; use HS_EDITION_HS_2017 or HS_EDITION_HS_2022", h.GetEdition())})
		}
	}
	return s, vs
}

// looksNumbered reports whether a designation is written as a refrigerant number
// (R-, CFC-, HCFC-, ...), so that a decoding failure is the caller's mistake.
func looksNumbered(d string) bool {
	u := strings.ToUpper(d)
	for _, p := range []string{"R-", "R ", "CFC", "HCFC", "HFC", "HBFC", "HALON"} {
		if strings.HasPrefix(u, p) {
			return true
		}
	}
	return false
}
