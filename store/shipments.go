package store

import (
	"context"
	"fmt"
	"math"
	"math/big"
	"sort"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

	"github.com/halovet/halovet/callctx"
)

// Nano is an amount in billionths of its unit (tonnes, ODP tonnes or CO2-eq tonnes):
// quota arithmetic is done in integers so that what is drawn is exactly the sum of the
// recorded draws, and the numeric(30,9) columns hold it without rounding.
type Nano int64

// ToNano rounds a float amount to the nearest billionth.
func ToNano(x float64) Nano { return Nano(math.Round(x * 1e9)) }

// Float returns the amount as a float.
func (n Nano) Float() float64 { return float64(n) / 1e9 }

func (n Nano) numeric() pgtype.Numeric {
	return pgtype.Numeric{Int: big.NewInt(int64(n)), Exp: -9, Valid: true}
}

// ShipmentComponent is one component's computed figures.
type ShipmentComponent struct {
	Designation string
	AnnexGroup  string
	MassKg      Nano // kg, in billionths
	ODPTonnes   Nano
	CO2eTonnes  Nano
	// PartnerNonParty says whether the partner is not bound for the component's own Annex
	// group on the declaration date (Party status is per group, Article 4 para 9); nil
	// stores NULL, and the shipment's PartnerNonParty then applies to the component.
	PartnerNonParty *bool
}

// Draw is what a shipment draws on one quota line, in the line's unit.
type Draw struct {
	LicenceNumber string
	LineNumber    int
	Amount        Nano
}

// ShipmentRow is a checked, accepted shipment ready to be recorded.
type ShipmentRow struct {
	CompanyID           string
	RecordKey           string
	Fingerprint         string
	Direction           string
	LicenceNumber       string
	PartnerCountry      string
	DeclarationDate     time.Time
	ResolvedDesignation string
	EntryKind           string
	Purpose             string
	Condition           string
	NetMassKg           Nano
	ODPTonnes           Nano
	CO2eTonnes          Nano
	CountsInConsumption bool
	PartnerNonParty     bool
	RecordJSON          []byte
	Components          []ShipmentComponent
	Draws               []Draw
}

// RecordStatus is what happened to one row.
type RecordStatus int

// Outcomes of recording one row.
const (
	// RecordStored: stored now, quota drawn.
	RecordStored RecordStatus = iota + 1
	// RecordReplayed: an identical row (same key, same fingerprint) was stored before.
	RecordReplayed
	// RecordKeyConflict: the key was used before for different content.
	RecordKeyConflict
	// RecordQuotaShort: a quota line has less left than the row draws.
	RecordQuotaShort
	// RecordLicenceInactive: the licence is not active (any more), or a line is gone.
	RecordLicenceInactive
)

// RecordResult tells what happened to one row, in the order given.
type RecordResult struct {
	Status     RecordStatus
	ShipmentID int64
	// For RecordQuotaShort: the line and what was left on it before this row.
	LicenceNumber string
	LineNumber    int
	Remaining     Nano
	// For RecordLicenceInactive: the licence's status, or "missing line".
	Detail string
}

type lineKey struct {
	licence string
	line    int
}

// RecordShipments stores a batch of accepted rows in one transaction and draws their
// quotas. Rows that would over-draw a line, reuse a key for other content, or draw on a
// licence that is no longer active are not stored, and the rest of the batch is.
//
// Race prevention: the licences are share-locked and their quota lines locked FOR
// UPDATE in (licence, line) order, so that concurrent batches on any replica serialise
// on the lines they share and never deadlock; amendments lock in the same order. A key
// stored by another transaction between our read and our insert makes the insert fail
// with a unique violation, and the whole batch is retried, finding it then.
func (s *Store) RecordShipments(ctx context.Context, rows []ShipmentRow) ([]RecordResult, error) {
	var results []RecordResult
	// READ COMMITTED: the licences and quota lines are read under row locks (so the
	// balances drawn on are the latest committed), and a key stored between our lookup
	// and our insert fails the insert; keyRace retries the batch, which then finds it.
	spec := readCommitted
	spec.keyRace = true
	err := s.inTx(ctx, spec, func(tx pgx.Tx) error {
		var err error
		results, err = recordTx(ctx, tx, rows)
		return err
	})
	return results, err
}

func recordTx(ctx context.Context, tx pgx.Tx, rows []ShipmentRow) ([]RecordResult, error) {
	results := make([]RecordResult, len(rows))

	// 1. Lock the licences (share) and quota lines (update) in a stable order.
	licSet := map[string]bool{}
	lineSet := map[lineKey]bool{}
	for _, r := range rows {
		for _, d := range r.Draws {
			licSet[d.LicenceNumber] = true
			lineSet[lineKey{d.LicenceNumber, d.LineNumber}] = true
		}
	}
	lics := make([]string, 0, len(licSet))
	for l := range licSet {
		lics = append(lics, l)
	}
	sort.Strings(lics)
	status := map[string]string{}
	remaining := map[lineKey]Nano{}
	if len(lics) > 0 {
		q, err := tx.Query(ctx, `SELECT licence_number, status FROM licences
		    WHERE licence_number = ANY($1) ORDER BY licence_number FOR SHARE`, lics)
		if err != nil {
			return nil, err
		}
		for q.Next() {
			var n, st string
			if err := q.Scan(&n, &st); err != nil {
				q.Close()
				return nil, err
			}
			status[n] = st
		}
		if err := q.Err(); err != nil {
			return nil, err
		}
		q, err = tx.Query(ctx, `SELECT licence_number, line_number, ((allocated - drawn) * 1000000000)::bigint
		    FROM quota_lines WHERE licence_number = ANY($1)
		    ORDER BY licence_number, line_number FOR UPDATE`, lics)
		if err != nil {
			return nil, err
		}
		for q.Next() {
			var k lineKey
			var rem int64
			if err := q.Scan(&k.licence, &k.line, &rem); err != nil {
				q.Close()
				return nil, err
			}
			if lineSet[k] {
				remaining[k] = Nano(rem)
			}
		}
		if err := q.Err(); err != nil {
			return nil, err
		}
	}

	// 2. Keys stored before.
	companies := make([]string, len(rows))
	keys := make([]string, len(rows))
	for i, r := range rows {
		companies[i], keys[i] = r.CompanyID, r.RecordKey
	}
	type stored struct {
		id          int64
		fingerprint string
	}
	existing := map[[2]string]stored{}
	q, err := tx.Query(ctx, `SELECT s.company_id, s.record_key, s.shipment_id, s.fingerprint
	    FROM shipments s JOIN unnest($1::text[], $2::text[]) AS k(company_id, record_key)
	      ON s.company_id = k.company_id AND s.record_key = k.record_key`, companies, keys)
	if err != nil {
		return nil, err
	}
	for q.Next() {
		var c, k string
		var st stored
		if err := q.Scan(&c, &k, &st.id, &st.fingerprint); err != nil {
			q.Close()
			return nil, err
		}
		existing[[2]string{c, k}] = st
	}
	if err := q.Err(); err != nil {
		return nil, err
	}

	// 3. Decide each row in order.
	var accept []int
	for i, r := range rows {
		k := [2]string{r.CompanyID, r.RecordKey}
		if st, ok := existing[k]; ok {
			if st.fingerprint == r.Fingerprint {
				results[i] = RecordResult{Status: RecordReplayed, ShipmentID: st.id}
			} else {
				results[i] = RecordResult{Status: RecordKeyConflict, ShipmentID: st.id}
			}
			continue
		}
		if res, ok := checkDraws(r, status, remaining); !ok {
			results[i] = res
			continue
		}
		for _, d := range r.Draws {
			remaining[lineKey{d.LicenceNumber, d.LineNumber}] -= d.Amount
		}
		// Later rows of this batch with the same key are replays (or conflicts) of this one.
		existing[k] = stored{id: 0, fingerprint: r.Fingerprint}
		results[i] = RecordResult{Status: RecordStored}
		accept = append(accept, i)
	}
	if len(accept) == 0 {
		return results, nil
	}

	// 4. Write: ids first, then COPY the rows, components and draws.
	ids := make([]int64, 0, len(accept))
	q, err = tx.Query(ctx, `SELECT nextval('shipments_shipment_id_seq') FROM generate_series(1, $1)`, len(accept))
	if err != nil {
		return nil, err
	}
	for q.Next() {
		var id int64
		if err := q.Scan(&id); err != nil {
			q.Close()
			return nil, err
		}
		ids = append(ids, id)
	}
	if err := q.Err(); err != nil {
		return nil, err
	}
	for j, i := range accept {
		results[i].ShipmentID = ids[j]
	}
	// Replays of rows stored earlier in this same batch point at the new id.
	byKey := map[[2]string]int64{}
	for j, i := range accept {
		byKey[[2]string{rows[i].CompanyID, rows[i].RecordKey}] = ids[j]
	}
	for i := range results {
		if results[i].ShipmentID == 0 && (results[i].Status == RecordReplayed || results[i].Status == RecordKeyConflict) {
			results[i].ShipmentID = byKey[[2]string{rows[i].CompanyID, rows[i].RecordKey}]
		}
	}

	if _, err := tx.CopyFrom(ctx, pgx.Identifier{"shipments"}, shipmentColumns,
		pgx.CopyFromSlice(len(accept), func(j int) ([]any, error) {
			return shipmentValues(ctx, ids[j], &rows[accept[j]]), nil
		})); err != nil {
		return nil, fmt.Errorf("storing shipments: %w", err)
	}
	var comps, draws [][]any
	for j, i := range accept {
		for _, c := range rows[i].Components {
			comps = append(comps, []any{ids[j], c.Designation, c.AnnexGroup, c.MassKg.numeric(), c.ODPTonnes.numeric(), c.CO2eTonnes.numeric(), c.PartnerNonParty})
		}
		for _, d := range rows[i].Draws {
			draws = append(draws, []any{ids[j], d.LicenceNumber, d.LineNumber, d.Amount.numeric()})
		}
	}
	if len(comps) > 0 {
		if _, err := tx.CopyFrom(ctx, pgx.Identifier{"shipment_components"},
			[]string{"shipment_id", "designation", "annex_group", "mass_kg", "odp_tonnes", "co2e_tonnes", "partner_non_party"},
			pgx.CopyFromRows(comps)); err != nil {
			return nil, fmt.Errorf("storing shipment components: %w", err)
		}
	}
	if len(draws) > 0 {
		if _, err := tx.CopyFrom(ctx, pgx.Identifier{"quota_draws"},
			[]string{"shipment_id", "licence_number", "line_number", "amount"}, pgx.CopyFromRows(draws)); err != nil {
			return nil, fmt.Errorf("storing quota draws: %w", err)
		}
		// drawn grows by exactly the sum of the draws just stored.
		if _, err := tx.Exec(ctx, `UPDATE quota_lines q SET drawn = q.drawn + d.total
		    FROM (SELECT licence_number, line_number, sum(amount) AS total FROM quota_draws
		          WHERE shipment_id = ANY($1) GROUP BY licence_number, line_number) d
		    WHERE q.licence_number = d.licence_number AND q.line_number = d.line_number`, ids); err != nil {
			return nil, fmt.Errorf("drawing quota: %w", err)
		}
	}
	// One audit event for the batch: the shipments it stored, by id, company and key.
	done := make([]map[string]any, len(accept))
	for j, i := range accept {
		done[j] = map[string]any{"shipment_id": ids[j], "company_id": rows[i].CompanyID, "record_key": rows[i].RecordKey}
	}
	if err := audit(ctx, tx, "record", "shipments", fmt.Sprintf("%d-%d", ids[0], ids[len(ids)-1]), "",
		map[string]any{"stored": done}); err != nil {
		return nil, fmt.Errorf("auditing the recorded shipments: %w", err)
	}
	return results, nil
}

// checkDraws reports whether every draw of r fits what is left; when not, the result
// says why.
func checkDraws(r ShipmentRow, status map[string]string, remaining map[lineKey]Nano) (RecordResult, bool) {
	for _, d := range r.Draws {
		if st := status[d.LicenceNumber]; st != "active" {
			if st == "" {
				st = "missing"
			}
			return RecordResult{Status: RecordLicenceInactive, LicenceNumber: d.LicenceNumber, Detail: st}, false
		}
		k := lineKey{d.LicenceNumber, d.LineNumber}
		left, ok := remaining[k]
		if !ok {
			return RecordResult{Status: RecordLicenceInactive, LicenceNumber: d.LicenceNumber, LineNumber: d.LineNumber, Detail: "missing line"}, false
		}
		if d.Amount > left {
			return RecordResult{Status: RecordQuotaShort, LicenceNumber: d.LicenceNumber, LineNumber: d.LineNumber, Remaining: left}, false
		}
	}
	return RecordResult{}, true
}

var shipmentColumns = []string{"shipment_id", "company_id", "record_key", "fingerprint", "direction",
	"licence_number", "partner_country", "declaration_date", "year", "resolved_designation", "entry_kind",
	"purpose", "condition", "net_mass_kg", "odp_tonnes", "co2e_tonnes", "counts_in_consumption",
	"partner_non_party", "record", "recorded_by", "recorded_credential"}

func shipmentValues(ctx context.Context, id int64, r *ShipmentRow) []any {
	return []any{id, r.CompanyID, r.RecordKey, r.Fingerprint, r.Direction, r.LicenceNumber, r.PartnerCountry,
		r.DeclarationDate, r.DeclarationDate.Year(), r.ResolvedDesignation, r.EntryKind, r.Purpose, r.Condition,
		r.NetMassKg.numeric(), r.ODPTonnes.numeric(), r.CO2eTonnes.numeric(), r.CountsInConsumption,
		r.PartnerNonParty, string(r.RecordJSON), callctx.Actor(ctx), callctx.CredentialID(ctx)}
}

// StoredFingerprints returns the fingerprints of the (company, key) pairs already stored.
func (s *Store) StoredFingerprints(ctx context.Context, keys [][2]string) (_ map[[2]string]string, err error) {
	defer classifyInto(&err)
	out := map[[2]string]string{}
	if len(keys) == 0 {
		return out, nil
	}
	companies := make([]string, len(keys))
	recs := make([]string, len(keys))
	for i, k := range keys {
		companies[i], recs[i] = k[0], k[1]
	}
	rows, err := s.pool.Query(ctx, `SELECT s.company_id, s.record_key, s.fingerprint
	    FROM shipments s JOIN unnest($1::text[], $2::text[]) AS k(company_id, record_key)
	      ON s.company_id = k.company_id AND s.record_key = k.record_key`, companies, recs)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var c, k, fp string
		if err := rows.Scan(&c, &k, &fp); err != nil {
			return nil, err
		}
		out[[2]string{c, k}] = fp
	}
	return out, rows.Err()
}
