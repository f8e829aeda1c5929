package service

import (
	"context"
	"fmt"
	"sync"
	"time"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/validate"
)

// rulebook is the embedded, versioned control schedule data; it is parsed once and
// read concurrently after.
var rulebook = mustRulebook()

func mustRulebook() *controls.Rulebook {
	rb, err := controls.DefaultRulebook()
	if err != nil {
		panic("embedded control schedules do not parse: " + err.Error()) // caught by every test
	}
	return rb
}

var validatePartyType = map[string]validate.PartyType{
	"article-5":     validate.PartyTypeArticle5,
	"non-article-5": validate.PartyTypeNonArticle5,
	"non-party":     validate.PartyTypeNonParty,
}

var validateHFCGroup = map[string]validate.HFCGroup{
	"a5-group-1":     validate.HFCGroupA5Group1,
	"a5-group-2":     validate.HFCGroupA5Group2,
	"non-a5":         validate.HFCGroupNonA5,
	"non-a5-variant": validate.HFCGroupNonA5Variant,
}

// controlsParty maps the reporting Party's stored settings to the controls package's.
func controlsParty(p store.Party) (controls.Party, error) {
	var cp controls.Party
	switch p.PartyType {
	case "article-5":
		cp.Type = controls.Article5
	case "non-article-5":
		cp.Type = controls.NonArticle5
	default:
		return cp, fmt.Errorf("the reporting Party %s is set as %q; it must be an Article 5 or non-Article 5 Party", p.CountryCode, p.PartyType)
	}
	switch p.HFCGroup {
	case "a5-group-1":
		cp.HFC = controls.HFCA5Group1
	case "a5-group-2":
		cp.HFC = controls.HFCA5Group2
	case "non-a5":
		cp.HFC = controls.HFCNonA5
	case "non-a5-variant":
		cp.HFC = controls.HFCNonA5Variant
	}
	return cp, nil
}

var errNoReportingParty = status.Error(codes.FailedPrecondition,
	"no reporting Party is configured: load party settings with reporting_party set for the country running halovet (LicensingService.PutParty, or 'halovet load FILE')")

// checkEnv builds the environment the checks run in: the catalogue snapshot, every
// country's settings, every licence (read once per call or stream), and the reporting
// Party's allowed levels from the rulebook.
func (s *Server) checkEnv(ctx context.Context) (*validate.Env, error) {
	parties, err := s.store.ListParties(ctx)
	if err != nil {
		return nil, toStatus(ctx, s.log, err)
	}
	env := &validate.Env{Catalogue: s.cat.Load(), Parties: map[string]validate.PartySettings{},
		Now: s.opts.Now, FutureToleranceDays: validate.DefaultFutureToleranceDays}
	var reporting *store.Party
	for i, p := range parties {
		ps := validate.PartySettings{Type: validatePartyType[p.PartyType], HFCGroup: validateHFCGroup[p.HFCGroup],
			BoundFrom: map[substances.Group]time.Time{}, Known: true}
		for g, d := range p.BoundFrom {
			t, err := time.Parse(dateLayout, d)
			if err != nil {
				return nil, status.Errorf(codes.FailedPrecondition, "party %s: bound_from[%s] %q is not a date", p.CountryCode, g, d)
			}
			ps.BoundFrom[substances.Group(g)] = t
		}
		env.Parties[p.CountryCode] = ps
		if p.ReportingParty {
			reporting = &parties[i]
		}
	}
	if reporting == nil {
		return nil, errNoReportingParty
	}
	env.ReportingParty = reporting.CountryCode
	cp, err := controlsParty(*reporting)
	if err != nil {
		return nil, status.Error(codes.FailedPrecondition, err.Error())
	}
	env.AllowedPercent = allowedPercent(cp)
	lics, err := s.store.ListLicences(ctx, "", 0)
	if err != nil {
		return nil, toStatus(ctx, s.log, err)
	}
	byNumber := make(map[string]*validate.Licence, len(lics))
	for _, l := range lics {
		byNumber[l.Number] = toValidateLicence(l)
	}
	env.Licence = func(n string) (*validate.Licence, bool) {
		l, ok := byNumber[n]
		return l, ok
	}
	if err := env.Validate(); err != nil {
		return nil, toStatus(ctx, s.log, err)
	}
	return env, nil
}

var validateStatus = map[string]validate.LicenceStatus{
	"draft": validate.LicenceDraft, "active": validate.LicenceActive,
	"suspended": validate.LicenceSuspended, "revoked": validate.LicenceRevoked,
}

var validateUnit = map[string]validate.QuotaUnit{
	"metric-t": validate.QuotaMetricTonnes, "odp-t": validate.QuotaODPTonnes, "co2e-t": validate.QuotaCO2eTonnes,
}

func toValidateLicence(l store.Licence) *validate.Licence {
	v := &validate.Licence{Number: l.Number, CompanyID: l.CompanyID, ValidFrom: l.ValidFrom, ValidTo: l.ValidTo,
		Status: validateStatus[l.Status]}
	for _, d := range l.Directions {
		if x, err := validate.ParseDirection(d); err == nil {
			v.Directions = append(v.Directions, x)
		}
	}
	for _, p := range l.SpecialPurposes {
		if x, err := validate.ParsePurpose(p); err == nil {
			v.SpecialPurposes = append(v.SpecialPurposes, x)
		}
	}
	for _, q := range l.QuotaLines {
		v.QuotaLines = append(v.QuotaLines, validate.QuotaLine{LineNumber: q.LineNumber, Group: substances.Group(q.AnnexGroup),
			Substance: q.Substance, Unit: validateUnit[q.Unit], Allocated: q.Allocated, Drawn: q.Drawn})
	}
	return v
}

type allowedKey struct {
	g    substances.Group
	year int
}

type allowedValue struct {
	pct   float64
	known bool
}

// allowedPercent answers the reporting Party's allowed level per group and year from
// the rulebook, remembering each answer: the rulebook scan would otherwise run for every
// record checked. Safe for concurrent use.
func allowedPercent(cp controls.Party) func(substances.Group, int) (float64, bool) {
	var cache sync.Map // allowedKey -> allowedValue
	return func(g substances.Group, year int) (float64, bool) {
		k := allowedKey{g, year}
		if v, ok := cache.Load(k); ok {
			a := v.(allowedValue)
			return a.pct, a.known
		}
		var v allowedValue
		if a, err := rulebook.Allowance(cp, controls.ScopeOf(g), year); err == nil {
			v = allowedValue{a.Percent(), true}
		}
		cache.Store(k, v)
		return v.pct, v.known
	}
}
