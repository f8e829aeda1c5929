package service

import (
	"context"
	"errors"
	"fmt"

	"github.com/halovet/halovet/ledger"
	"github.com/halovet/halovet/store"
)

// shipmentRegister adapts the store to the shipment workflows' ledger.ShipmentRegister.
// The store's errors pass through unchanged (registerError and toStatus classify them).
type shipmentRegister struct{ st *store.Store }

var _ ledger.ShipmentRegister = shipmentRegister{}

func (r shipmentRegister) StoredRecords(ctx context.Context, keys [][2]string) (map[[2]string][]ledger.StoredRef, error) {
	m, err := r.st.StoredRecords(ctx, keys)
	if err != nil {
		return nil, err
	}
	out := make(map[[2]string][]ledger.StoredRef, len(m))
	for k, vs := range m {
		refs := make([]ledger.StoredRef, len(vs))
		for i := range vs {
			refs[i] = refFromStore(&vs[i])
		}
		out[k] = refs
	}
	return out, nil
}

func refFromStore(v *store.StoredRef) ledger.StoredRef {
	return ledger.StoredRef{ID: v.ID, Fingerprint: v.Fingerprint, State: v.State, Version: v.Version, RecordedAt: v.RecordedAt, Verdict: v.Verdict}
}

func (r shipmentRegister) RecordShipments(ctx context.Context, rows []ledger.ShipmentRow) ([]ledger.RecordResult, error) {
	srows := make([]store.ShipmentRow, len(rows))
	for i := range rows {
		srows[i] = rowToStore(&rows[i])
	}
	res, err := r.st.RecordShipments(ctx, srows)
	if err != nil {
		return nil, err
	}
	out := make([]ledger.RecordResult, len(res))
	for i := range res {
		out[i] = resultFromStore(&res[i])
	}
	return out, nil
}

func (r shipmentRegister) LiveShipment(ctx context.Context, company, key string) (int64, error) {
	live, err := r.st.ListShipments(ctx, store.ShipmentFilter{CompanyID: company, RecordKey: key, States: []string{store.StateLive}, Limit: 1})
	if err != nil || len(live) == 0 {
		return 0, err
	}
	return live[0].ID, nil
}

func (r shipmentRegister) Shipment(ctx context.Context, id int64) (ledger.Shipment, error) {
	got, _, err := r.st.GetShipment(ctx, id)
	if err != nil {
		return ledger.Shipment{}, err
	}
	return shipmentFromStore(got), nil
}

func (r shipmentRegister) CorrectShipment(ctx context.Context, id int64, row ledger.ShipmentRow, reason string) (ledger.RecordResult, error) {
	res, err := r.st.CorrectShipment(ctx, id, rowToStore(&row), reason)
	if err != nil {
		return ledger.RecordResult{}, err
	}
	return resultFromStore(&res), nil
}

func (r shipmentRegister) VoidShipment(ctx context.Context, id int64, reason string) (ledger.Shipment, error) {
	got, err := r.st.VoidShipment(ctx, id, reason)
	if err != nil {
		return ledger.Shipment{}, err
	}
	return shipmentFromStore(got), nil
}

func (r shipmentRegister) CloseYear(ctx context.Context, year int, reason string) (ledger.ClosedYear, error) {
	c, err := r.st.CloseYear(ctx, year, reason)
	if err != nil {
		return ledger.ClosedYear{}, yearStateError(err)
	}
	return ledger.ClosedYear{Year: c.Year, ClosedAt: c.ClosedAt, ClosedBy: c.ClosedBy, Reason: c.Reason}, nil
}

func (r shipmentRegister) ReopenYear(ctx context.Context, year int, reason string) error {
	return yearStateError(r.st.ReopenYear(ctx, year, reason))
}

// yearStateError marks the store's refusal of a year already closed (or not closed) as
// the workflows' ErrYearState, keeping the store's error beside it.
func yearStateError(err error) error {
	if errors.Is(err, store.ErrYearState) {
		return fmt.Errorf("%w: %w", ledger.ErrYearState, err)
	}
	return err
}

func shipmentFromStore(x store.StoredShipment) ledger.Shipment {
	s := ledger.Shipment{ID: x.ID, CompanyID: x.CompanyID, RecordKey: x.RecordKey, Fingerprint: x.Fingerprint, State: x.State, Row: x}
	for _, d := range x.Draws {
		if len(s.DrawnOn) == 0 || s.DrawnOn[len(s.DrawnOn)-1] != d.LicenceNumber {
			s.DrawnOn = append(s.DrawnOn, d.LicenceNumber)
		}
	}
	return s
}

func rowToStore(r *ledger.ShipmentRow) store.ShipmentRow {
	s := store.ShipmentRow{CompanyID: r.CompanyID, RecordKey: r.RecordKey, Fingerprint: r.Fingerprint, Direction: r.Direction,
		LicenceNumber: r.LicenceNumber, PartnerCountry: r.PartnerCountry, DeclarationDate: r.DeclarationDate,
		ResolvedDesignation: r.ResolvedDesignation, EntryKind: r.EntryKind, Purpose: r.Purpose, Condition: r.Condition,
		NetMassKg: store.Nano(r.NetMassKg), ODPTonnes: store.Nano(r.ODPTonnes), CO2eTonnes: store.Nano(r.CO2eTonnes),
		CountsInConsumption: r.CountsInConsumption, PartnerNonParty: r.PartnerNonParty, RecordJSON: r.RecordJSON,
		LicenceVersion: r.LicenceVersion}
	for _, c := range r.Components {
		s.Components = append(s.Components, store.ShipmentComponent{Designation: c.Designation, AnnexGroup: c.AnnexGroup,
			MassKg: store.Nano(c.MassKg), ODPTonnes: store.Nano(c.ODPTonnes), CO2eTonnes: store.Nano(c.CO2eTonnes), PartnerNonParty: c.PartnerNonParty})
	}
	for _, d := range r.Draws {
		s.Draws = append(s.Draws, store.Draw{LicenceNumber: d.LicenceNumber, LineNumber: d.LineNumber, Amount: store.Nano(d.Amount)})
	}
	if f := r.VerdictOnStore; f != nil {
		s.VerdictOnStore = func(res store.RecordResult) []byte { return f(resultFromStore(&res)) }
	}
	return s
}

func resultFromStore(r *store.RecordResult) ledger.RecordResult {
	out := ledger.RecordResult{Status: recordStatus[r.Status], ShipmentID: r.ShipmentID, LicenceNumber: r.LicenceNumber,
		LineNumber: r.LineNumber, Remaining: ledger.Nano(r.Remaining), Detail: r.Detail, RecordedAt: r.RecordedAt}
	if r.Stored != nil {
		ref := refFromStore(r.Stored)
		out.Stored = &ref
	}
	for _, b := range r.Balances {
		out.Balances = append(out.Balances, ledger.LineBalance{LicenceNumber: b.LicenceNumber, LineNumber: b.LineNumber,
			Allocated: ledger.Nano(b.Allocated), Before: ledger.Nano(b.Before), After: ledger.Nano(b.After)})
	}
	if c := r.Closed; c != nil {
		out.Closed = &ledger.ClosedYear{Year: c.Year, ClosedAt: c.ClosedAt, ClosedBy: c.ClosedBy, Reason: c.Reason}
	}
	return out
}

// recordStatus maps the store's outcomes of recording a row to the workflows'; a status
// missing here is zero, which no workflow takes for any outcome (TestRecordStatusMapping).
var recordStatus = map[store.RecordStatus]ledger.RecordStatus{
	store.RecordStored:          ledger.RecordStored,
	store.RecordReplayed:        ledger.RecordReplayed,
	store.RecordKeyConflict:     ledger.RecordKeyConflict,
	store.RecordQuotaShort:      ledger.RecordQuotaShort,
	store.RecordLicenceInactive: ledger.RecordLicenceInactive,
	store.RecordYearClosed:      ledger.RecordYearClosed,
	store.RecordLicenceChanged:  ledger.RecordLicenceChanged,
}
