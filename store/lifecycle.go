package store

import (
	"context"
	"errors"
	"fmt"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

	"github.com/halovet/halovet/callctx"
	"github.com/halovet/halovet/terms"
)

// The life of a recorded shipment (migration 8): a row is live, voided or superseded.
// Voiding gives its draws back to the quota lines and keeps the row; correcting stores a
// new version under the same company and key and supersedes the old one, moving quota
// from the old draws to the new in one transaction. Only live rows draw on quota and
// count in consumption. Nothing declared in a closed reporting year is recorded, voided or
// corrected.

// Shipment states.
const (
	StateLive       = "live"
	StateVoided     = "voided"
	StateSuperseded = "superseded"
)

// StoredRef is what a replay or a key lookup needs to know of one stored version.
type StoredRef struct {
	ID          int64
	Fingerprint string
	State       string
	Version     int
	RecordedAt  time.Time
	Verdict     []byte // as stored; nil for rows stored before migration 8
}

// storedRefs returns every stored version of the (company, key) pairs, oldest first.
func storedRefs(ctx context.Context, q interface {
	Query(context.Context, string, ...any) (pgx.Rows, error)
}, companies, keys []string) (map[[2]string][]StoredRef, error) {
	// One index probe per key (LATERAL, OFFSET 0), planned at each execution
	// (QueryExecModeExec): a plan cached while the register was empty would scan the
	// whole table for every key.
	rows, err := q.Query(ctx, `SELECT s.company_id, s.record_key, s.shipment_id, s.fingerprint, s.state,
	        s.version, s.recorded_at, s.verdict
	    FROM unnest($1::text[], $2::text[]) AS k(company_id, record_key)
	    CROSS JOIN LATERAL (SELECT company_id, record_key, shipment_id, fingerprint, state, version, recorded_at, verdict
	        FROM shipments WHERE company_id = k.company_id AND record_key = k.record_key OFFSET 0) s
	    ORDER BY s.company_id, s.record_key, s.version`, pgx.QueryExecModeExec, companies, keys)
	if err != nil {
		return nil, err
	}
	return scanStoredRefs(rows)
}

// scanStoredRefs reads the rows of storedRefs or storedKeysQuery, and closes them.
func scanStoredRefs(rows pgx.Rows) (map[[2]string][]StoredRef, error) {
	defer rows.Close()
	out := map[[2]string][]StoredRef{}
	for rows.Next() {
		var c, k string
		var r StoredRef
		if err := rows.Scan(&c, &k, &r.ID, &r.Fingerprint, &r.State, &r.Version, &r.RecordedAt, &r.Verdict); err != nil {
			return nil, err
		}
		out[[2]string{c, k}] = append(out[[2]string{c, k}], r)
	}
	return out, rows.Err()
}

// Closed reporting years -----------------------------------------------------------------

// yearLockClass is the first key of the advisory locks on reporting years ("halv").
const yearLockClass = 0x68616c76

// ClosedYear is a reporting year an officer closed.
type ClosedYear struct {
	Year     int
	ClosedAt time.Time
	ClosedBy string
	Reason   string
}

// YearClosedError says a write was refused because its declaration date is in a closed
// year; errors.Is finds ErrConflict.
type YearClosedError struct{ ClosedYear }

func (e *YearClosedError) Error() string {
	return fmt.Sprintf("reporting year %d is closed (since %s: %s); reopen it first", e.Year,
		e.ClosedAt.UTC().Format(time.RFC3339), e.Reason)
}

// Unwrap makes errors.Is find ErrConflict.
func (e *YearClosedError) Unwrap() error { return ErrConflict }

func rowYears(rows []ShipmentRow) []int {
	var ys []int
	for _, r := range rows {
		ys = append(ys, r.DeclarationDate.Year())
	}
	return ys
}

// lockYears takes the shared advisory lock of each year, in order, and returns those of
// them that are closed. A write holds the lock until it commits, so a close waits for it,
// and a write that starts after a close sees the closed year.
func lockYears(ctx context.Context, tx pgx.Tx, years []int) (map[int]ClosedYear, error) {
	ys := uniqueInts(years)
	for _, y := range ys {
		if _, err := tx.Exec(ctx, `SELECT pg_advisory_xact_lock_shared($1, $2)`, int32(yearLockClass), int32(y)); err != nil {
			return nil, err
		}
	}
	out := map[int]ClosedYear{}
	if len(ys) == 0 {
		return out, nil
	}
	rows, err := tx.Query(ctx, `SELECT year, closed_at, closed_by, reason FROM closed_years WHERE year = ANY($1)`, ys)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var c ClosedYear
		if err := rows.Scan(&c.Year, &c.ClosedAt, &c.ClosedBy, &c.Reason); err != nil {
			return nil, err
		}
		out[c.Year] = c
	}
	return out, rows.Err()
}

func uniqueInts(xs []int) []int {
	m := map[int]bool{}
	var out []int
	for _, x := range xs {
		if !m[x] {
			m[x] = true
			out = append(out, x)
		}
	}
	sort.Ints(out)
	return out
}

// ErrYearState is wrapped by CloseYear and ReopenYear when the year is already in the
// state asked for; errors.Is finds ErrConflict too.
var ErrYearState = fmt.Errorf("%w: the year is already so", ErrConflict)

// CloseYear closes a reporting year (reason required): from its commit on, nothing
// declared in the year is recorded, voided or corrected. It waits for the writes of that
// year in flight. Audited.
func (s *Store) CloseYear(ctx context.Context, year int, reason string) (_ ClosedYear, err error) {
	var c ClosedYear
	// READ COMMITTED: the exclusive advisory lock on the year orders the close after
	// every write of the year in flight; the row is then inserted once.
	err = s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, `SELECT pg_advisory_xact_lock($1, $2)`, int32(yearLockClass), int32(year)); err != nil {
			return err
		}
		err := tx.QueryRow(ctx, `INSERT INTO closed_years (year, closed_by, reason) VALUES ($1, $2, $3)
		    ON CONFLICT (year) DO NOTHING RETURNING year, closed_at, closed_by, reason`,
			year, actorOf(ctx), reason).Scan(&c.Year, &c.ClosedAt, &c.ClosedBy, &c.Reason)
		if errors.Is(err, pgx.ErrNoRows) {
			return fmt.Errorf("reporting year %d is closed already: %w", year, ErrYearState)
		}
		if err != nil {
			return err
		}
		return audit(ctx, tx, "close", "reporting_year", strconv.Itoa(year), reason, map[string]int{"year": year})
	})
	return c, err
}

// ReopenYear reopens a closed reporting year (reason required). Audited.
func (s *Store) ReopenYear(ctx context.Context, year int, reason string) error {
	// READ COMMITTED: under the year's exclusive advisory lock, as CloseYear.
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, `SELECT pg_advisory_xact_lock($1, $2)`, int32(yearLockClass), int32(year)); err != nil {
			return err
		}
		var was ClosedYear
		err := tx.QueryRow(ctx, `DELETE FROM closed_years WHERE year = $1 RETURNING year, closed_at, closed_by, reason`, year).
			Scan(&was.Year, &was.ClosedAt, &was.ClosedBy, &was.Reason)
		if errors.Is(err, pgx.ErrNoRows) {
			return fmt.Errorf("reporting year %d is not closed: %w", year, ErrYearState)
		}
		if err != nil {
			return err
		}
		return audit(ctx, tx, "reopen", "reporting_year", strconv.Itoa(year), reason,
			map[string]any{"year": year, "closed_at": was.ClosedAt, "closed_by": was.ClosedBy, "closed_reason": was.Reason})
	})
}

// YearClosed reports whether a reporting year is closed, and since when and why. For
// other parts of the program that must treat a closed year as final (a report of a closed
// year is stable: nothing declared in it changes until it is reopened).
func (s *Store) YearClosed(ctx context.Context, year int) (_ ClosedYear, closed bool, err error) {
	return s.reader().YearClosed(ctx, year)
}

// YearClosed is Store.YearClosed within the reader's transaction, if any.
func (r Reader) YearClosed(ctx context.Context, year int) (_ ClosedYear, closed bool, err error) {
	defer classifyInto(&err)
	var c ClosedYear
	err = r.q.QueryRow(ctx, `SELECT year, closed_at, closed_by, reason FROM closed_years WHERE year = $1`, year).
		Scan(&c.Year, &c.ClosedAt, &c.ClosedBy, &c.Reason)
	if errors.Is(err, pgx.ErrNoRows) {
		return ClosedYear{}, false, nil
	}
	return c, err == nil, err
}

// ClosedYears lists the closed reporting years in order.
func (s *Store) ClosedYears(ctx context.Context) ([]ClosedYear, error) {
	return s.ClosedYearsPage(ctx, Page{})
}

// ClosedYearsPage returns one page of ClosedYears.
func (s *Store) ClosedYearsPage(ctx context.Context, p Page) (_ []ClosedYear, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql(nil, keyCol{"year", true})
	if err != nil {
		return nil, err
	}
	rows, err := s.pool.Query(ctx, `SELECT year, closed_at, closed_by, reason FROM closed_years WHERE `+cond+` ORDER BY year`+limit, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []ClosedYear
	for rows.Next() {
		var c ClosedYear
		if err := rows.Scan(&c.Year, &c.ClosedAt, &c.ClosedBy, &c.Reason); err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

// Listing and reading ---------------------------------------------------------------------

// ShipmentFilter selects stored shipments; empty fields select everything.
type ShipmentFilter struct {
	CompanyID     string
	LicenceNumber string
	RecordKey     string
	From, To      time.Time       // declaration dates, both inclusive; zero: open
	Partner       string          // ISO 3166-1 alpha-2, upper case
	Substance     string          // resolved designation of the record or of one of its components
	AnnexGroups   []string        // Annex groups, one of which one of its components is in, e.g. "C/I"
	Direction     terms.Direction // as stored: "import", "export", "re-export", "transit"
	Purpose       terms.Purpose   // as stored, e.g. "servicing"
	Condition     terms.Condition // as stored, e.g. "virgin"
	States        []string        // StateLive, StateVoided, StateSuperseded; empty: all
	AfterID       int64           // only ids above this one (paging)
	Limit         int             // at most this many; 0: 100
}

// StoredDraw is one draw of a stored shipment; Released is set once it was given back
// (the shipment voided or corrected).
type StoredDraw struct {
	Draw
	Released   bool
	ReleasedAt time.Time
}

// StoredShipment is one stored version of a shipment.
type StoredShipment struct {
	ID                  int64
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
	Verdict             []byte
	RecordedAt          time.Time
	State               string
	Version             int
	PreviousID          int64
	ChangedAt           time.Time // when voided or superseded
	ChangeReason        string
	Components          []ShipmentComponent
	Draws               []StoredDraw
}

const storedCols = `s.shipment_id, s.company_id, s.record_key, s.fingerprint, s.direction, s.licence_number,
    s.partner_country, s.declaration_date, s.resolved_designation, s.entry_kind, s.purpose, s.condition,
    (s.net_mass_kg * 1000000000)::bigint, (s.odp_tonnes * 1000000000)::bigint, (s.co2e_tonnes * 1000000000)::bigint,
    s.counts_in_consumption, s.partner_non_party, s.record::text, s.verdict, s.recorded_at, s.state, s.version,
    coalesce(s.previous_id, 0), s.changed_at, s.change_reason`

func scanStored(r pgx.Rows) (StoredShipment, error) {
	var x StoredShipment
	var rec string
	var changed pgtype.Timestamptz
	var mass, odp, co2 int64
	err := r.Scan(&x.ID, &x.CompanyID, &x.RecordKey, &x.Fingerprint, &x.Direction, &x.LicenceNumber,
		&x.PartnerCountry, &x.DeclarationDate, &x.ResolvedDesignation, &x.EntryKind, &x.Purpose, &x.Condition,
		&mass, &odp, &co2, &x.CountsInConsumption, &x.PartnerNonParty, &rec, &x.Verdict, &x.RecordedAt,
		&x.State, &x.Version, &x.PreviousID, &changed, &x.ChangeReason)
	x.NetMassKg, x.ODPTonnes, x.CO2eTonnes = Nano(mass), Nano(odp), Nano(co2)
	x.RecordJSON = []byte(rec)
	if changed.Valid {
		x.ChangedAt = changed.Time
	}
	return x, err
}

// ListShipments returns the stored shipments the filter selects, in id order, with their
// components and draws.
func (s *Store) ListShipments(ctx context.Context, f ShipmentFilter) (_ []StoredShipment, err error) {
	defer classifyInto(&err)
	limit := f.Limit
	if limit <= 0 {
		limit = 100
	}
	var where []string
	var args []any
	arg := func(v any) string {
		args = append(args, v)
		return "$" + strconv.Itoa(len(args))
	}
	eq := func(col, v string) {
		if v != "" {
			where = append(where, col+" = "+arg(v))
		}
	}
	eq("s.company_id", f.CompanyID)
	eq("s.licence_number", f.LicenceNumber)
	eq("s.record_key", f.RecordKey)
	eq("s.partner_country", f.Partner)
	eq("s.direction", f.Direction.String()) // unspecified: "", no condition
	eq("s.purpose", f.Purpose.String())
	eq("s.condition", f.Condition.String())
	if !f.From.IsZero() {
		where = append(where, "s.declaration_date >= "+arg(f.From))
	}
	if !f.To.IsZero() {
		where = append(where, "s.declaration_date <= "+arg(f.To))
	}
	if f.Substance != "" {
		a := arg(f.Substance)
		where = append(where, "(s.resolved_designation = "+a+
			" OR EXISTS (SELECT 1 FROM shipment_components c WHERE c.shipment_id = s.shipment_id AND c.designation = "+a+"))")
	}
	if len(f.AnnexGroups) > 0 {
		where = append(where, "EXISTS (SELECT 1 FROM shipment_components c WHERE c.shipment_id = s.shipment_id AND c.annex_group = ANY("+arg(f.AnnexGroups)+"))")
	}
	if len(f.States) > 0 {
		where = append(where, "s.state = ANY("+arg(f.States)+")")
	}
	where = append(where, "s.shipment_id > "+arg(f.AfterID))
	q := `SELECT ` + storedCols + ` FROM shipments s WHERE ` + strings.Join(where, " AND ") +
		` ORDER BY s.shipment_id LIMIT ` + arg(limit)
	// REPEATABLE READ, read only: the rows and their components and draws from one snapshot.
	var out []StoredShipment
	err = s.inTx(ctx, txSpec{iso: pgx.RepeatableRead, readOnly: true}, func(tx pgx.Tx) error {
		out = nil
		rows, err := tx.Query(ctx, q, args...)
		if err != nil {
			return err
		}
		for rows.Next() {
			x, err := scanStored(rows)
			if err != nil {
				rows.Close()
				return err
			}
			out = append(out, x)
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return err
		}
		return fillDetails(ctx, tx, out)
	})
	return out, err
}

// fillDetails reads the components and draws (current and released) of the shipments.
func fillDetails(ctx context.Context, tx pgx.Tx, xs []StoredShipment) error {
	if len(xs) == 0 {
		return nil
	}
	ids := make([]int64, len(xs))
	at := map[int64]int{}
	for i, x := range xs {
		ids[i] = x.ID
		at[x.ID] = i
	}
	rows, err := tx.Query(ctx, `SELECT shipment_id, designation, annex_group, (mass_kg * 1000000000)::bigint,
	        (odp_tonnes * 1000000000)::bigint, (co2e_tonnes * 1000000000)::bigint, partner_non_party
	    FROM shipment_components WHERE shipment_id = ANY($1) ORDER BY shipment_id, designation`, ids)
	if err != nil {
		return err
	}
	for rows.Next() {
		var id, m, o, c int64
		var sc ShipmentComponent
		if err := rows.Scan(&id, &sc.Designation, &sc.AnnexGroup, &m, &o, &c, &sc.PartnerNonParty); err != nil {
			rows.Close()
			return err
		}
		sc.MassKg, sc.ODPTonnes, sc.CO2eTonnes = Nano(m), Nano(o), Nano(c)
		xs[at[id]].Components = append(xs[at[id]].Components, sc)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	rows, err = tx.Query(ctx, `SELECT shipment_id, licence_number, line_number, (amount * 1000000000)::bigint, false, NULL::timestamptz
	        FROM quota_draws WHERE shipment_id = ANY($1)
	    UNION ALL
	    SELECT shipment_id, licence_number, line_number, (amount * 1000000000)::bigint, true, released_at
	        FROM released_draws WHERE shipment_id = ANY($1)
	    ORDER BY 1, 2, 3`, ids)
	if err != nil {
		return err
	}
	defer rows.Close()
	for rows.Next() {
		var id, amt int64
		var d StoredDraw
		var rel pgtype.Timestamptz
		if err := rows.Scan(&id, &d.LicenceNumber, &d.LineNumber, &amt, &d.Released, &rel); err != nil {
			return err
		}
		d.Amount = Nano(amt)
		if rel.Valid {
			d.ReleasedAt = rel.Time
		}
		xs[at[id]].Draws = append(xs[at[id]].Draws, d)
	}
	return rows.Err()
}

// GetShipment returns one stored version and every version of its company and key,
// oldest first (the one asked for among them).
func (s *Store) GetShipment(ctx context.Context, id int64) (_ StoredShipment, versions []StoredShipment, err error) {
	defer classifyInto(&err)
	var got StoredShipment
	// REPEATABLE READ, read only: the versions from one snapshot.
	err = s.inTx(ctx, txSpec{iso: pgx.RepeatableRead, readOnly: true}, func(tx pgx.Tx) error {
		versions = nil
		rows, err := tx.Query(ctx, `SELECT `+storedCols+` FROM shipments s
		    JOIN shipments x ON x.company_id = s.company_id AND x.record_key = s.record_key
		    WHERE x.shipment_id = $1 ORDER BY s.version`, id)
		if err != nil {
			return err
		}
		for rows.Next() {
			v, err := scanStored(rows)
			if err != nil {
				rows.Close()
				return err
			}
			versions = append(versions, v)
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return err
		}
		if len(versions) == 0 {
			return notFound("shipment", strconv.FormatInt(id, 10))
		}
		if err := fillDetails(ctx, tx, versions); err != nil {
			return err
		}
		for _, v := range versions {
			if v.ID == id {
				got = v
			}
		}
		return nil
	})
	return got, versions, err
}

// Voiding and correcting -------------------------------------------------------------------

// StateError says a shipment is not in the state a change needs (voiding a voided record,
// correcting a superseded one); errors.Is finds ErrConflict.
type StateError struct {
	ID    int64
	State string
	Want  string // what the change needs
}

func (e *StateError) Error() string {
	return fmt.Sprintf("shipment %d is %s; only a %s shipment can be changed", e.ID, e.State, e.Want)
}

// Unwrap makes errors.Is find ErrConflict.
func (e *StateError) Unwrap() error { return ErrConflict }

// lockShipment reads a shipment's row FOR UPDATE and checks it is live.
func lockShipment(ctx context.Context, tx pgx.Tx, id int64) (StoredShipment, error) {
	rows, err := tx.Query(ctx, `SELECT `+storedCols+` FROM shipments s WHERE s.shipment_id = $1 FOR UPDATE`, id)
	if err != nil {
		return StoredShipment{}, err
	}
	var x StoredShipment
	found := false
	for rows.Next() {
		if x, err = scanStored(rows); err != nil {
			rows.Close()
			return x, err
		}
		found = true
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return x, err
	}
	if !found {
		return x, notFound("shipment", strconv.FormatInt(id, 10))
	}
	if x.State != StateLive {
		return x, &StateError{ID: id, State: x.State, Want: StateLive}
	}
	return x, nil
}

// releaseDraws gives a shipment's draws back to their lines and keeps them in
// released_draws. The lines must be locked already.
func releaseDraws(ctx context.Context, tx pgx.Tx, id int64) error {
	if _, err := tx.Exec(ctx, `UPDATE quota_lines q SET drawn = q.drawn - d.total
	    FROM (SELECT licence_number, line_number, sum(amount) AS total FROM quota_draws
	          WHERE shipment_id = $1 GROUP BY licence_number, line_number) d
	    WHERE q.licence_number = d.licence_number AND q.line_number = d.line_number`, id); err != nil {
		return fmt.Errorf("releasing quota: %w", err)
	}
	if _, err := tx.Exec(ctx, `WITH gone AS (DELETE FROM quota_draws WHERE shipment_id = $1
	        RETURNING shipment_id, licence_number, line_number, amount)
	    INSERT INTO released_draws (shipment_id, licence_number, line_number, amount)
	    SELECT shipment_id, licence_number, line_number, amount FROM gone`, id); err != nil {
		return fmt.Errorf("keeping released draws: %w", err)
	}
	return nil
}

// lockLines share-locks the licences and locks the quota lines of the draws FOR UPDATE
// in (licence, line) order, as RecordShipments does, and returns the licences' statuses,
// what is left on each line and each line's allocation.
func lockLines(ctx context.Context, tx pgx.Tx, draws []Draw, alsoLicences ...string) (licenceStatuses, map[lineKey]Nano, map[lineKey]Nano, error) {
	licSet := map[string]bool{}
	for _, d := range draws {
		licSet[d.LicenceNumber] = true
	}
	for _, l := range alsoLicences {
		if l != "" {
			licSet[l] = true
		}
	}
	lics := make([]string, 0, len(licSet))
	for l := range licSet {
		lics = append(lics, l)
	}
	sort.Strings(lics)
	var status licenceStatuses
	remaining := map[lineKey]Nano{}
	allocated := map[lineKey]Nano{}
	if len(lics) == 0 {
		return status, remaining, allocated, nil
	}
	// The licences FOR SHARE with their dated status histories (licence_history.go).
	status, err := readLicenceStatuses(ctx, tx, lics)
	if err != nil {
		return status, nil, nil, err
	}
	rows, err := tx.Query(ctx, `SELECT licence_number, line_number, ((allocated - drawn) * 1000000000)::bigint,
	        (allocated * 1000000000)::bigint
	    FROM quota_lines WHERE licence_number = ANY($1)
	    ORDER BY licence_number, line_number FOR UPDATE`, lics)
	if err != nil {
		return status, nil, nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var k lineKey
		var rem, alloc int64
		if err := rows.Scan(&k.licence, &k.line, &rem, &alloc); err != nil {
			return status, nil, nil, err
		}
		remaining[k], allocated[k] = Nano(rem), Nano(alloc)
	}
	return status, remaining, allocated, rows.Err()
}

func storedDrawsOf(ctx context.Context, tx pgx.Tx, id int64) ([]Draw, error) {
	rows, err := tx.Query(ctx, `SELECT licence_number, line_number, (amount * 1000000000)::bigint
	    FROM quota_draws WHERE shipment_id = $1 ORDER BY licence_number, line_number`, id)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []Draw
	for rows.Next() {
		var d Draw
		var a int64
		if err := rows.Scan(&d.LicenceNumber, &d.LineNumber, &a); err != nil {
			return nil, err
		}
		d.Amount = Nano(a)
		out = append(out, d)
	}
	return out, rows.Err()
}

// VoidShipment voids a live shipment (reason required): its draws go back to their quota
// lines exactly, it leaves consumption, and it stays in the register as voided with its
// figures and its released draws. Audited. A shipment declared in a closed year is
// refused (*YearClosedError), as is one that is not live (*StateError).
func (s *Store) VoidShipment(ctx context.Context, id int64, reason string) (_ StoredShipment, err error) {
	var out StoredShipment
	// READ COMMITTED: the shipment row is locked FOR UPDATE (a second void waits, then sees
	// it voided) and the quota lines FOR UPDATE in the recorder's order.
	err = s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		x, err := lockShipment(ctx, tx, id)
		if err != nil {
			return err
		}
		closed, err := lockYears(ctx, tx, []int{x.DeclarationDate.Year()})
		if err != nil {
			return err
		}
		if c, ok := closed[x.DeclarationDate.Year()]; ok {
			return &YearClosedError{c}
		}
		draws, err := storedDrawsOf(ctx, tx, id)
		if err != nil {
			return err
		}
		if _, _, _, err := lockLines(ctx, tx, draws); err != nil {
			return err
		}
		if err := releaseDraws(ctx, tx, id); err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, `UPDATE shipments SET state = 'voided', changed_at = now(), change_reason = $2
		    WHERE shipment_id = $1`, id, reason); err != nil {
			return err
		}
		if err := audit(ctx, tx, "void", "shipment", strconv.FormatInt(id, 10), reason, map[string]any{
			"company_id": x.CompanyID, "record_key": x.RecordKey, "version": x.Version, "released": drawDetail(draws)}); err != nil {
			return err
		}
		out = x
		return nil
	})
	if err != nil {
		return StoredShipment{}, err
	}
	got, _, err := s.GetShipment(ctx, out.ID)
	return got, err
}

func drawDetail(ds []Draw) []map[string]any {
	out := []map[string]any{}
	for _, d := range ds {
		out = append(out, map[string]any{"licence": d.LicenceNumber, "line": d.LineNumber, "amount": d.Amount.numeric()})
	}
	return out
}

// CorrectShipment replaces the live shipment id by row, a new version under the same
// company and key, in one transaction: the old version's draws go back to their lines,
// the new version's are drawn (judged against the balance with the old draws given back),
// the old version is kept as superseded. row must be a checked, accepted record. The
// answer is RecordStored with the new id, or why the new version was not stored
// (RecordQuotaShort, RecordLicenceInactive, RecordYearClosed for the new date; nothing
// is changed then). A shipment that is not live is refused (*StateError), one declared
// in a closed year *YearClosedError; a row of another company or key ErrConflict.
// Audited.
func (s *Store) CorrectShipment(ctx context.Context, id int64, row ShipmentRow, reason string) (_ RecordResult, err error) {
	var res RecordResult
	// READ COMMITTED, as VoidShipment; the new version is written only once every check
	// passed, so a refused correction leaves everything as it was.
	err = s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		res = RecordResult{}
		x, err := lockShipment(ctx, tx, id)
		if err != nil {
			return err
		}
		if x.CompanyID != row.CompanyID || x.RecordKey != row.RecordKey {
			return fmt.Errorf("%w: shipment %d is company %s key %s; a correction keeps both (got %s, %s)",
				ErrConflict, id, x.CompanyID, x.RecordKey, row.CompanyID, row.RecordKey)
		}
		oldYear, newYear := x.DeclarationDate.Year(), row.DeclarationDate.Year()
		closed, err := lockYears(ctx, tx, []int{oldYear, newYear})
		if err != nil {
			return err
		}
		if c, ok := closed[oldYear]; ok {
			return &YearClosedError{c}
		}
		if c, ok := closed[newYear]; ok {
			res = RecordResult{Status: RecordYearClosed, Closed: &c}
			return nil
		}
		old, err := storedDrawsOf(ctx, tx, id)
		if err != nil {
			return err
		}
		status, remaining, allocated, err := lockLines(ctx, tx, append(append([]Draw{}, old...), row.Draws...), judgedLicence(row))
		if err != nil {
			return err
		}
		for _, d := range old {
			remaining[lineKey{d.LicenceNumber, d.LineNumber}] += d.Amount
		}
		if r, ok := checkDraws(row, status, remaining); !ok {
			res = r
			return nil
		}
		var bal []LineBalance
		for _, d := range row.Draws {
			lk := lineKey{d.LicenceNumber, d.LineNumber}
			bal = append(bal, LineBalance{LicenceNumber: d.LicenceNumber, LineNumber: d.LineNumber,
				Allocated: allocated[lk], Before: remaining[lk], After: remaining[lk] - d.Amount})
			remaining[lk] -= d.Amount
		}
		if err := releaseDraws(ctx, tx, id); err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, `UPDATE shipments SET state = 'superseded', changed_at = now(), change_reason = $2
		    WHERE shipment_id = $1`, id, reason); err != nil {
			return err
		}
		var newID int64
		if err := tx.QueryRow(ctx, `SELECT nextval('shipments_shipment_id_seq')`).Scan(&newID); err != nil {
			return err
		}
		row.version, row.previousID = x.Version+1, &id
		var now time.Time
		if err := tx.QueryRow(ctx, `SELECT now()`).Scan(&now); err != nil {
			return err
		}
		res = RecordResult{Status: RecordStored, ShipmentID: newID, Balances: bal, RecordedAt: now}
		if row.VerdictOnStore != nil {
			row.Verdict = row.VerdictOnStore(res)
		}
		if err := insertShipments(ctx, tx, []int64{newID}, []*ShipmentRow{&row}, nil); err != nil {
			return err
		}
		if err := audit(ctx, tx, "correct", "shipment", strconv.FormatInt(id, 10), reason, map[string]any{
			"company_id": x.CompanyID, "record_key": x.RecordKey, "new_shipment_id": newID, "new_version": row.version,
			"released": drawDetail(old), "drawn": drawDetail(row.Draws)}); err != nil {
			return err
		}
		return nil
	})
	return res, err
}

// actorOf is the audit actor of ctx (the audit log's own helper names it the same way).
func actorOf(ctx context.Context) string { return callctx.Actor(ctx) }
