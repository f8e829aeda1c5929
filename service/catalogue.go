package service

import (
	"context"
	"errors"
	"fmt"
	"sort"
	"strings"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/substances"
)

func (c *catalogueServer) GetEntry(_ context.Context, req *halovetv1.GetEntryRequest) (*halovetv1.GetEntryResponse, error) {
	cat := c.srv.cat.Load()
	name := strings.TrimSpace(req.GetDesignation())
	if name == "" {
		return nil, invalid(fieldViolation{"designation", "must not be empty; give e.g. HCFC-22 or R-404A"})
	}
	if s, ok := cat.Substance(name); ok {
		return &halovetv1.GetEntryResponse{Kind: &halovetv1.GetEntryResponse_Substance{Substance: substanceToProto(s)}}, nil
	}
	if b, ok := cat.Blend(name); ok {
		return &halovetv1.GetEntryResponse{Kind: &halovetv1.GetEntryResponse_Blend{Blend: blendToProto(b)}}, nil
	}
	msg := fmt.Sprintf("no catalogue entry is designated %q", name)
	if r := cat.Resolve(name); len(r.Suggestions) > 0 {
		msg += "; did you mean " + strings.Join(r.Suggestions, ", ") + "?"
	} else if len(r.Candidates) > 0 {
		msg += "; ResolveIdentifier finds candidates for it"
	}
	return nil, notFoundStatus(msg)
}

func substanceToProto(s *substances.Substance) *halovetv1.Substance {
	p := &halovetv1.Substance{Designation: s.Designation, Synonyms: s.Synonyms, ChemicalName: s.ChemicalName,
		Formula: s.Formula, Structure: s.Structure, CasNumber: s.CAS, AnnexGroup: string(s.Group), Odp: stored(s.ODP),
		OdpRangeLow: storedKnown(s.ODPLow, s.ODPHigh > 0), OdpRangeHigh: storedKnown(s.ODPHigh, s.ODPHigh > 0),
		LifetimeYears: storedKnown(s.Lifetime, s.Lifetime > 0),
		SafetyClass:   s.SafetyClass, IsomerCount: int32(s.IsomerCount), Sources: s.Sources}
	if m, ok := s.ExactMolarMass(); ok {
		p.MolarMassGPerMol = m.String()
	}
	for _, set := range substances.GWPSets() {
		if v, ok := s.GWP[set]; ok {
			p.Gwps = append(p.Gwps, &halovetv1.GwpValue{GwpSet: wireterms.GWPSetToWire(set), Gwp_100Yr: stored(v)})
		}
	}
	for _, code := range s.HS2017 {
		p.HsCodes = append(p.HsCodes, hsToProto(substances.HSEdition("HS2017"), code))
	}
	for _, code := range s.HS2022 {
		p.HsCodes = append(p.HsCodes, hsToProto(substances.HSEdition("HS2022"), code))
	}
	return p
}

func hsToProto(ed substances.HSEdition, code string) *halovetv1.HsCode {
	h := &halovetv1.HsCode{Edition: wireterms.HSEditionToWire(ed), Subheading: code}
	if sub, ok := substances.LookupHS(ed, code); ok {
		h.Shared = sub.Shared
	}
	return h
}

func blendToProto(b *substances.Blend) *halovetv1.Blend {
	p := &halovetv1.Blend{Designation: b.Designation, Synonyms: b.Synonyms, BlendType: wireterms.BlendTypeToWire(b.Type),
		SafetyClass: b.SafetyClass, Sources: b.Sources}
	// A blend whose components all have zero tolerances is one whose tolerances the
	// catalogue does not record (the older azeotropes): they are absent, not "0".
	recorded := false
	for _, c := range b.Components {
		recorded = recorded || c.TolPlus != 0 || c.TolMinus != 0
	}
	for _, c := range b.Components {
		p.Components = append(p.Components, &halovetv1.BlendComponent{Designation: c.Designation,
			MassPercent: stored(c.MassPct), TolerancePlusPoints: storedKnown(c.TolPlus, recorded),
			ToleranceMinusPoints: storedKnown(c.TolMinus, recorded)})
	}
	return p
}

// listFilter is a ListEntries request's filters, hashed into page tokens so that a token
// cannot be replayed against other filters.
type listFilter struct {
	group   string
	control halovetv1.ControlFilter
	text    string
	kind    halovetv1.EntryKind
}

func (c *catalogueServer) ListEntries(ctx context.Context, req *halovetv1.ListEntriesRequest) (*halovetv1.ListEntriesResponse, error) {
	f := listFilter{group: req.GetAnnexGroup(), control: req.GetControl(), text: strings.ToLower(strings.TrimSpace(req.GetText())), kind: req.GetKind()}
	if f.group != "" && !validGroup(f.group) {
		return nil, invalid(fieldViolation{"annex_group", fmt.Sprintf("%q is not an Annex group; use A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I, F/I or F/II", f.group)})
	}
	size := int(req.GetPageSize())
	if size < 0 || size > 500 {
		return nil, invalid(fieldViolation{"page_size", "must be between 1 and 500 (0 means 100)"})
	}
	if size == 0 {
		size = 100
	}
	all := matchingEntries(c.srv.cat.Load(), f)
	off, err := c.srv.entriesAfter(ctx, req, all)
	if err != nil {
		return nil, err
	}
	resp := &halovetv1.ListEntriesResponse{TotalSize: int32(len(all))}
	if off < len(all) {
		end := min(off+size, len(all))
		resp.Entries = all[off:end]
		if end < len(all) {
			tok, err := c.srv.issuePageKey(ctx, "entries", filterHash(req), entryKeyOf(all[end-1]).strings())
			if err != nil {
				return nil, toStatus(ctx, c.srv.log, err)
			}
			resp.NextPageToken = tok
		}
	}
	return resp, nil
}

// entriesAfter is the index in all of the first entry a ListEntries page token goes on
// from (0 without a token): the first entry after the last one the previous page showed, by
// the list's order, so an entry added or removed in between moves no other entry across
// pages. A bad token is an InvalidArgument status naming page_token.
func (s *Server) entriesAfter(ctx context.Context, req *halovetv1.ListEntriesRequest, all []*halovetv1.CatalogueEntry) (int, error) {
	tok := req.GetPageToken()
	if tok == "" {
		return 0, nil
	}
	key, err := s.openPageKey(ctx, "entries", filterHash(req), tok)
	if errors.Is(err, errPageToken) {
		return 0, invalid(fieldViolation{"page_token", err.Error()})
	}
	if err != nil {
		return 0, toStatus(ctx, s.log, err)
	}
	after, ok := parseEntryKey(key)
	if !ok {
		return 0, invalid(fieldViolation{"page_token", errPageToken.Error()})
	}
	return sort.Search(len(all), func(i int) bool { return after.before(entryKeyOf(all[i])) }), nil
}

// entryKey is a catalogue entry's place in ListEntries' order, the page key its tokens
// carry: substances (by Annex group, then designation) before blends (numbered before
// unnumbered mixtures, then designation).
type entryKey struct {
	blend   bool
	group   substances.Group // of a substance
	mixture bool             // of a blend: a mixture without an ASHRAE 34 number
	name    string
}

func entryKeyOf(e *halovetv1.CatalogueEntry) entryKey {
	if b := e.GetBlend(); b != nil {
		return entryKey{blend: true, mixture: b.GetBlendType() == wireterms.BlendTypeToWire(substances.BlendMixture), name: b.GetDesignation()}
	}
	s := e.GetSubstance()
	return entryKey{group: substances.Group(s.GetAnnexGroup()), name: s.GetDesignation()}
}

// before reports whether k comes before l in the list's order.
func (k entryKey) before(l entryKey) bool {
	switch {
	case k.blend != l.blend:
		return !k.blend
	case k.blend:
		return substances.BlendBefore(k.mixture, k.name, l.mixture, l.name)
	}
	return substances.SubstanceBefore(k.group, k.name, l.group, l.name)
}

// strings is the key as a page token holds it.
func (k entryKey) strings() []string {
	if k.blend {
		m := "numbered"
		if k.mixture {
			m = "mixture"
		}
		return []string{"blend", m, k.name}
	}
	return []string{"substance", string(k.group), k.name}
}

// parseEntryKey reads a key a token carried (its signature checked already).
func parseEntryKey(s []string) (entryKey, bool) {
	if len(s) != 3 {
		return entryKey{}, false
	}
	switch s[0] {
	case "substance":
		return entryKey{group: substances.Group(s[1]), name: s[2]}, true
	case "blend":
		return entryKey{blend: true, mixture: s[1] == "mixture", name: s[2]}, s[1] == "mixture" || s[1] == "numbered"
	}
	return entryKey{}, false
}

// matchingEntries is every entry of the catalogue the filter selects: substances, then
// blends, each in catalogue order.
func matchingEntries(cat *substances.Catalogue, f listFilter) []*halovetv1.CatalogueEntry {
	var all []*halovetv1.CatalogueEntry
	if f.kind != halovetv1.EntryKind_ENTRY_KIND_BLEND {
		for _, s := range cat.Substances() {
			if matchSubstance(s, f) {
				all = append(all, &halovetv1.CatalogueEntry{Kind: &halovetv1.CatalogueEntry_Substance{Substance: substanceToProto(s)}})
			}
		}
	}
	if f.kind != halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE {
		for _, b := range cat.Blends() {
			if matchBlend(cat, b, f) {
				all = append(all, &halovetv1.CatalogueEntry{Kind: &halovetv1.CatalogueEntry_Blend{Blend: blendToProto(b)}})
			}
		}
	}
	return all
}

func containsText(text string, names ...string) bool {
	for _, n := range names {
		if strings.Contains(strings.ToLower(n), text) {
			return true
		}
	}
	return false
}

func matchSubstance(s *substances.Substance, f listFilter) bool {
	if f.group != "" && string(s.Group) != f.group {
		return false
	}
	switch f.control {
	case halovetv1.ControlFilter_CONTROL_FILTER_CONTROLLED:
		if !s.Group.Controlled() {
			return false
		}
	case halovetv1.ControlFilter_CONTROL_FILTER_UNCONTROLLED:
		if s.Group.Controlled() {
			return false
		}
	}
	return f.text == "" || containsText(f.text, append([]string{s.Designation, s.ChemicalName, s.Formula, s.CAS}, s.Synonyms...)...)
}

func matchBlend(cat *substances.Catalogue, b *substances.Blend, f listFilter) bool {
	groups := cat.BlendGroups(b)
	if f.group != "" {
		found := false
		for _, g := range groups {
			found = found || string(g) == f.group
		}
		if !found {
			return false
		}
	}
	switch f.control {
	case halovetv1.ControlFilter_CONTROL_FILTER_CONTROLLED:
		if len(groups) == 0 {
			return false
		}
	case halovetv1.ControlFilter_CONTROL_FILTER_UNCONTROLLED:
		if len(groups) > 0 {
			return false
		}
	}
	if f.text == "" {
		return true
	}
	names := append([]string{b.Designation}, b.Synonyms...)
	for _, c := range b.Components {
		names = append(names, c.Designation)
	}
	return containsText(f.text, names...)
}

var matchKindProto = map[substances.MatchKind]halovetv1.MatchKind{
	substances.MatchDesignation:   halovetv1.MatchKind_MATCH_KIND_DESIGNATION,
	substances.MatchSynonym:       halovetv1.MatchKind_MATCH_KIND_SYNONYM,
	substances.MatchCAS:           halovetv1.MatchKind_MATCH_KIND_CAS_NUMBER,
	substances.MatchFormula:       halovetv1.MatchKind_MATCH_KIND_FORMULA,
	substances.MatchChemicalName:  halovetv1.MatchKind_MATCH_KIND_CHEMICAL_NAME,
	substances.MatchHSCode:        halovetv1.MatchKind_MATCH_KIND_HS_CODE,
	substances.MatchDecodedNumber: halovetv1.MatchKind_MATCH_KIND_DECODED_NUMBER,
}

func kindProto(k substances.Kind) halovetv1.EntryKind {
	switch k {
	case substances.KindSubstance:
		return halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE
	case substances.KindBlend:
		return halovetv1.EntryKind_ENTRY_KIND_BLEND
	}
	return halovetv1.EntryKind_ENTRY_KIND_UNSPECIFIED
}

func (c *catalogueServer) ResolveIdentifier(_ context.Context, req *halovetv1.ResolveIdentifierRequest) (*halovetv1.ResolveIdentifierResponse, error) {
	id := strings.TrimSpace(req.GetIdentifier())
	if id == "" {
		return nil, invalid(fieldViolation{"identifier", "must not be empty; give a designation, CAS number, formula, chemical name or HS code"})
	}
	if len(id) > 200 {
		return nil, invalid(fieldViolation{"identifier", "is longer than 200 characters"})
	}
	r := c.srv.cat.Load().Resolve(id)
	return resolutionToProto(r), nil
}

func resolutionToProto(r substances.Resolution) *halovetv1.ResolveIdentifierResponse {
	out := &halovetv1.ResolveIdentifierResponse{Ambiguous: r.Ambiguous, Suggestions: r.Suggestions, Note: r.Note}
	for _, cd := range r.Candidates {
		out.Candidates = append(out.Candidates, &halovetv1.Candidate{Designation: cd.Designation, Kind: kindProto(cd.Kind),
			MatchKind: matchKindProto[cd.Match], Score: derived(cd.Score), MatchedOn: cd.MatchedOn, AnnexGroup: string(cd.Group)})
	}
	return out
}

func (c *catalogueServer) EvaluateMixture(_ context.Context, req *halovetv1.EvaluateMixtureRequest) (*halovetv1.EvaluateMixtureResponse, error) {
	var vs []fieldViolation
	m, _ := figureIn("net_mass_kg", req.GetNetMassKg(), &vs)
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	cat := c.srv.cat.Load()
	var ev substances.Evaluation
	var err error
	blend, comp := strings.TrimSpace(req.GetBlend()), req.GetComposition()
	switch {
	case blend != "" && len(comp) > 0:
		return nil, invalid(fieldViolation{"blend", "give blend or composition, not both"})
	case blend != "":
		ev, err = cat.EvaluateExact(blend, m)
	case len(comp) > 0:
		shares, vs := compositionFromProto(comp)
		if len(vs) > 0 {
			return nil, invalid(vs...)
		}
		ev, err = cat.EvaluateSharesExact(shares, m)
		if err != nil {
			return nil, compositionError(err)
		}
	default:
		return nil, invalid(fieldViolation{"blend", "give blend (e.g. R-410A) or composition (shares summing to 100 %)"})
	}
	if err != nil {
		return nil, evaluationError(err)
	}
	return evaluationToProto(&ev), nil
}

// compositionFromProto decodes an ad-hoc composition, with a violation naming each bad
// composition[i].mass_percent.
func compositionFromProto(comp []*halovetv1.MixtureShare) ([]substances.Share, []fieldViolation) {
	var vs []fieldViolation
	shares := make([]substances.Share, len(comp))
	for i, s := range comp {
		field := fmt.Sprintf("composition[%d].mass_percent", i)
		if strings.TrimSpace(s.GetMassPercent()) == "" {
			vs = append(vs, fieldViolation{field, "missing; give the mass percent as a decimal above 0 and at most 100, e.g. \"50\""})
			continue
		}
		_, pct := figureIn(field, s.GetMassPercent(), &vs)
		shares[i] = substances.Share{Identifier: s.GetIdentifier(), MassPct: pct}
	}
	return shares, vs
}

// compositionWireField turns the catalogue's name of a share's field ("shares[1].identifier",
// "shares[0].mass_pct") into the request's ("composition[1].identifier",
// "composition[0].mass_percent").
func compositionWireField(f string) string {
	rest, ok := strings.CutPrefix(f, "shares[")
	if !ok {
		return f
	}
	f = "composition[" + rest
	if g, ok := strings.CutSuffix(f, ".mass_pct"); ok {
		f = g + ".mass_percent"
	}
	return f
}

// compositionError is evaluationError for an ad-hoc composition, naming the request's fields.
func compositionError(err error) error {
	var ie *substances.InputError
	var ce *substances.CompositionError
	var ide *substances.IdentifierError
	switch {
	case errors.As(err, &ide):
		return invalid(fieldViolation{compositionWireField(ide.Field), strings.TrimPrefix(ide.Error(), ide.Field+": ")})
	case errors.As(err, &ce):
		return invalid(fieldViolation{"composition", ce.Error()})
	case errors.As(err, &ie):
		return invalid(fieldViolation{compositionWireField(ie.Field), ie.Reason})
	}
	return evaluationError(err)
}

// evaluationError maps the catalogue's input errors to InvalidArgument with the field.
func evaluationError(err error) error {
	var ie *substances.InputError
	var ce *substances.CompositionError
	var ide *substances.IdentifierError
	switch {
	case errors.As(err, &ide):
		return invalid(fieldViolation{ide.Field, strings.TrimPrefix(ide.Error(), ide.Field+": ")})
	case errors.As(err, &ce):
		return invalid(fieldViolation{"composition", ce.Error()})
	case errors.As(err, &ie):
		return invalid(fieldViolation{ie.Field, ie.Reason})
	}
	return invalid(fieldViolation{"mixture", err.Error()})
}

func evaluationToProto(ev *substances.Evaluation) *halovetv1.EvaluateMixtureResponse {
	d := ev.Designation
	if d == "" {
		d = "custom"
	}
	out := &halovetv1.EvaluateMixtureResponse{Designation: d, Odp: ev.Exact.ODP.String(), NetMassKg: ev.Exact.NetMassKg.String(),
		OdpTonnes: ev.Exact.ODPTonnes.String(), Co2ETonnes: ev.Exact.CO2eTonnes.String(), SafetyClass: ev.SafetyClass, Cautions: ev.Cautions,
		Hs2022Subheading: ev.HS2022, HsNote: ev.HSNote}
	for _, g := range ev.GWPs {
		out.Gwps = append(out.Gwps, &halovetv1.GwpFigure{GwpSet: wireterms.GWPSetToWire(g.Set), Convention: wireterms.GWPConventionToWire(g.Convention), Gwp_100Yr: g.Value.String(), Complete: g.Complete})
	}
	out.Components = componentsToProto(ev.Components)
	return out
}

func componentsToProto(cs []substances.ComponentFigures) []*halovetv1.ComponentFigures {
	out := make([]*halovetv1.ComponentFigures, len(cs))
	for i, c := range cs {
		x := c.Exact
		out[i] = &halovetv1.ComponentFigures{Designation: c.Designation, AnnexGroup: string(c.Group), MassPercent: x.MassPct.String(),
			MassKg: x.MassKg.String(), Odp: x.ODP.String(), OdpTonnes: x.ODPTonnes.String(), Gwp_100YrProtocol: x.ProtocolGWP.String(),
			Co2ETonnes: x.CO2eTonnes.String(), SafetyClass: c.SafetyClass}
	}
	return out
}
