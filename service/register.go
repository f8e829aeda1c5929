package service

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"
	"time"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/validate"
)

// checkEnv returns the environment to judge a record against now, or the status that
// says why there is none.
func (s *Server) checkEnv(ctx context.Context) (*validate.Env, error) {
	env, err := s.env.Current(ctx)
	switch {
	case err == nil:
		return env, nil
	case errors.Is(err, ledger.ErrNotConfigured):
		return nil, status.Error(codes.FailedPrecondition, err.Error()+" (LicensingService.SetReportingParty, 'halovet reporting-party CODE', or 'halovet load FILE' on an empty register)")
	}
	return nil, toStatus(ctx, s.log, err)
}

// checkEnvFor is checkEnv for judging these records. A licence they name that the
// snapshot does not hold may have been issued on another replica a moment ago, before its
// announcement reached this one, so it is looked up in the register before the records are
// judged: an unknown licence number costs one query, a known one none.
func (s *Server) checkEnvFor(ctx context.Context, recs ...*halovetv1.ShipmentRecord) (*validate.Env, error) {
	env, err := s.checkEnv(ctx)
	if err != nil {
		return nil, err
	}
	var missing []string
	for _, r := range recs {
		n := strings.TrimSpace(r.GetLicenceNumber())
		if n == "" || slices.Contains(missing, n) {
			continue
		}
		if _, ok := env.Licence(n); !ok {
			missing = append(missing, n)
		}
	}
	if len(missing) > 0 {
		if err := s.env.Refresh(ctx, ledger.Change{Licences: missing}); err != nil {
			return nil, toStatus(ctx, s.log, err)
		}
		if env, err = s.checkEnv(ctx); err != nil {
			return nil, err
		}
	}
	if err := licencesInScope(ctx, env, recs); err != nil {
		return nil, err
	}
	return env, nil
}

// licencesInScope refuses, for a company-scoped caller (a trader), a record naming a
// licence another company holds: its verdict would show that licence's status, validity
// and remaining quota.
func licencesInScope(ctx context.Context, env *validate.Env, recs []*halovetv1.ShipmentRecord) error {
	own, scoped := callCompany(ctx)
	if !scoped {
		return nil
	}
	for i, r := range recs {
		n := strings.TrimSpace(r.GetLicenceNumber())
		if n == "" {
			continue
		}
		if lic, ok := env.Licence(n); ok && lic != nil && lic.CompanyID != own {
			field := "record.licence_number"
			if len(recs) > 1 {
				field = fmt.Sprintf("records[%d].licence_number", i)
			}
			return denied(field, fmt.Sprintf("licence %s is held by another company; a trader's credential reaches its own company's licences only", n))
		}
	}
	return nil
}

// registerChanged brings this server's check environment up to a change it has just
// written, so that its next check sees the change; the other replicas follow the
// database's announcement. A failure is logged: the announcement still follows.
func (s *Server) registerChanged(ctx context.Context, c ledger.Change) {
	if err := s.env.Refresh(ctx, c); err != nil {
		s.log.Warn("check environment not refreshed after a register change; the database's announcement will bring it", "err", err)
	}
}

// registerSource adapts the store to the check environment's Register and Notifier.
type registerSource struct{ st *store.Store }

var _ ledger.Register = registerSource{}
var _ ledger.Notifier = registerSource{}

func (r registerSource) Parties(ctx context.Context) ([]ledger.Party, error) {
	ps, err := r.st.ListParties(ctx)
	if err != nil {
		return nil, err
	}
	out := make([]ledger.Party, 0, len(ps))
	for _, p := range ps {
		lp, err := partyFromStore(p)
		if err != nil {
			return nil, err
		}
		out = append(out, lp)
	}
	return out, nil
}

func (r registerSource) Licences(ctx context.Context, numbers []string) ([]validate.Licence, error) {
	var ls []store.Licence
	var err error
	if numbers == nil {
		ls, err = r.st.ListLicences(ctx, "", 0)
	} else {
		ls, err = r.st.LicencesByNumber(ctx, numbers)
	}
	if err != nil {
		return nil, err
	}
	out := make([]validate.Licence, len(ls))
	for i, l := range ls {
		out[i] = toValidateLicence(l)
	}
	return out, nil
}

func (r registerSource) Listen(ctx context.Context, ready func(), changed func(ledger.Change)) error {
	return r.st.ListenRegister(ctx, ready, func(c store.RegisterChange) {
		lc := ledger.Change{All: c.All, Parties: c.Parties}
		if c.Licence != "" {
			lc.Licences = []string{c.Licence}
		}
		changed(lc)
	})
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

// partyFromStore maps a country's stored settings to the checks'.
func partyFromStore(p store.Party) (ledger.Party, error) {
	ps := validate.PartySettings{Type: validatePartyType[p.PartyType], HFCGroup: validateHFCGroup[p.HFCGroup],
		BoundFrom: make(map[substances.Group]time.Time, len(p.BoundFrom)), Known: true}
	for g, d := range p.BoundFrom {
		t, err := time.Parse(dateLayout, d)
		if err != nil {
			return ledger.Party{}, fmt.Errorf("%w: party %s: bound_from[%s] %q is not a date", ledger.ErrNotConfigured, p.CountryCode, g, d)
		}
		ps.BoundFrom[substances.Group(g)] = t
	}
	return ledger.Party{Code: p.CountryCode, Settings: ps, Reporting: p.ReportingParty}, nil
}

var validateStatus = map[string]validate.LicenceStatus{
	"draft": validate.LicenceDraft, "active": validate.LicenceActive,
	"suspended": validate.LicenceSuspended, "revoked": validate.LicenceRevoked,
}

var validateUnit = map[string]validate.QuotaUnit{
	"metric-t": validate.QuotaMetricTonnes, "odp-t": validate.QuotaODPTonnes, "co2e-t": validate.QuotaCO2eTonnes,
}

func toValidateLicence(l store.Licence) validate.Licence {
	v := validate.Licence{Number: l.Number, CompanyID: l.CompanyID, ValidFrom: l.ValidFrom, ValidTo: l.ValidTo,
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
		line := validate.QuotaLine{LineNumber: q.LineNumber, Group: substances.Group(q.AnnexGroup),
			Substance: q.Substance, Unit: validateUnit[q.Unit], Allocated: q.Allocated, Drawn: q.Drawn, Closed: !q.ClosedOn.IsZero()}
		if q.AnnexGroup == validate.WholeAnnexF {
			line.Group, line.Annex = substances.GroupNone, validate.WholeAnnexF
		}
		for _, p := range q.Purposes {
			if x, err := validate.ParsePurpose(p); err == nil {
				line.Purposes = append(line.Purposes, x)
			}
		}
		v.QuotaLines = append(v.QuotaLines, line)
	}
	for _, p := range l.StatusHistory {
		v.StatusHistory = append(v.StatusHistory, validate.StatusPeriod{From: p.From, Status: validateStatus[p.Status]})
	}
	return v
}
