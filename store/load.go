package store

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	"github.com/halovet/halovet/terms"
	"github.com/jackc/pgx/v5"
)

// A registry load writes parties, companies and licences in one transaction: all of it or
// nothing. Each object is reported as created, changed or unchanged.

// LoadLicence is one licence of a load: issued when new, amended when it exists, and
// brought to Licence.Status from StatusEffectiveOn on when that differs.
type LoadLicence struct {
	Licence           Licence
	StatusEffectiveOn time.Time // the day a status change takes effect; zero: as StatusChange.EffectiveOn
}

// Load is a registry load.
type Load struct {
	Parties   []Party
	Companies []Company
	Licences  []LoadLicence
	// Today is the day amendments take effect.
	Today time.Time
	// Reason goes into the audit log and the licence histories.
	Reason string
	// DryRun rolls the transaction back: the report says what a load would do.
	DryRun bool
}

// LoadOutcome is what a load did (or would do) to one object.
type LoadOutcome struct {
	Kind   string // "party", "company", "licence"
	Key    string // country code, company id, licence number
	Index  int    // position in its list of the load
	Result string // "created", "changed", "unchanged"
	// Changes lists what changed besides the terms (a status change: "suspended from
	// 2026-09-15").
	Changes []string
}

// errDryRun rolls a dry run's transaction back.
var errDryRun = errors.New("dry run")

// LoadRegistry writes l in one transaction and returns one outcome per object, in the
// order parties, companies, licences. Any object refused refuses the whole load; the
// error names the object (e.g. `licences[3] (L-7)`) and wraps the store's kind.
func (s *Store) LoadRegistry(ctx context.Context, l Load) ([]LoadOutcome, error) {
	var out []LoadOutcome
	// SERIALIZABLE: the load reads (does the object exist, is it the same, who is the
	// reporting Party) and writes on what it read, all of it as one change.
	err := s.inTx(ctx, serializable, func(tx pgx.Tx) error {
		out = out[:0]
		for i, p := range l.Parties {
			bound, err := json.Marshal(nonNilMap(p.BoundFrom))
			if err != nil {
				return err
			}
			var existed bool
			if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM parties WHERE country_code = $1)`, p.CountryCode).Scan(&existed); err != nil {
				return err
			}
			changed, err := putPartyTx(ctx, tx, p, bound)
			if err != nil {
				return fmt.Errorf("parties[%d] (%s): %w", i, p.CountryCode, err)
			}
			out = append(out, LoadOutcome{Kind: "party", Key: p.CountryCode, Index: i, Result: result(existed, changed)})
		}
		for i, c := range l.Companies {
			var existed bool
			if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM companies WHERE company_id = $1)`, c.CompanyID).Scan(&existed); err != nil {
				return err
			}
			changed, err := putCompanyTx(ctx, tx, c)
			if err != nil {
				return fmt.Errorf("companies[%d] (%s): %w", i, c.CompanyID, err)
			}
			out = append(out, LoadOutcome{Kind: "company", Key: c.CompanyID, Index: i, Result: result(existed, changed)})
		}
		for i, ll := range l.Licences {
			o, err := loadLicenceTx(ctx, tx, ll, l.Today, l.Reason)
			if err != nil {
				return fmt.Errorf("licences[%d] (%s): %w", i, ll.Licence.Number, err)
			}
			o.Index = i
			out = append(out, o)
		}
		if l.DryRun {
			return errDryRun
		}
		return nil
	})
	if errors.Is(err, errDryRun) {
		return out, nil
	}
	if err != nil {
		return nil, err
	}
	return out, nil
}

func result(existed, changed bool) string {
	switch {
	case !existed:
		return "created"
	case changed:
		return "changed"
	}
	return "unchanged"
}

// loadLicenceTx issues or amends one licence and brings it to the status asked for.
func loadLicenceTx(ctx context.Context, tx pgx.Tx, ll LoadLicence, today time.Time, reason string) (LoadOutcome, error) {
	l := ll.Licence
	o := LoadOutcome{Kind: "licence", Key: l.Number}
	var cur terms.LicenceStatus
	err := tx.QueryRow(ctx, `SELECT status FROM licences WHERE licence_number = $1`, l.Number).Scan(&cur)
	switch {
	case errors.Is(err, pgx.ErrNoRows):
		// A new licence is issued active (or draft) from its first day, then set to the
		// status asked for: the history shows both steps.
		issue := l
		if issue.Status != terms.LicenceDraft {
			issue.Status = terms.LicenceActive
		}
		if err := issueTx(ctx, tx, issue, reason); err != nil {
			return o, err
		}
		o.Result, cur = "created", issue.Status
	case err != nil:
		return o, err
	default:
		changed, err := amendTx(ctx, tx, Amendment{Licence: l, EffectiveOn: today, Reason: reason})
		if err != nil {
			return o, err
		}
		o.Result = result(true, changed)
	}
	if l.Status != terms.LicenceStatusUnspecified && l.Status != cur {
		c := StatusChange{Number: l.Number, Status: l.Status, EffectiveOn: ll.StatusEffectiveOn, Today: today, Reason: reason}
		kind, err := setStatusTx(ctx, tx, c)
		if err != nil {
			return o, err
		}
		if o.Result == "unchanged" {
			o.Result = "changed"
		}
		var from time.Time
		if err := tx.QueryRow(ctx, `SELECT effective_on FROM licence_events WHERE licence_number = $1 AND status IS NOT NULL
		    ORDER BY event_id DESC LIMIT 1`, l.Number).Scan(&from); err != nil {
			return o, err
		}
		o.Changes = append(o.Changes, fmt.Sprintf("%s from %s", kind, from.Format(time.DateOnly)))
	}
	return o, nil
}
