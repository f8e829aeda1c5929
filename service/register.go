package service

import (
	"context"
	"fmt"
	"slices"
	"time"

	"github.com/halovet/halovet/ledger"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/validate"
)

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

// partyFromStore maps a country's stored settings to the checks'.
func partyFromStore(p store.Party) (ledger.Party, error) {
	ps := validate.PartySettings{Type: p.PartyType, HFCGroup: p.HFCGroup,
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

func toValidateLicence(l store.Licence) validate.Licence {
	v := validate.Licence{Number: l.Number, CompanyID: l.CompanyID, ValidFrom: l.ValidFrom, ValidTo: l.ValidTo,
		Status: l.Status, Version: l.Version}
	v.Directions = slices.Clone(l.Directions)
	v.SpecialPurposes = slices.Clone(l.SpecialPurposes)
	for _, q := range l.QuotaLines {
		line := validate.QuotaLine{LineNumber: q.LineNumber, Group: substances.Group(q.AnnexGroup),
			// The checker's quota notices still compute in float64 (validate); the register
			// draws and keeps the exact amounts.
			Substance: q.Substance, Unit: q.Unit, Allocated: q.Allocated.Float64(), Drawn: q.Drawn.Float64(), Closed: !q.ClosedOn.IsZero()}
		if q.AnnexGroup == validate.WholeAnnexF {
			line.Group, line.Annex = substances.GroupNone, validate.WholeAnnexF
		}
		line.Purposes = slices.Clone(q.Purposes)
		v.QuotaLines = append(v.QuotaLines, line)
	}
	for _, p := range l.StatusHistory {
		v.StatusHistory = append(v.StatusHistory, validate.StatusPeriod{From: p.From, Status: p.Status})
	}
	return v
}
