package store

import (
	"context"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
)

// RegisterChannel is the LISTEN/NOTIFY channel on which the database announces every
// committed change to parties, licences and quota lines, amounts drawn included
// (migration 00004: triggers, so a change made by any client is announced).
const RegisterChannel = "halovet_register"

// Register announcements, as parsed by ParseRegisterPayload.
type RegisterChange struct {
	All     bool   // reload everything
	Parties bool   // some country's settings
	Licence string // this licence's terms, status, quota lines or amounts drawn
}

// ParseRegisterPayload reads one announcement's payload; a payload it does not know asks
// for everything to be reloaded.
func ParseRegisterPayload(p string) RegisterChange {
	switch {
	case p == "parties":
		return RegisterChange{Parties: true}
	case strings.HasPrefix(p, "licence:") && len(p) > len("licence:"):
		return RegisterChange{Licence: p[len("licence:"):]}
	}
	return RegisterChange{All: true}
}

// ListenRegister calls ready once it listens on RegisterChannel, then changed after
// every announced change, until ctx is done or the connection fails. It holds one
// connection of its own (not from the pool) while it listens. A caller that keeps a copy of the register reloads it on
// ready: what was announced while nobody listened is lost.
func (s *Store) ListenRegister(ctx context.Context, ready func(), changed func(RegisterChange)) error {
	return s.listen(ctx, RegisterChannel, ready, func(payload string) { changed(ParseRegisterPayload(payload)) })
}

// listen calls ready once LISTEN channel holds, then notified with each announcement's
// payload, until ctx is done or the connection fails. It listens on a connection of its
// own, outside the pool, so that listeners never take connections from the calls.
func (s *Store) listen(ctx context.Context, channel string, ready func(), notified func(payload string)) (err error) {
	defer classifyInto(&err)
	conn, err := pgx.ConnectConfig(ctx, s.pool.Config().ConnConfig.Copy())
	if err != nil {
		return err
	}
	defer func() {
		closeCtx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		_ = conn.Close(closeCtx)
	}()
	if _, err := conn.Exec(ctx, "LISTEN "+channel); err != nil {
		return err
	}
	ready()
	for {
		n, err := conn.WaitForNotification(ctx)
		if err != nil {
			return err
		}
		notified(n.Payload)
	}
}

// LicencesByNumber returns those of the numbered licences that exist, with their quota
// lines and balances, in number order.
func (s *Store) LicencesByNumber(ctx context.Context, numbers []string) ([]Licence, error) {
	return s.queryLicences(ctx, `SELECT `+licenceCols+` FROM licences
	    WHERE licence_number = ANY($1) ORDER BY licence_number`, numbers)
}
