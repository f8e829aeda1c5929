package service

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/ledger"
	"github.com/halovet/halovet/store"
)

// reportSource adapts the store to the consumption workflows' Reports and DraftIssuer.
type reportSource struct {
	st    *store.Store
	today func() time.Time
}

var _ ledger.Reports = reportSource{}
var _ ledger.DraftIssuer = reportSource{}

// NewReportSource adapts st to the ledger's consumption workflows (for tests of the
// ledger on a real register); today dates draft amendments.
func NewReportSource(st *store.Store, today func() time.Time) interface {
	ledger.Reports
	ledger.DraftIssuer
} {
	return reportSource{st: st, today: today}
}

func (s reportSource) Snapshot(ctx context.Context, fn func(ledger.ReportReader) error) error {
	return s.st.ReadSnapshot(ctx, func(r store.Reader) error { return fn(snapshotReader{r}) })
}

func (s reportSource) IssueDrafts(ctx context.Context, ds []ledger.DraftLicence, reason string) error {
	ls := make([]store.Licence, len(ds))
	for i, d := range ds {
		ls[i] = store.Licence{Number: d.Number, CompanyID: d.CompanyID, Directions: []string{"import"},
			ValidFrom: time.Date(d.Year, 1, 1, 0, 0, 0, 0, time.UTC), ValidTo: time.Date(d.Year, 12, 31, 0, 0, 0, 0, time.UTC),
			Status:     "draft",
			QuotaLines: []store.QuotaLine{{LineNumber: 1, AnnexGroup: d.AnnexGroup, Unit: d.Unit, Allocated: d.Quota}}}
	}
	err := s.st.IssueDrafts(ctx, ls, reason, s.today())
	var nd *store.NotDraftError
	var uc *store.UnknownCompanyError
	switch {
	case errors.As(err, &nd):
		return &ledger.NotDraftError{Number: nd.Number, Status: nd.Status}
	case errors.As(err, &uc):
		return &ledger.UnknownCompanyError{CompanyID: uc.CompanyID}
	}
	return err
}

// snapshotReader adapts one snapshot of the store to ledger.ReportReader.
type snapshotReader struct{ r store.Reader }

func (s snapshotReader) ShipmentTotals(ctx context.Context, years []int) ([]controls.ShipmentTotal, error) {
	ts, err := s.r.ShipmentTotals(ctx, years)
	out := make([]controls.ShipmentTotal, len(ts))
	for i, t := range ts {
		out[i] = controls.ShipmentTotal{Year: t.Year, Designation: t.Designation, AnnexGroup: t.AnnexGroup, Direction: t.Direction,
			Purpose: t.Purpose, Condition: t.Condition, PartnerNonParty: t.PartnerNonParty, Tonnes: t.Tonnes}
	}
	return out, err
}

func (s snapshotReader) ShipmentYears(ctx context.Context) ([]int, error) {
	return s.r.ShipmentYears(ctx)
}

func (s snapshotReader) NationalTotals(ctx context.Context, years []int) ([]controls.NationalTotal, error) {
	ts, err := s.r.NationalTotals(ctx, years)
	out := make([]controls.NationalTotal, len(ts))
	for i, t := range ts {
		out[i] = controls.NationalTotal{Year: t.Year, Kind: t.Type, Substance: t.Substance, Tonnes: t.Tonnes,
			OutsideCustoms: t.OutsideCustoms, Keys: t.Keys}
	}
	return out, err
}

func (s snapshotReader) ReportingParty(ctx context.Context) (ledger.Party, error) {
	p, err := s.r.ReportingParty(ctx)
	if errors.Is(err, store.ErrNoReportingParty) {
		return ledger.Party{}, ledger.ErrNoReportingParty
	}
	if err != nil {
		return ledger.Party{}, err
	}
	return partyFromStore(p)
}

func (s snapshotReader) OfficialFigures(ctx context.Context) ([]ledger.OfficialFigure, error) {
	fs, err := s.r.ListOfficialFigures(ctx)
	out := make([]ledger.OfficialFigure, len(fs))
	for i, f := range fs {
		out[i] = ledger.OfficialFigure(f)
	}
	return out, err
}

func (s snapshotReader) Exemptions(ctx context.Context, year int) ([]ledger.Exemption, error) {
	es, err := s.r.ListExemptions(ctx, year)
	out := make([]ledger.Exemption, len(es))
	for i, e := range es {
		out[i] = ledger.Exemption(e)
	}
	return out, err
}

func (s snapshotReader) ShipmentLines(ctx context.Context, year int) ([]ledger.ShipmentLine, error) {
	ls, err := s.r.ShipmentLines(ctx, year)
	out := make([]ledger.ShipmentLine, len(ls))
	for i, l := range ls {
		out[i] = ledger.ShipmentLine(l)
	}
	return out, err
}

func (s snapshotReader) YearClosed(ctx context.Context, year int) (ledger.ClosedYear, bool, error) {
	c, closed, err := s.r.YearClosed(ctx, year)
	return ledger.ClosedYear(c), closed, err
}

func (s snapshotReader) HFC23Entries(ctx context.Context, year int) ([]ledger.HFC23Entry, error) {
	es, err := s.r.ListHFC23Entries(ctx, year)
	out := make([]ledger.HFC23Entry, len(es))
	for i, e := range es {
		out[i] = ledger.HFC23Entry(e)
	}
	return out, err
}

func (s snapshotReader) CompanyImports(ctx context.Context, groups []string, unit string, years []int) ([]ledger.CompanyAmount, error) {
	as, err := s.r.CompanyImports(ctx, groups, unit, years)
	out := make([]ledger.CompanyAmount, len(as))
	for i, a := range as {
		out[i] = ledger.CompanyAmount(a)
	}
	return out, err
}

func (s snapshotReader) PartnerExports(ctx context.Context, year int) ([]ledger.PartnerExport, error) {
	rs, err := s.r.ListPartnerExports(ctx, year)
	out := make([]ledger.PartnerExport, len(rs))
	for i, r := range rs {
		out[i] = ledger.PartnerExport(r)
	}
	return out, err
}

// figureWriter adapts the store to ledger.FigureWriter.
type figureWriter struct{ st *store.Store }

var _ ledger.FigureWriter = figureWriter{}

// duplicate marks the store's unique violation of a figure stored under another key.
func duplicate(err error) error {
	if errors.Is(err, store.ErrAlreadyExists) {
		return fmt.Errorf("%w: %w", err, ledger.ErrDuplicate)
	}
	return err
}

func (w figureWriter) PutNationalEntries(ctx context.Context, es []ledger.NationalEntry) error {
	out := make([]store.NationalEntry, len(es))
	for i, e := range es {
		out[i] = store.NationalEntry{Key: e.Key, Year: e.Year, Type: e.Kind, Substance: e.Substance, Tonnes: e.Tonnes, Note: e.Note, OutsideCustoms: e.OutsideCustoms}
	}
	return w.st.PutNationalEntries(ctx, out)
}

func (w figureWriter) PutExemptions(ctx context.Context, es []ledger.Exemption) error {
	return w.st.PutExemptions(ctx, convertAll[store.Exemption](es, func(e ledger.Exemption) store.Exemption { return store.Exemption(e) }))
}

func (w figureWriter) PutOfficialFigures(ctx context.Context, fs []ledger.OfficialFigure) error {
	return duplicate(w.st.PutOfficialFigures(ctx, convertAll[store.OfficialFigure](fs, func(f ledger.OfficialFigure) store.OfficialFigure { return store.OfficialFigure(f) })))
}

func (w figureWriter) PutHFC23Entries(ctx context.Context, es []ledger.HFC23Entry) error {
	return duplicate(w.st.PutHFC23Entries(ctx, convertAll[store.HFC23Entry](es, func(e ledger.HFC23Entry) store.HFC23Entry { return store.HFC23Entry(e) })))
}

func (w figureWriter) PutPartnerExports(ctx context.Context, rs []ledger.PartnerExport) error {
	return w.st.PutPartnerExports(ctx, convertAll[store.PartnerExport](rs, func(r ledger.PartnerExport) store.PartnerExport { return store.PartnerExport(r) }))
}

func convertAll[T, F any](in []F, f func(F) T) []T {
	out := make([]T, len(in))
	for i, x := range in {
		out[i] = f(x)
	}
	return out
}

// NewFigureWriter adapts st to ledger.FigureWriter (for tests of the ledger on a real
// register).
func NewFigureWriter(st *store.Store) ledger.FigureWriter { return figureWriter{st} }
