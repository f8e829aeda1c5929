package store

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/big"
	"slices"
	"sort"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"github.com/halovet/halovet/callctx"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
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
	Direction           terms.Direction
	LicenceNumber       string
	PartnerCountry      string
	DeclarationDate     time.Time
	ResolvedDesignation string
	EntryKind           string
	Purpose             terms.Purpose
	Condition           terms.Condition
	NetMassKg           Nano
	ODPTonnes           Nano
	CO2eTonnes          Nano
	CountsInConsumption bool
	PartnerNonParty     bool
	RecordJSON          []byte
	// Verdict is the verdict given to the row (a halovet.v1.Verdict, protocol buffer
	// encoding), stored with it and answered unchanged to a replay; nil stores NULL.
	Verdict    []byte
	Components []ShipmentComponent
	Draws      []Draw
	// LicenceVersion is the version of the licence (LicenceNumber) the row was judged
	// against; when not 0 the row is written only while the licence is still at that
	// version (RecordLicenceChanged otherwise).
	LicenceVersion int
	// VerdictOnStore, when set, gives Verdict once the row is known to be stored (its
	// result has the id, the time and the balances of its own draws), inside the
	// transaction that stores it: the verdict kept is the one answered.
	VerdictOnStore func(RecordResult) []byte
	// version and previousID are set by CorrectShipment for the new version.
	version    int
	previousID *int64
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
	// RecordYearClosed: the row's declaration date falls in a closed reporting year.
	RecordYearClosed
	// RecordLicenceChanged: the licence was changed (amended, its status changed, a line
	// closed) after the row was judged on it: the row is not written, so that no record
	// draws on terms it was not judged against.
	RecordLicenceChanged
)

// RecordResult tells what happened to one row, in the order given.
type RecordResult struct {
	Status     RecordStatus
	ShipmentID int64
	// For RecordQuotaShort: the line and what was left on it before this row.
	LicenceNumber string
	LineNumber    int
	Remaining     Nano
	// For RecordLicenceInactive: the licence's status, or "missing line"; for
	// RecordLicenceChanged: "version N" (the licence's version now).
	Detail string
	// For RecordReplayed and RecordKeyConflict: the stored row the key (and, for a
	// replay, the content) matched.
	Stored *StoredRef
	// For RecordStored: the balance of each line drawn on, just before and just after
	// this row's own draw (for the notices a record earns with its own draw).
	Balances []LineBalance
	// For RecordYearClosed: the closed year.
	Closed *ClosedYear
	// For RecordStored: when it was stored (the transaction's time, as recorded_at).
	RecordedAt time.Time
}

// LineBalance is what was left on one quota line around one row's draw.
type LineBalance struct {
	LicenceNumber string
	LineNumber    int
	Allocated     Nano
	Before        Nano // left before the row's draw
	After         Nano // left after it
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

	// 1. In one round trip: the years' locks (a row declared in a closed year is not
	// stored), the licences (share) and their quota lines (update), locked in a stable
	// order.
	licSet := map[string]bool{}
	lineSet := map[lineKey]bool{}
	for _, r := range rows {
		if l := judgedLicence(r); l != "" {
			licSet[l] = true // read (share) for its version, also without a draw
		}
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
	closed, status, remaining, allocated, err := readRecordLocks(ctx, tx, uniqueInts(rowYears(rows)), lics, lineSet)
	if err != nil {
		return nil, err
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
		versions    []StoredRef // every stored version of the key, from the store
	}
	existing := map[[2]string]stored{}
	refs, err := storedRefs(ctx, tx, companies, keys)
	if err != nil {
		return nil, err
	}
	for k, vs := range refs {
		cur := vs[len(vs)-1]
		existing[k] = stored{id: cur.ID, fingerprint: cur.Fingerprint, versions: vs}
	}

	// 3. Decide each row in order.
	var accept []int
	for i, r := range rows {
		k := [2]string{r.CompanyID, r.RecordKey}
		if st, ok := existing[k]; ok {
			// The one replay/conflict rule (validate.MatchKey); a row stored earlier in this
			// batch stands as the key's one version, not yet a stored ref.
			inBatch := st.versions == nil
			earlier := st.versions
			if inBatch {
				earlier = []StoredRef{{Fingerprint: st.fingerprint}}
			}
			m, at := validate.MatchKey(earlier, func(v StoredRef) string { return v.Fingerprint }, r.Fingerprint)
			switch {
			case m == validate.KeyReplay && !inBatch:
				results[i] = RecordResult{Status: RecordReplayed, ShipmentID: earlier[at].ID, Stored: &st.versions[at]}
			case m == validate.KeyReplay:
				results[i] = RecordResult{Status: RecordReplayed, ShipmentID: st.id}
			default:
				results[i] = RecordResult{Status: RecordKeyConflict, ShipmentID: st.id}
				if !inBatch {
					results[i].Stored = &st.versions[at]
				}
			}
			continue
		}
		if c, ok := closed[r.DeclarationDate.Year()]; ok {
			results[i] = RecordResult{Status: RecordYearClosed, Closed: &c}
			continue
		}
		if res, ok := checkDraws(r, status, remaining); !ok {
			results[i] = res
			continue
		}
		var bal []LineBalance
		for _, d := range r.Draws {
			lk := lineKey{d.LicenceNumber, d.LineNumber}
			bal = append(bal, LineBalance{LicenceNumber: d.LicenceNumber, LineNumber: d.LineNumber,
				Allocated: allocated[lk], Before: remaining[lk], After: remaining[lk] - d.Amount})
			remaining[lk] -= d.Amount
		}
		// Later rows of this batch with the same key are replays (or conflicts) of this one.
		existing[k] = stored{id: 0, fingerprint: r.Fingerprint, versions: nil}
		results[i] = RecordResult{Status: RecordStored, Balances: bal}
		accept = append(accept, i)
	}
	if len(accept) == 0 {
		return results, nil
	}

	// 4. Write: ids and the transaction's time first (one round trip), then one COPY of
	// the rows, each with its components and draws.
	var ids []int64
	var now time.Time
	if err := tx.QueryRow(ctx, `SELECT now(), array_agg(nextval('shipments_shipment_id_seq'))
	    FROM generate_series(1, $1)`, len(accept)).Scan(&now, &ids); err != nil {
		return nil, err
	}
	if len(ids) != len(accept) {
		return nil, fmt.Errorf("storing shipments: %d ids for %d rows", len(ids), len(accept))
	}
	for j, i := range accept {
		results[i].ShipmentID = ids[j]
		results[i].RecordedAt = now
		if f := rows[i].VerdictOnStore; f != nil {
			rows[i].Verdict = f(results[i])
		}
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

	accepted := make([]*ShipmentRow, len(accept))
	for j, i := range accept {
		accepted[j] = &rows[i]
	}
	// One audit event for the batch: the shipments it stored, by id, company and key
	// (the fields in the order encoding/json gave the maps they replace). It is sent with
	// the quota draws' update, in one round trip after the COPY.
	done := make([]storedAudit, len(accept))
	for j, i := range accept {
		done[j] = storedAudit{CompanyID: rows[i].CompanyID, RecordKey: rows[i].RecordKey, ShipmentID: ids[j]}
	}
	detail, err := json.Marshal(struct {
		Stored []storedAudit `json:"stored"`
	}{done})
	if err != nil {
		return nil, fmt.Errorf("auditing the recorded shipments: %w", err)
	}
	then := &pgx.Batch{}
	queueAudit(ctx, then, "record", "shipments", fmt.Sprintf("%d-%d", ids[0], ids[len(ids)-1]), "", detail)
	if err := insertShipments(ctx, tx, ids, accepted, then); err != nil {
		return nil, err
	}
	return results, nil
}

// storedAudit is one shipment in the audit event of a recorded batch.
type storedAudit struct {
	CompanyID  string `json:"company_id"`
	RecordKey  string `json:"record_key"`
	ShipmentID int64  `json:"shipment_id"`
}

// readRecordLocks takes a recording batch's locks and reads what it is judged on, in one
// round trip (a pipeline of the statements lockYears, readLicenceStatuses and the quota
// lines' read would send one by one; they run in the same order, in the same
// transaction): the shared advisory lock of each year (ys sorted) and which of them are
// closed; the licences lics (sorted) FOR SHARE with their status histories; their quota
// lines FOR UPDATE in (licence, line) order, with what is left and allocated on the lines
// of lineSet.
func readRecordLocks(ctx context.Context, tx pgx.Tx, ys []int, lics []string, lineSet map[lineKey]bool) (
	closed map[int]ClosedYear, status licenceStatuses, remaining, allocated map[lineKey]Nano, err error) {
	closed = map[int]ClosedYear{}
	status = licenceStatuses{current: map[string]terms.LicenceStatus{}, version: map[string]int{}, history: map[string][]StatusPeriod{}}
	remaining, allocated = map[lineKey]Nano{}, map[lineKey]Nano{}
	b := &pgx.Batch{}
	for _, y := range ys {
		b.Queue(`SELECT pg_advisory_xact_lock_shared($1, $2)`, int32(yearLockClass), int32(y)).Exec(func(pgconn.CommandTag) error { return nil })
	}
	if len(ys) > 0 {
		b.Queue(`SELECT year, closed_at, closed_by, reason FROM closed_years WHERE year = ANY($1)`, ys).Query(func(rows pgx.Rows) error {
			for rows.Next() {
				var c ClosedYear
				if err := rows.Scan(&c.Year, &c.ClosedAt, &c.ClosedBy, &c.Reason); err != nil {
					return err
				}
				closed[c.Year] = c
			}
			return rows.Err()
		})
	}
	if len(lics) > 0 {
		b.Queue(`SELECT licence_number, status, version FROM licences
		    WHERE licence_number = ANY($1) ORDER BY licence_number FOR SHARE`, lics).Query(func(rows pgx.Rows) error {
			for rows.Next() {
				var n string
				var st terms.LicenceStatus
				var v int
				if err := rows.Scan(&n, &st, &v); err != nil {
					return err
				}
				status.current[n], status.version[n] = st, v
			}
			return rows.Err()
		})
		b.Queue(`SELECT licence_number, effective_on, status FROM licence_events
		    WHERE licence_number = ANY($1) AND status IS NOT NULL ORDER BY licence_number, event_id`, lics).Query(func(rows pgx.Rows) error {
			for rows.Next() {
				var n string
				var p StatusPeriod
				if err := rows.Scan(&n, &p.From, &p.Status); err != nil {
					return err
				}
				status.history[n] = append(status.history[n], p)
			}
			return rows.Err()
		})
		b.Queue(`SELECT licence_number, line_number, ((allocated - drawn) * 1000000000)::bigint,
		        (allocated * 1000000000)::bigint
		    FROM quota_lines WHERE licence_number = ANY($1)
		    ORDER BY licence_number, line_number FOR UPDATE`, lics).Query(func(rows pgx.Rows) error {
			for rows.Next() {
				var k lineKey
				var rem, alloc int64
				if err := rows.Scan(&k.licence, &k.line, &rem, &alloc); err != nil {
					return err
				}
				if lineSet[k] {
					remaining[k] = Nano(rem)
					allocated[k] = Nano(alloc)
				}
			}
			return rows.Err()
		})
	}
	if len(b.QueuedQueries) == 0 {
		return closed, status, remaining, allocated, nil
	}
	err = tx.SendBatch(ctx, b).Close()
	return closed, status, remaining, allocated, err
}

// insertShipments writes rows under ids (one COPY: each row carries its components and
// draws, migration 13) and draws their quota; the lines must be locked already. A draw
// must be on the row's own licence: the row keeps its draws' lines and amounts only. The
// statements of then, when not nil, are sent after the draws' update in the same round
// trip.
func insertShipments(ctx context.Context, tx pgx.Tx, ids []int64, rows []*ShipmentRow, then *pgx.Batch) error {
	drawn := map[lineKey]*big.Int{}
	var lines []lineKey
	for _, r := range rows {
		for _, d := range r.Draws {
			if d.LicenceNumber != r.LicenceNumber {
				return fmt.Errorf("storing shipment %q: a draw on licence %q; a shipment draws only on its own licence %q", r.RecordKey, d.LicenceNumber, r.LicenceNumber)
			}
			k := lineKey{d.LicenceNumber, d.LineNumber}
			t, ok := drawn[k]
			if !ok {
				t = new(big.Int)
				drawn[k] = t
				lines = append(lines, k)
			}
			t.Add(t, big.NewInt(int64(d.Amount)))
		}
	}
	if _, err := tx.CopyFrom(ctx, pgx.Identifier{"shipments"}, shipmentColumns,
		pgx.CopyFromSlice(len(rows), func(j int) ([]any, error) {
			return shipmentValues(ctx, ids[j], rows[j])
		})); err != nil {
		return fmt.Errorf("storing shipments: %w", err)
	}
	b := &pgx.Batch{}
	if len(lines) > 0 {
		// drawn grows by exactly the sum of the draws just stored.
		lics := make([]string, len(lines))
		nums := make([]int32, len(lines))
		totals := make([]pgtype.Numeric, len(lines))
		for i, k := range lines {
			lics[i], nums[i] = k.licence, int32(k.line)
			totals[i] = pgtype.Numeric{Int: drawn[k], Exp: -9, Valid: true}
		}
		b.Queue(`UPDATE quota_lines q SET drawn = q.drawn + d.total
		    FROM unnest($1::text[], $2::integer[], $3::numeric[]) AS d(licence_number, line_number, total)
		    WHERE q.licence_number = d.licence_number AND q.line_number = d.line_number`, lics, nums, totals)
	}
	drawing := len(b.QueuedQueries)
	if then != nil {
		b.QueuedQueries = append(b.QueuedQueries, then.QueuedQueries...)
	}
	if len(b.QueuedQueries) == 0 {
		return nil
	}
	br := tx.SendBatch(ctx, b)
	for i := range b.QueuedQueries {
		if _, err := br.Exec(); err != nil {
			_ = br.Close()
			if i < drawing {
				return fmt.Errorf("drawing quota: %w", err)
			}
			return fmt.Errorf("auditing the recorded shipments: %w", err)
		}
	}
	return br.Close()
}

// checkDraws reports whether every draw of r fits what is left; when not, the result
// says why.
// judgedLicence is the licence whose version a row must find unchanged, or "".
func judgedLicence(r ShipmentRow) string {
	if r.LicenceVersion == 0 {
		return ""
	}
	return r.LicenceNumber
}

func checkDraws(r ShipmentRow, status licenceStatuses, remaining map[lineKey]Nano) (RecordResult, bool) {
	if v, ok := status.version[r.LicenceNumber]; ok && r.LicenceVersion != 0 && v != r.LicenceVersion {
		return RecordResult{Status: RecordLicenceChanged, LicenceNumber: r.LicenceNumber, Detail: fmt.Sprintf("version %d", v)}, false
	}
	for _, d := range r.Draws {
		// The licence as it stood on the declaration date.
		if st := status.on(d.LicenceNumber, r.DeclarationDate); st != "active" {
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
	"partner_non_party", "record", "version", "previous_id", "verdict", "recorded_by", "recorded_credential",
	"component_designations", "component_annex_groups", "component_mass_kg", "component_odp_tonnes",
	"component_co2e_tonnes", "component_non_party", "draw_lines", "draw_amounts"}

func shipmentValues(ctx context.Context, id int64, r *ShipmentRow) ([]any, error) {
	cs := r.Components
	if !slices.IsSortedFunc(cs, func(a, b ShipmentComponent) int { return strings.Compare(a.Designation, b.Designation) }) {
		cs = slices.Clone(cs)
		slices.SortFunc(cs, func(a, b ShipmentComponent) int { return strings.Compare(a.Designation, b.Designation) })
	}
	des := make([]string, len(cs))
	grp := make([]string, len(cs))
	kg := make([]pgtype.Numeric, len(cs))
	odp := make([]pgtype.Numeric, len(cs))
	co2e := make([]pgtype.Numeric, len(cs))
	np := make([]*bool, len(cs))
	for i, c := range cs {
		if i > 0 && c.Designation == cs[i-1].Designation {
			return nil, fmt.Errorf("storing shipment %q: component %q given twice", r.RecordKey, c.Designation)
		}
		des[i], grp[i], np[i] = c.Designation, c.AnnexGroup, c.PartnerNonParty
		kg[i], odp[i], co2e[i] = c.MassKg.numeric(), c.ODPTonnes.numeric(), c.CO2eTonnes.numeric()
	}
	ds := r.Draws
	if !slices.IsSortedFunc(ds, func(a, b Draw) int { return a.LineNumber - b.LineNumber }) {
		ds = slices.Clone(ds)
		slices.SortFunc(ds, func(a, b Draw) int { return a.LineNumber - b.LineNumber })
	}
	lines := make([]int32, len(ds))
	amounts := make([]pgtype.Numeric, len(ds))
	for i, d := range ds {
		if i > 0 && d.LineNumber == ds[i-1].LineNumber {
			return nil, fmt.Errorf("storing shipment %q: two draws on line %d", r.RecordKey, d.LineNumber)
		}
		lines[i], amounts[i] = int32(d.LineNumber), d.Amount.numeric()
	}
	return []any{id, r.CompanyID, r.RecordKey, r.Fingerprint, r.Direction.String(), r.LicenceNumber, r.PartnerCountry,
		r.DeclarationDate, r.DeclarationDate.Year(), r.ResolvedDesignation, r.EntryKind, r.Purpose.String(), r.Condition.String(),
		r.NetMassKg.numeric(), r.ODPTonnes.numeric(), r.CO2eTonnes.numeric(), r.CountsInConsumption,
		r.PartnerNonParty, string(r.RecordJSON), max(r.version, 1), r.previousID, r.Verdict,
		callctx.Actor(ctx), callctx.CredentialID(ctx), des, grp, kg, odp, co2e, np, lines, amounts}, nil
}

// StoredFingerprints returns the fingerprints of the current (live or voided) rows of the
// (company, key) pairs already stored.
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
	      ON s.company_id = k.company_id AND s.record_key = k.record_key
	    WHERE s.state <> 'superseded'`, companies, recs)
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
