package store

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
)

// NotDraftError: a licence of a draft's number exists and is no longer a draft.
type NotDraftError struct {
	Number string
	Status string
}

func (e *NotDraftError) Error() string {
	return fmt.Sprintf("licence %q exists and is %s, not a draft", e.Number, e.Status)
}

// Unwrap makes errors.Is(err, ErrConflict) true.
func (e *NotDraftError) Unwrap() error { return ErrConflict }

// UnknownCompanyError: a draft is for a company that is not registered.
type UnknownCompanyError struct{ CompanyID string }

func (e *UnknownCompanyError) Error() string {
	return fmt.Sprintf("company %q is not registered", e.CompanyID)
}

// Unwrap makes errors.Is(err, ErrNotFound) true.
func (e *UnknownCompanyError) Unwrap() error { return ErrNotFound }

// IssueDrafts stores the licences of one quota plan, all in one transaction: each is
// issued when its number is new, and amended to the new terms when a licence of that
// number exists and is still a draft. A licence of that number that is no longer a draft
// fails the whole plan with a *NotDraftError, and a company not registered with an
// *UnknownCompanyError:
// either way no draft of the plan is stored. Every licence must have status "draft".
// effectiveOn is the day an amendment takes effect in the history.
func (s *Store) IssueDrafts(ctx context.Context, ls []Licence, reason string, effectiveOn time.Time) error {
	for _, l := range ls {
		if l.Status != "draft" {
			return fmt.Errorf("IssueDrafts: licence %q has status %q, not draft", l.Number, l.Status)
		}
	}
	// READ COMMITTED with row locks: each existing licence is locked FOR UPDATE before its
	// status is read, so the status checked is the latest committed one and no other
	// transaction can change it before this one commits (the check and the change hold
	// together). Two planners inserting the same new number collide on the primary key;
	// keyRace retries the whole plan, and the next attempt finds the other's draft.
	return s.inTx(ctx, txSpec{iso: pgx.ReadCommitted, keyRace: true}, func(tx pgx.Tx) error {
		for _, l := range ls {
			if err := issueDraftTx(ctx, tx, l, reason, effectiveOn); err != nil {
				return err
			}
		}
		return nil
	})
}

func issueDraftTx(ctx context.Context, tx pgx.Tx, l Licence, reason string, effectiveOn time.Time) error {
	var known bool
	if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM companies WHERE company_id = $1)`, l.CompanyID).Scan(&known); err != nil {
		return err
	}
	if !known {
		return &UnknownCompanyError{CompanyID: l.CompanyID}
	}
	var status string
	err := tx.QueryRow(ctx, `SELECT status FROM licences WHERE licence_number = $1 FOR UPDATE`, l.Number).Scan(&status)
	if errors.Is(err, pgx.ErrNoRows) {
		return issueTx(ctx, tx, l, reason)
	}
	if err != nil {
		return err
	}
	if status != "draft" {
		return &NotDraftError{Number: l.Number, Status: status}
	}
	_, err = amendTx(ctx, tx, Amendment{Licence: l, EffectiveOn: effectiveOn, Reason: reason + " (re-planned)"})
	return err
}
