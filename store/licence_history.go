package store

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/callctx"
	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/terms"
)

// A licence's dated history (migration 00007): every status change and amendment is one
// licence_events row with the day it takes effect. The status a licence had on a day is
// the status of its last status event effective on or before that day; status events are
// recorded in date order (a change dated before the last status change is refused), so
// the order of the rows is the order of the dates.

// StatusPeriod is one status of a licence from a day on, until the next period.
type StatusPeriod struct {
	From   time.Time // first day of the period
	Status terms.LicenceStatus
}

// StatusOn returns the status of history on day d: that of the last period starting on or
// before d; before the first period, the first period's status (a day before a licence
// was issued is outside its validity, which the checks judge apart). An empty history
// gives current.
func StatusOn(history []StatusPeriod, current terms.LicenceStatus, d time.Time) terms.LicenceStatus {
	if len(history) == 0 {
		return current
	}
	st := history[0].Status
	for _, p := range history {
		if p.From.After(d) {
			break
		}
		st = p.Status
	}
	return st
}

// LicenceEvent is one entry of a licence's history.
type LicenceEvent struct {
	ID          int64
	Kind        string              // issued, activated, suspended, reinstated, revoked, amended, line-closed, status-undated
	EffectiveOn time.Time           // the day the change takes effect
	Status      terms.LicenceStatus // the status from EffectiveOn on; unspecified when the event leaves it as it was
	Reason      string
	Actor       string
	RecordedAt  time.Time
	Detail      json.RawMessage // what changed (JSON)
}

// ErrStaleVersion is wrapped (with ErrConflict) when a change names a licence version that
// is no longer the current one: the licence changed since the caller read it.
var ErrStaleVersion = errors.New("the licence changed since it was read")

// StatusChange asks for a licence's status to change from a day on.
type StatusChange struct {
	Number string
	Status terms.LicenceStatus // active, suspended or revoked
	// EffectiveOn is the first day of the new status; the zero time means Today, or the
	// day of the licence's last status change when that is later (a licence issued for a
	// later year is suspended from its first day).
	EffectiveOn time.Time
	Today       time.Time
	Reason      string
	// ExpectedVersion, when not 0, is the version the caller read; another one is refused.
	ExpectedVersion int
}

// statusKind names the event that moves a licence from status from to status to, or says
// why that move is refused.
func statusKind(number string, from, to terms.LicenceStatus) (string, error) {
	const (
		active, suspended, revoked = terms.LicenceActive, terms.LicenceSuspended, terms.LicenceRevoked
	)
	switch {
	case to == suspended && from == active:
		return "suspended", nil
	case to == suspended:
		return "", fmt.Errorf("licence %q is %s; only an active licence can be suspended: %w", number, from, ErrConflict)
	case to == active && from == suspended:
		return "reinstated", nil
	case to == active && from == terms.LicenceDraft:
		return "activated", nil
	case to == active && from == active:
		return "", fmt.Errorf("licence %q is already active; a reinstatement needs a suspended licence: %w", number, ErrConflict)
	case to == active:
		return "", fmt.Errorf("licence %q is %s and cannot be reinstated: %w", number, from, ErrConflict)
	case to == revoked && from == revoked:
		return "", fmt.Errorf("licence %q is already revoked: %w", number, ErrConflict)
	case to == revoked:
		return "revoked", nil
	}
	return "", fmt.Errorf("licence %q cannot be set to %q; set active, suspended or revoked: %w", number, to, ErrConflict)
}

// lockedLicence is a licence row read FOR UPDATE with what a change checks.
type lockedLicence struct {
	status     terms.LicenceStatus
	version    int
	lastChange time.Time // effective day of the last status event (zero: none)
	lastKind   string
}

// lockLicence reads licence number FOR UPDATE, with the day of its last status change.
func lockLicence(ctx context.Context, tx pgx.Tx, number string, expectedVersion int) (lockedLicence, error) {
	var l lockedLicence
	err := tx.QueryRow(ctx, `SELECT status, version FROM licences WHERE licence_number = $1 FOR UPDATE`, number).Scan(&l.status, &l.version)
	if errors.Is(err, pgx.ErrNoRows) {
		return l, notFound("licence", number)
	}
	if err != nil {
		return l, err
	}
	if expectedVersion != 0 && expectedVersion != l.version {
		return l, fmt.Errorf("licence %q is at version %d, not the expected_version %d: %w: read it again and repeat the change (%w)",
			number, l.version, expectedVersion, ErrStaleVersion, ErrConflict)
	}
	err = tx.QueryRow(ctx, `SELECT effective_on, kind FROM licence_events WHERE licence_number = $1 AND status IS NOT NULL
	    ORDER BY event_id DESC LIMIT 1`, number).Scan(&l.lastChange, &l.lastKind)
	if err != nil && !errors.Is(err, pgx.ErrNoRows) {
		return l, err
	}
	return l, nil
}

// addEvent appends an event to a licence's history, bumps its version, sets its status when
// status is not empty, and writes the audit log entry, all in tx.
func addEvent(ctx context.Context, tx pgx.Tx, number, kind string, effective time.Time, status terms.LicenceStatus, reason string, detail any) error {
	d, err := json.Marshal(detail)
	if err != nil {
		return err
	}
	var st any // NULL: the event leaves the status as it was
	if status != terms.LicenceStatusUnspecified {
		st = status
	}
	if _, err := tx.Exec(ctx, `INSERT INTO licence_events (licence_number, kind, effective_on, status, reason, actor, detail)
	    VALUES ($1, $2, $3, $4, $5, $6, $7)`, number, kind, effective, st, reason, callctx.Actor(ctx), d); err != nil {
		return classify(err, "history of licence", number)
	}
	// The status is written after the event, so the trigger that dates a status written
	// without an event (licence_status_undated) finds it.
	if _, err := tx.Exec(ctx, `UPDATE licences SET version = version + 1, status = coalesce($2, status), updated_at = now()
	    WHERE licence_number = $1`, number, st); err != nil {
		return classify(err, "licence", number)
	}
	return audit(ctx, tx, kind, "licence", number, reason, detail)
}

// SetLicenceStatus changes a licence's status from c.EffectiveOn on and returns the kind of
// the change (suspended, reinstated, activated, revoked). Only these moves are accepted:
// active → suspended, suspended → active (a reinstatement), draft → active, and any status
// but revoked → revoked; a change dated before the licence's last status change is refused
// (ErrConflict, with the reason).
func (s *Store) SetLicenceStatus(ctx context.Context, c StatusChange) (kind string, err error) {
	// READ COMMITTED: the licence row is read FOR UPDATE before its status is checked, so
	// two changes of one licence run one after the other.
	err = s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		var e error
		kind, e = setStatusTx(ctx, tx, c)
		return e
	})
	return kind, err
}

func setStatusTx(ctx context.Context, tx pgx.Tx, c StatusChange) (string, error) {
	l, err := lockLicence(ctx, tx, c.Number, c.ExpectedVersion)
	if err != nil {
		return "", err
	}
	kind, err := statusKind(c.Number, l.status, c.Status)
	if err != nil {
		return "", err
	}
	if c.EffectiveOn.IsZero() {
		c.EffectiveOn = c.Today
		if l.lastChange.After(c.EffectiveOn) {
			c.EffectiveOn = l.lastChange
		}
	}
	if !l.lastChange.IsZero() && c.EffectiveOn.Before(l.lastChange) {
		return "", fmt.Errorf("licence %q: effective_date %s is before its last status change (%s from %s); status changes are recorded in date order: %w",
			c.Number, c.EffectiveOn.Format(time.DateOnly), l.lastKind, l.lastChange.Format(time.DateOnly), ErrConflict)
	}
	return kind, addEvent(ctx, tx, c.Number, kind, c.EffectiveOn, c.Status, c.Reason,
		map[string]string{"from": l.status.String(), "to": c.Status.String(), "effective_on": c.EffectiveOn.Format(time.DateOnly)})
}

// CloseLine closes a quota line from a day on and may open another in its place.
type CloseLine struct {
	Number      string
	LineNumber  int
	EffectiveOn time.Time
	Reason      string
	// Successor, when not nil, is opened as a new line (its number is assigned: one more
	// than the licence's highest).
	Successor       *QuotaLine
	ExpectedVersion int
}

// CloseQuotaLine closes a quota line: its allocation is cut to what it has drawn, so it
// takes no further draws, and its unit, scope and draws stay as they were. It returns the
// number of the line opened in its place, or 0. This is how a line with draws changes its
// unit or scope (an amendment may not).
func (s *Store) CloseQuotaLine(ctx context.Context, c CloseLine) (successor int, err error) {
	// READ COMMITTED: the licence row, then its lines, are read FOR UPDATE (the recorder's
	// lock order), so no draw lands between the check and the cut.
	err = s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		l, err := lockLicence(ctx, tx, c.Number, c.ExpectedVersion)
		if err != nil {
			return err
		}
		if l.status == terms.LicenceRevoked {
			return fmt.Errorf("licence %q is revoked; its quota lines stay as they are: %w", c.Number, ErrConflict)
		}
		var allocated, drawn exact.Decimal
		var closed *time.Time
		var maxLine int
		err = tx.QueryRow(ctx, `SELECT allocated, drawn, closed_on,
		      (SELECT max(line_number) FROM quota_lines WHERE licence_number = $1)
		    FROM quota_lines WHERE licence_number = $1 AND line_number = $2 FOR UPDATE`, c.Number, c.LineNumber).
			Scan(&allocated, &drawn, &closed, &maxLine)
		if errors.Is(err, pgx.ErrNoRows) {
			return notFound(fmt.Sprintf("quota line %d of licence", c.LineNumber), c.Number)
		}
		if err != nil {
			return err
		}
		if closed != nil {
			return fmt.Errorf("licence %q line %d is closed already (from %s): %w", c.Number, c.LineNumber, closed.Format(time.DateOnly), ErrConflict)
		}
		if _, err := tx.Exec(ctx, `UPDATE quota_lines SET allocated = drawn, closed_on = $3
		    WHERE licence_number = $1 AND line_number = $2`, c.Number, c.LineNumber, c.EffectiveOn); err != nil {
			return err
		}
		// Figures in the detail are JSON strings (exact.Decimal's MarshalJSON), not numbers.
		detail := map[string]any{"line_number": c.LineNumber, "allocated_before": allocated, "drawn": drawn,
			"closed_on": c.EffectiveOn.Format(time.DateOnly)}
		if c.Successor != nil {
			successor = maxLine + 1
			q := *c.Successor
			q.LineNumber = successor
			if _, err := tx.Exec(ctx, `INSERT INTO quota_lines (licence_number, line_number, annex_group, substance, unit, allocated, purposes)
			    VALUES ($1, $2, $3, $4, $5, $6, $7)`, c.Number, q.LineNumber, q.AnnexGroup, q.Substance, q.Unit, q.Allocated, nonNil(q.Purposes)); err != nil {
				return classify(err, "quota line of licence", c.Number)
			}
			detail["opened"] = q
		}
		return addEvent(ctx, tx, c.Number, "line-closed", c.EffectiveOn, terms.LicenceStatusUnspecified, c.Reason, detail)
	})
	if err != nil {
		return 0, err
	}
	return successor, nil
}

// LicenceHistory returns a licence's events in the order they were recorded.
func (s *Store) LicenceHistory(ctx context.Context, number string) ([]LicenceEvent, error) {
	return s.LicenceHistoryPage(ctx, number, Page{})
}

// LicenceHistoryPage returns one page of LicenceHistory.
func (s *Store) LicenceHistoryPage(ctx context.Context, number string, p Page) (_ []LicenceEvent, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql([]any{number}, keyCol{"event_id", true})
	if err != nil {
		return nil, err
	}
	var exists bool
	if err := s.pool.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM licences WHERE licence_number = $1)`, number).Scan(&exists); err != nil {
		return nil, err
	}
	if !exists {
		return nil, notFound("licence", number)
	}
	rows, err := s.pool.Query(ctx, `SELECT event_id, kind, effective_on, coalesce(status, ''), reason, actor, recorded_at, detail
	    FROM licence_events WHERE licence_number = $1 AND `+cond+` ORDER BY event_id`+limit, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []LicenceEvent
	for rows.Next() {
		var e LicenceEvent
		if err := rows.Scan(&e.ID, &e.Kind, &e.EffectiveOn, &e.Status, &e.Reason, &e.Actor, &e.RecordedAt, &e.Detail); err != nil {
			return nil, err
		}
		if e.Detail, err = detailAmountsAsText(e.Detail); err != nil {
			return nil, fmt.Errorf("history of licence %q, event %d: %w", number, e.ID, err)
		}
		out = append(out, e)
	}
	return out, rows.Err()
}

// statusHistories returns the status periods of the numbered licences, in date order.
func statusHistories(ctx context.Context, q interface {
	Query(context.Context, string, ...any) (pgx.Rows, error)
}, numbers []string) (map[string][]StatusPeriod, error) {
	out := map[string][]StatusPeriod{}
	if len(numbers) == 0 {
		return out, nil
	}
	rows, err := q.Query(ctx, `SELECT licence_number, effective_on, status FROM licence_events
	    WHERE licence_number = ANY($1) AND status IS NOT NULL ORDER BY licence_number, event_id`, numbers)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var n string
		var p StatusPeriod
		if err := rows.Scan(&n, &p.From, &p.Status); err != nil {
			return nil, err
		}
		out[n] = append(out[n], p)
	}
	return out, rows.Err()
}

// licenceStatuses answers the status of the licences a recording batch draws on, as of a
// declaration date, from the rows read in its transaction.
type licenceStatuses struct {
	current map[string]terms.LicenceStatus // licences.status; a licence absent here does not exist
	history map[string][]StatusPeriod
	version map[string]int // licences.version
}

// on returns licence n's status on day d, or "" when there is no such licence.
func (ls licenceStatuses) on(n string, d time.Time) string {
	cur, ok := ls.current[n]
	if !ok {
		return ""
	}
	return StatusOn(ls.history[n], cur, d).String()
}

// readLicenceStatuses reads the numbered licences FOR SHARE (sorted, the lock order) with
// their status histories, for the recorder.
func readLicenceStatuses(ctx context.Context, tx pgx.Tx, lics []string) (licenceStatuses, error) {
	ls := licenceStatuses{current: map[string]terms.LicenceStatus{}, version: map[string]int{}}
	q, err := tx.Query(ctx, `SELECT licence_number, status, version FROM licences
	    WHERE licence_number = ANY($1) ORDER BY licence_number FOR SHARE`, lics)
	if err != nil {
		return ls, err
	}
	for q.Next() {
		var n string
		var st terms.LicenceStatus
		var v int
		if err := q.Scan(&n, &st, &v); err != nil {
			q.Close()
			return ls, err
		}
		ls.current[n], ls.version[n] = st, v
	}
	if err := q.Err(); err != nil {
		return ls, err
	}
	ls.history, err = statusHistories(ctx, tx, lics)
	return ls, err
}

// detailAmounts are the keys of a history event's detail that hold quota amounts: a closed
// line's allocation and draws, and the Allocated and Drawn of the quota lines an amendment
// or a closed line's successor carries.
var detailAmounts = map[string]bool{"allocated_before": true, "drawn": true, "Allocated": true, "Drawn": true}

// detailAmountsAsText gives an event's detail with every quota amount as a JSON string
// holding its exact decimal ("0.4"), as events are written now (exact.Decimal's
// MarshalJSON). Events written before amounts were strings hold them as JSON numbers; those
// are turned into strings from their text, digit for digit (json.Number, no float64), so
// the history reads the same whichever server wrote it. A detail without such numbers is
// returned as it is.
func detailAmountsAsText(detail json.RawMessage) (json.RawMessage, error) {
	if len(detail) == 0 || !bytes.ContainsAny(detail, "0123456789") {
		return detail, nil
	}
	dec := json.NewDecoder(bytes.NewReader(detail))
	dec.UseNumber()
	var v any
	if err := dec.Decode(&v); err != nil {
		return nil, err
	}
	changed := false
	var walk func(any) any
	walk = func(x any) any {
		switch t := x.(type) {
		case map[string]any:
			for k, e := range t {
				if n, ok := e.(json.Number); ok && detailAmounts[k] {
					d, err := exact.Parse(n.String())
					if err != nil {
						continue // an exponent: left as the number it is
					}
					t[k], changed = d.String(), true
					continue
				}
				t[k] = walk(e)
			}
		case []any:
			for i, e := range t {
				t[i] = walk(e)
			}
		}
		return x
	}
	v = walk(v)
	if !changed {
		return detail, nil
	}
	return json.Marshal(v)
}
