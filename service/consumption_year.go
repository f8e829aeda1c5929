package service

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/controls"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// Authorised exemptions and official figures of the reporting Party: stored with their
// sources, and applied by AssessCompliance (controls.Overrides).

var exemptedUseText = map[halovetv1.ExemptedUse]string{
	halovetv1.ExemptedUse_EXEMPTED_USE_ESSENTIAL:                string(controls.UseEssential),
	halovetv1.ExemptedUse_EXEMPTED_USE_CRITICAL:                 string(controls.UseCritical),
	halovetv1.ExemptedUse_EXEMPTED_USE_LABORATORY:               string(controls.UseLaboratory),
	halovetv1.ExemptedUse_EXEMPTED_USE_HIGH_AMBIENT_TEMPERATURE: string(controls.UseHighAmbient),
}

var exemptedUseEnum = invert(exemptedUseText)

var officialKindText = map[halovetv1.OfficialFigureKind]string{
	halovetv1.OfficialFigureKind_OFFICIAL_FIGURE_KIND_BASELINE: "baseline",
	halovetv1.OfficialFigureKind_OFFICIAL_FIGURE_KIND_LIMIT:    "limit",
}

var officialKindEnum = invert(officialKindText)

const maxYearFigures = 1000 // exemptions or official figures per call

// keyText validates a caller's key.
func keyText(f, key, example string) (string, *fieldViolation) {
	key = strings.TrimSpace(key)
	switch {
	case key == "":
		return key, &fieldViolation{f, "must not be empty; give it a key of your own, e.g. " + example}
	case len(key) > maxEntryKeyBytes || !printableText(key):
		return key, &fieldViolation{f, fmt.Sprintf("must be printable text of at most %d bytes", maxEntryKeyBytes)}
	}
	return key, nil
}

// sourceText validates a required source.
func sourceText(f, src string) (string, *fieldViolation) {
	src = strings.TrimSpace(src)
	if src == "" || len(src) > maxEntryNoteBytes || !printableText(src) {
		return src, &fieldViolation{f, fmt.Sprintf("must name the decision or document that sets the figure (printable text of 1 to %d bytes), e.g. the Meeting of the Parties' decision number", maxEntryNoteBytes)}
	}
	return src, nil
}

// countryOrReporting returns the country code given, or the reporting Party's.
func (s *Server) countryOrReporting(ctx context.Context, f, cc string) (string, *fieldViolation, error) {
	cc = strings.ToUpper(strings.TrimSpace(cc))
	if cc != "" {
		if !countryCodeRE.MatchString(cc) {
			return cc, &fieldViolation{f, fmt.Sprintf("%q is not an ISO 3166-1 alpha-2 code; accepted: two capital letters, or empty for the reporting Party", cc)}, nil
		}
		return cc, nil, nil
	}
	p, _, err := s.reportingParty(ctx)
	if err != nil {
		return "", nil, err
	}
	return p.CountryCode, nil, nil
}

func scopeOf(f, v string) (controls.Scope, *fieldViolation) {
	sc, err := controls.ParseScope(strings.TrimSpace(v))
	if err != nil || strings.TrimSpace(v) == "" {
		return "", &fieldViolation{f, fmt.Sprintf("%q is not a control scope; accepted: A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I or F (Annex F as a whole)", v)}
	}
	return sc, nil
}

func amountOK(v float64) bool { return !math.IsNaN(v) && v >= 0 && v <= maxEntryTonnes*1e6 }

func (c *consumptionServer) RecordExemptions(ctx context.Context, req *halovetv1.RecordExemptionsRequest) (*halovetv1.RecordExemptionsResponse, error) {
	in := req.GetExemptions()
	if len(in) == 0 || len(in) > maxYearFigures {
		return nil, invalid(fieldViolation{"exemptions", fmt.Sprintf("holds %d exemptions; give 1 to %d", len(in), maxYearFigures)})
	}
	var vs []fieldViolation
	add := func(v *fieldViolation) {
		if v != nil {
			vs = append(vs, *v)
		}
	}
	out := make([]store.Exemption, 0, len(in))
	seen := map[string]int{}
	for i, e := range in {
		f := fmt.Sprintf("exemptions[%d]", i)
		var se store.Exemption
		var v *fieldViolation
		se.Key, v = keyText(f+".exemption_key", e.GetExemptionKey(), "CUE-2025-MB")
		add(v)
		if j, dup := seen[se.Key]; dup && se.Key != "" {
			add(&fieldViolation{f + ".exemption_key", fmt.Sprintf("%q is also the key of exemptions[%d]; each key once per call", se.Key, j)})
		}
		seen[se.Key] = i
		cc, v, err := c.srv.countryOrReporting(ctx, f+".country_code", e.GetCountryCode())
		if err != nil {
			return nil, err
		}
		add(v)
		se.CountryCode = cc
		se.Year = int(e.GetYear())
		add(checkQueryYear(f+".year", e.GetYear()))
		sc, v := scopeOf(f+".annex_group", e.GetAnnexGroup())
		add(v)
		se.Scope = string(sc)
		se.Unit = string(sc.Unit())
		use, ok := exemptedUseText[e.GetUse()]
		if !ok {
			add(&fieldViolation{f + ".use", "must be ESSENTIAL, CRITICAL, LABORATORY or HIGH_AMBIENT_TEMPERATURE"})
		} else if v == nil {
			if err := controls.CheckExemptionScope(controls.ExemptionUse(use), sc); err != nil {
				add(&fieldViolation{f + ".use", err.Error()})
			}
		}
		se.Use = use
		se.Amount = e.GetAmount()
		if !amountOK(se.Amount) {
			add(&fieldViolation{f + ".amount", fmt.Sprintf("is %v; accepted: a number ≥ 0 in ODP t (Annexes A to E) or CO2-eq t (F)", se.Amount)})
		}
		se.Source, v = sourceText(f+".source", e.GetSource())
		add(v)
		se.Note = strings.TrimSpace(e.GetNote())
		if len(se.Note) > maxEntryNoteBytes || !printableText(se.Note) {
			add(&fieldViolation{f + ".note", fmt.Sprintf("must be printable text of at most %d bytes", maxEntryNoteBytes)})
		}
		out = append(out, se)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if err := c.srv.store.PutExemptions(ctx, out); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	resp := &halovetv1.RecordExemptionsResponse{}
	for _, e := range out {
		resp.Exemptions = append(resp.Exemptions, exemptionToProto(e))
	}
	return resp, nil
}

func exemptionToProto(e store.Exemption) *halovetv1.AuthorisedExemption {
	return &halovetv1.AuthorisedExemption{ExemptionKey: e.Key, CountryCode: e.CountryCode, Year: int32(e.Year), AnnexGroup: e.Scope,
		Use: exemptedUseEnum[e.Use], Amount: e.Amount, Unit: e.Unit, Source: e.Source, Note: e.Note}
}

func (c *consumptionServer) ListExemptions(ctx context.Context, req *halovetv1.ListExemptionsRequest) (*halovetv1.ListExemptionsResponse, error) {
	pg, vs, err := c.srv.openPage(ctx, "exemptions", req)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	if y := req.GetYear(); y != 0 {
		if v := checkQueryYear("year", y); v != nil {
			vs = append([]fieldViolation{*v}, vs...)
		}
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	es, err := c.srv.store.ListExemptionsPage(ctx, int(req.GetYear()), pg)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	out := &halovetv1.ListExemptionsResponse{}
	if es, out.NextPageToken, err = closePage(ctx, c.srv, "exemptions", req, pg, es); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	for _, e := range es {
		out.Exemptions = append(out.Exemptions, exemptionToProto(e))
	}
	return out, nil
}

func (c *consumptionServer) RecordOfficialFigures(ctx context.Context, req *halovetv1.RecordOfficialFiguresRequest) (*halovetv1.RecordOfficialFiguresResponse, error) {
	in := req.GetFigures()
	if len(in) == 0 || len(in) > maxYearFigures {
		return nil, invalid(fieldViolation{"figures", fmt.Sprintf("holds %d figures; give 1 to %d", len(in), maxYearFigures)})
	}
	var vs []fieldViolation
	add := func(v *fieldViolation) {
		if v != nil {
			vs = append(vs, *v)
		}
	}
	out := make([]store.OfficialFigure, 0, len(in))
	seen := map[string]int{}
	for i, x := range in {
		f := fmt.Sprintf("figures[%d]", i)
		var sf store.OfficialFigure
		var v *fieldViolation
		sf.Key, v = keyText(f+".figure_key", x.GetFigureKey(), "BASELINE-C/I")
		add(v)
		if j, dup := seen[sf.Key]; dup && sf.Key != "" {
			add(&fieldViolation{f + ".figure_key", fmt.Sprintf("%q is also the key of figures[%d]; each key once per call", sf.Key, j)})
		}
		seen[sf.Key] = i
		cc, v, err := c.srv.countryOrReporting(ctx, f+".country_code", x.GetCountryCode())
		if err != nil {
			return nil, err
		}
		add(v)
		sf.CountryCode = cc
		kind, ok := officialKindText[x.GetKind()]
		if !ok {
			add(&fieldViolation{f + ".kind", "must be BASELINE or LIMIT"})
		}
		sf.Kind = kind
		sf.Year = int(x.GetYear())
		switch {
		case kind == "baseline" && sf.Year != 0:
			add(&fieldViolation{f + ".year", fmt.Sprintf("is %d; a baseline has no year: give 0", sf.Year)})
		case kind == "limit":
			add(checkQueryYear(f+".year", x.GetYear()))
		}
		sc, v := scopeOf(f+".annex_group", x.GetAnnexGroup())
		add(v)
		sf.Scope = string(sc)
		sf.Unit = string(sc.Unit())
		sf.Value = x.GetValue()
		if !amountOK(sf.Value) {
			add(&fieldViolation{f + ".value", fmt.Sprintf("is %v; accepted: a number ≥ 0 in ODP t (Annexes A to E) or CO2-eq t (F)", sf.Value)})
		}
		sf.Source, v = sourceText(f+".source", x.GetSource())
		add(v)
		out = append(out, sf)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if err := c.srv.store.PutOfficialFigures(ctx, out); errors.Is(err, store.ErrAlreadyExists) {
		return nil, status.Errorf(codes.AlreadyExists, "%v: a figure of the same Party, kind, scope and year is stored under another figure_key; send it under that key to replace it (ListOfficialFigures shows the keys); nothing was stored", err)
	} else if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	resp := &halovetv1.RecordOfficialFiguresResponse{}
	for _, f := range out {
		resp.Figures = append(resp.Figures, officialToProto(f))
	}
	return resp, nil
}

func officialToProto(f store.OfficialFigure) *halovetv1.OfficialFigure {
	return &halovetv1.OfficialFigure{FigureKey: f.Key, CountryCode: f.CountryCode, Kind: officialKindEnum[f.Kind], AnnexGroup: f.Scope,
		Year: int32(f.Year), Value: f.Value, Unit: f.Unit, Source: f.Source}
}

func (c *consumptionServer) ListOfficialFigures(ctx context.Context, req *halovetv1.ListOfficialFiguresRequest) (*halovetv1.ListOfficialFiguresResponse, error) {
	pg, vs, err := c.srv.openPage(ctx, "official-figures", req)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	fs, err := c.srv.store.ListOfficialFiguresPage(ctx, pg)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	out := &halovetv1.ListOfficialFiguresResponse{}
	if fs, out.NextPageToken, err = closePage(ctx, c.srv, "official-figures", req, pg, fs); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	for _, f := range fs {
		out.Figures = append(out.Figures, officialToProto(f))
	}
	return out, nil
}

// overrides reads the reporting Party's official figures and exemptions for a scope.
func (s *Server) overrides(ctx context.Context, country string, scope controls.Scope) (controls.Overrides, error) {
	ov := controls.Overrides{Limits: map[int]controls.OfficialFigure{}, Exemptions: map[int][]controls.Exemption{}}
	fs, err := s.store.ListOfficialFigures(ctx)
	if err != nil {
		return ov, err
	}
	for _, f := range fs {
		if f.CountryCode != country || f.Scope != string(scope) {
			continue
		}
		of := controls.OfficialFigure{Value: f.Value, Source: f.Source}
		if f.Kind == "baseline" {
			ov.Baseline = &of
		} else {
			ov.Limits[f.Year] = of
		}
	}
	es, err := s.store.ListExemptions(ctx, 0)
	if err != nil {
		return ov, err
	}
	for _, e := range es {
		if e.CountryCode == country && e.Scope == string(scope) {
			ov.Exemptions[e.Year] = append(ov.Exemptions[e.Year], controls.Exemption{Use: controls.ExemptionUse(e.Use), Amount: e.Amount, Source: e.Source})
		}
	}
	return ov, nil
}

// exemptionPurpose is the declared purpose of the shipments of an exempted use.
var exemptionPurpose = map[controls.ExemptionUse]string{
	controls.UseEssential: "essential-use", controls.UseCritical: "critical-use", controls.UseLaboratory: "laboratory",
}

// exemptedUseNotes compares each authorised exemption of a year with the imports declared
// for its use, in the scope's unit: an exemption raises the limit, and the notes show how
// much of it recorded imports for the use cover (domestic production for the use is not
// in the register's shipments, so the rest is for the officer to check).
func (s *Server) exemptedUseNotes(ctx context.Context, scope controls.Scope, year int, es []controls.Exemption) ([]string, error) {
	ships, err := s.store.ShipmentTotals(ctx, []int{year})
	if err != nil {
		return nil, err
	}
	cat := s.cat.Load()
	unit := scope.Unit()
	declared := map[string]float64{}
	for _, t := range ships {
		sub, ok := cat.Substance(t.Designation)
		if !ok || t.Direction != "import" || recovered(t.Condition) || !slices.Contains(scope.Groups(), sub.Group) {
			continue
		}
		f := sub.ODP
		if unit == controls.UnitCO2eTonnes {
			f = sub.ProtocolGWP()
		}
		declared[t.Purpose] += t.Tonnes * f
	}
	var notes []string
	for _, e := range es {
		p, ok := exemptionPurpose[e.Use]
		if !ok {
			continue // high-ambient-temperature: no declared purpose of its own
		}
		notes = append(notes, fmt.Sprintf("%s-use exemption %s %s; imports declared for %s: %s %s (production for the use, if any, is not in the shipments)",
			e.Use, fmtT(e.Amount), unit, p, fmtT(declared[p]), unit))
	}
	return notes, nil
}
