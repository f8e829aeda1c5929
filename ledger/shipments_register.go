package ledger

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"github.com/halovet/halovet/validate"
)

// Correction is a corrected version of a recorded shipment.
type Correction struct {
	// ShipmentID is the live shipment corrected; 0 finds the live one of the record's
	// company and key.
	ShipmentID int64
	Record     validate.Record
	// Encode gives the record in the form the register keeps (ShipmentRow.RecordJSON).
	Encode func() ([]byte, error)
	Reason string // trimmed, checked by the caller
}

// Corrected is the outcome of a correction: the new version's answer and id.
type Corrected struct {
	Answer     Answer
	ShipmentID int64
}

// CorrectShipment replaces a live recorded shipment by a corrected version, checked like
// a new record against the register as it stands; the quota is judged by the register,
// with the old version's draws given back, at the new version's own draw. The error is a
// FieldError, or the register's.
func (s *Shipments) CorrectShipment(ctx context.Context, who Caller, c Correction) (Corrected, error) {
	rec := c.Record
	k := recordKey(&rec)
	id := c.ShipmentID
	if id == 0 {
		if k[0] == "" || k[1] == "" {
			return Corrected{}, refuse(Invalid, Violation{"shipment_id", "is 0 and the record has no company_id and record_key to find the shipment by"})
		}
		live, err := s.reg.LiveShipment(ctx, k[0], k[1])
		if err != nil {
			return Corrected{}, err
		}
		if live == 0 {
			return Corrected{}, refuse(NotFound, Violation{"record", fmt.Sprintf("no live recorded shipment of company %q with record_key %q", k[0], k[1])})
		}
		id = live
	}
	cur, err := s.reg.Shipment(ctx, id)
	if err != nil {
		return Corrected{}, err
	}
	if cur.State != StateLive {
		return Corrected{}, refuse(Refused, Violation{"shipment_id", fmt.Sprintf("shipment %d is %s; only a live shipment can be corrected", id, cur.State)})
	}
	if k[0] != cur.CompanyID || k[1] != cur.RecordKey {
		return Corrected{}, refuse(Invalid, Violation{"record.record_key", fmt.Sprintf("a correction keeps the company and key of shipment %d (%s, %s); got (%s, %s)",
			id, cur.CompanyID, cur.RecordKey, k[0], k[1])})
	}
	env, err := s.envFor(ctx, who, []validate.Record{rec})
	if err != nil {
		return Corrected{}, err
	}
	v := validate.Check(env, &rec, validate.DeferQuota)
	if v.Outcome == validate.OutcomeRejected {
		return Corrected{}, refuse(Invalid, verdictViolations(&v)...)
	}
	if v.Fingerprint == cur.Fingerprint {
		return Corrected{}, refuse(Invalid, Violation{"record", fmt.Sprintf("is the same as shipment %d as recorded; a correction changes something", id)})
	}
	lic, _ := env.Licence(strings.TrimSpace(rec.LicenceNumber))
	row, err := shipmentRow(c.Encode, &rec, &v, lic)
	if err != nil {
		return Corrected{}, fmt.Errorf("%w: record %q: %v", ErrRecordRow, rec.Key, err)
	}
	if lic != nil {
		row.LicenceVersion = lic.Version // written only while the licence still stands so
	}
	var answer Answer
	row.VerdictOnStore = func(res RecordResult) []byte {
		fv := v
		fv.Findings = append([]validate.Finding(nil), v.Findings...)
		addBalanceFindings(&fv, lic, res.Balances)
		answer = Answer{Verdict: fv, Recorded: true, Stored: &StoredRef{ID: res.ShipmentID, State: StateLive, RecordedAt: res.RecordedAt}}
		return s.codec.Encode(&fv)
	}
	res, err := s.reg.CorrectShipment(ctx, id, row, c.Reason)
	if err != nil {
		return Corrected{}, err
	}
	switch res.Status {
	case RecordStored:
	case RecordQuotaShort:
		f := quotaShortFinding(lic, res, row.Draws)
		return Corrected{}, refuse(Refused, Violation{"record.total_net_quantity", f.Code + ": " + f.Message + " (the old version's draws counted as given back)"})
	case RecordLicenceInactive:
		return Corrected{}, refuse(Refused, Violation{"record.licence_number", fmt.Sprintf("%s: licence %s is %s", validate.CodeLicenceInactive, res.LicenceNumber, res.Detail)})
	case RecordLicenceChanged:
		return Corrected{}, refuse(Refused, Violation{"record.licence_number", fmt.Sprintf("%s: licence %s was changed (now %s) while the correction was judged; send it again", validate.CodeLicenceChanged, res.LicenceNumber, res.Detail)})
	case RecordYearClosed:
		return Corrected{}, refuse(Refused, Violation{"record.declaration_date", fmt.Sprintf("%s: reporting year %d is closed (%s); reopen it first", validate.CodeYearClosed, res.Closed.Year, res.Closed.Reason)})
	default:
		return Corrected{}, fmt.Errorf("correction of shipment %d: unexpected outcome %v", id, res.Status)
	}
	s.changed(ctx, Change{Licences: unionLicences(cur.DrawnOn, row.Draws)})
	return Corrected{Answer: answer, ShipmentID: res.ShipmentID}, nil
}

// VoidShipment voids a live recorded shipment and gives back its draws. The error is the
// register's.
func (s *Shipments) VoidShipment(ctx context.Context, id int64, reason string) (Shipment, error) {
	got, err := s.reg.VoidShipment(ctx, id, reason)
	if err != nil {
		return Shipment{}, err
	}
	s.changed(ctx, Change{Licences: got.DrawnOn})
	return got, nil
}

// CloseYear closes a reporting year: nothing declared in it is recorded, corrected or
// voided until it is reopened. The error is a FieldError, or the register's.
func (s *Shipments) CloseYear(ctx context.Context, year int, reason string) (ClosedYear, error) {
	c, err := s.reg.CloseYear(ctx, year, reason)
	if errors.Is(err, ErrYearState) {
		return ClosedYear{}, refuse(Refused, Violation{"year", fmt.Sprintf("reporting year %d is closed already", year)})
	}
	return c, err
}

// ReopenYear reopens a closed reporting year. The error is a FieldError, or the register's.
func (s *Shipments) ReopenYear(ctx context.Context, year int, reason string) error {
	err := s.reg.ReopenYear(ctx, year, reason)
	if errors.Is(err, ErrYearState) {
		return refuse(Refused, Violation{"year", fmt.Sprintf("reporting year %d is not closed", year)})
	}
	return err
}

func unionLicences(a []string, ds []Draw) []string {
	for _, d := range ds {
		if !contains(a, d.LicenceNumber) {
			a = append(a, d.LicenceNumber)
		}
	}
	return a
}

// verdictViolations lists a rejected verdict's errors as violations of the record's fields.
func verdictViolations(v *validate.Verdict) []Violation {
	var vs []Violation
	for _, f := range v.Findings {
		if f.Severity != validate.SeverityError {
			continue
		}
		field := f.Field
		if field == "" {
			if info, ok := validate.LookupCode(f.Code); ok {
				field = info.Field
			}
		}
		if field == "" {
			field = "record"
		} else {
			field = "record." + field
		}
		vs = append(vs, Violation{field, f.Code + ": " + f.Message})
	}
	return vs
}
