package store

import (
	"context"
	"errors"
	"fmt"
	"strconv"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/callctx"
)

// StoredCredential is a credential as listed: everything but the secret's hash.
type StoredCredential struct {
	ID        string
	Name      string
	Role      access.Role
	CompanyID string
	CreatedAt time.Time
	CreatedBy string
	ExpiresAt time.Time // zero: never
	RevokedAt time.Time // zero: not revoked
	RevokedBy string
}

// NewCredential is what IssueCredential stores.
type NewCredential struct {
	Name      string
	Role      access.Role
	CompanyID string    // required for a trader, refused for the other roles
	ExpiresAt time.Time // zero: never
}

// check refuses a credential's name, role and company as the table would.
func (c NewCredential) check() error {
	if c.Name == "" || len(c.Name) > 200 {
		return fmt.Errorf("%w: name must be 1 to 200 characters", ErrCredentialInput)
	}
	if _, err := access.ParseRole(string(c.Role)); err != nil {
		return fmt.Errorf("%w: %v", ErrCredentialInput, err)
	}
	if (c.Role == access.RoleTrader) != (c.CompanyID != "") {
		return fmt.Errorf("%w: a trader credential needs a company, and only a trader's may have one", ErrCredentialInput)
	}
	return nil
}

// ErrCredentialInput is wrapped by IssueCredential's refusals of its input.
var ErrCredentialInput = errors.New("credential refused")

// IssueCredential makes a new secret, stores its hash and the credential, writes one
// audit event, and returns the credential with the secret (shown once, stored nowhere).
func (s *Store) IssueCredential(ctx context.Context, c NewCredential) (_ StoredCredential, secret string, err error) {
	defer classifyInto(&err)
	if err := c.check(); err != nil {
		return StoredCredential{}, "", err
	}
	iss, err := access.IssueSecret()
	if err != nil {
		return StoredCredential{}, "", err
	}
	var company, expires any
	if c.CompanyID != "" {
		company = c.CompanyID
	}
	if !c.ExpiresAt.IsZero() {
		expires = c.ExpiresAt
	}
	var out StoredCredential
	// Read committed: one insert and its audit event; nothing read to race on.
	err = s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		var exp *time.Time
		row := tx.QueryRow(ctx, `INSERT INTO credentials (credential_id, name, role, company_id, secret_sha256, created_by, expires_at)
		    VALUES ($1, $2, $3, $4, $5, $6, $7)
		    RETURNING created_at, expires_at`, iss.CredentialID, c.Name, string(c.Role), company, iss.Hash, callctx.Actor(ctx), expires)
		if err := row.Scan(&out.CreatedAt, &exp); err != nil {
			return classify(err, "company", c.CompanyID)
		}
		out.ID, out.Name, out.Role, out.CompanyID, out.CreatedBy = iss.CredentialID, c.Name, c.Role, c.CompanyID, callctx.Actor(ctx)
		if exp != nil {
			out.ExpiresAt = *exp
		}
		return audit(ctx, tx, "issue", "credential", iss.CredentialID, "",
			map[string]any{"name": c.Name, "role": c.Role, "company_id": c.CompanyID, "expires_at": expires})
	})
	if err != nil {
		return StoredCredential{}, "", err
	}
	return out, iss.Secret, nil
}

// RevokeCredential revokes a credential (once: revoking again reports the first
// revocation and writes nothing) with one audit event naming the reason.
func (s *Store) RevokeCredential(ctx context.Context, id, reason string) (_ StoredCredential, err error) {
	defer classifyInto(&err)
	var out StoredCredential
	// Read committed: the UPDATE's row lock orders revocations of the same credential.
	err = s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		tag, err := tx.Exec(ctx, `UPDATE credentials SET revoked_at = now(), revoked_by = $2
		    WHERE credential_id = $1 AND revoked_at IS NULL`, id, callctx.Actor(ctx))
		if err != nil {
			return err
		}
		got, err := credentialRow(tx.QueryRow(ctx, credentialSelect+` WHERE credential_id = $1`, id))
		if errors.Is(err, pgx.ErrNoRows) {
			return fmt.Errorf("credential %s: %w", id, ErrNotFound)
		}
		if err != nil {
			return err
		}
		out = got
		if tag.RowsAffected() == 0 {
			return nil
		}
		return audit(ctx, tx, "revoke", "credential", id, reason, map[string]any{"name": got.Name, "role": got.Role})
	})
	return out, err
}

// ListCredentials lists every credential, newest first; revoked ones only when asked.
func (s *Store) ListCredentials(ctx context.Context, withRevoked bool) ([]StoredCredential, error) {
	return s.ListCredentialsPage(ctx, withRevoked, Page{})
}

// ListCredentialsPage returns one page of ListCredentials: newest first, credentials
// created at the same instant in id order.
func (s *Store) ListCredentialsPage(ctx context.Context, withRevoked bool, p Page) (_ []StoredCredential, err error) {
	defer classifyInto(&err)
	// Creation time descending and id ascending do not make one row comparison: the
	// condition says it in full.
	args := []any{withRevoked}
	cond := "TRUE"
	if p.After != nil {
		if len(p.After) != 2 {
			return nil, fmt.Errorf("page key %q has %d values; the list orders by 2 columns", p.After, len(p.After))
		}
		at, err := time.Parse(time.RFC3339Nano, p.After[0])
		if err != nil {
			return nil, fmt.Errorf("page key %q: %v", p.After, err)
		}
		args = append(args, at, p.After[1])
		cond = "(created_at < $2 OR (created_at = $2 AND credential_id > $3))"
	}
	limit := ""
	if p.Limit > 0 {
		args = append(args, p.Limit)
		limit = " LIMIT $" + strconv.Itoa(len(args))
	}
	rows, err := s.pool.Query(ctx, credentialSelect+` WHERE ($1 OR revoked_at IS NULL) AND `+cond+` ORDER BY created_at DESC, credential_id`+limit, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []StoredCredential
	for rows.Next() {
		c, err := credentialRow(rows)
		if err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

// CountActiveCredentials counts the credentials neither revoked nor expired.
func (s *Store) CountActiveCredentials(ctx context.Context) (n int, err error) {
	defer classifyInto(&err)
	err = s.pool.QueryRow(ctx, `SELECT count(*) FROM credentials
	    WHERE revoked_at IS NULL AND (expires_at IS NULL OR expires_at > now())`).Scan(&n)
	return n, err
}

// CredentialByID implements access.CredentialSource.
func (s *Store) CredentialByID(ctx context.Context, id string) (access.Credential, error) {
	var c access.Credential
	var role string
	var company *string
	var exp, rev *time.Time
	err := s.pool.QueryRow(ctx, `SELECT credential_id, name, role, company_id, secret_sha256, expires_at, revoked_at
	    FROM credentials WHERE credential_id = $1`, id).Scan(&c.ID, &c.Name, &role, &company, &c.Hash, &exp, &rev)
	if errors.Is(err, pgx.ErrNoRows) {
		return access.Credential{}, fmt.Errorf("credential %s: %w", id, access.ErrNoCredential)
	}
	if err != nil {
		return access.Credential{}, classified(err)
	}
	c.Role = access.Role(role)
	if company != nil {
		c.Company = *company
	}
	if exp != nil {
		c.ExpiresAt = *exp
	}
	if rev != nil {
		c.RevokedAt = *rev
	}
	return c, nil
}

const credentialSelect = `SELECT credential_id, name, role, coalesce(company_id, ''), created_at, created_by,
    expires_at, revoked_at, revoked_by FROM credentials`

func credentialRow(r pgx.Row) (StoredCredential, error) {
	var c StoredCredential
	var role string
	var exp, rev *time.Time
	if err := r.Scan(&c.ID, &c.Name, &role, &c.CompanyID, &c.CreatedAt, &c.CreatedBy, &exp, &rev, &c.RevokedBy); err != nil {
		return StoredCredential{}, err
	}
	c.Role = access.Role(role)
	if exp != nil {
		c.ExpiresAt = *exp
	}
	if rev != nil {
		c.RevokedAt = *rev
	}
	return c, nil
}

// EnsureCredential stores a credential whose secret was made elsewhere (serve
// --bootstrap-credential-file) unless it is there already: created says whether it was
// stored now (with one audit event). A credential of that id with another hash is an
// error; one that was revoked stays revoked (StoredCredential.RevokedAt says so).
func (s *Store) EnsureCredential(ctx context.Context, id string, hash []byte, c NewCredential) (_ StoredCredential, created bool, err error) {
	defer classifyInto(&err)
	if err := access.ValidCredentialID(id); err != nil {
		return StoredCredential{}, false, fmt.Errorf("%w: %v", ErrCredentialInput, err)
	}
	if err := c.check(); err != nil {
		return StoredCredential{}, false, err
	}
	var company any
	if c.CompanyID != "" {
		company = c.CompanyID
	}
	var out StoredCredential
	// Read committed: the insert's conflict decides; the row is read back after it.
	err = s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		tag, err := tx.Exec(ctx, `INSERT INTO credentials (credential_id, name, role, company_id, secret_sha256, created_by)
		    VALUES ($1, $2, $3, $4, $5, $6) ON CONFLICT (credential_id) DO NOTHING`,
			id, c.Name, string(c.Role), company, hash, callctx.Actor(ctx))
		if err != nil {
			return err
		}
		var stored []byte
		if err := tx.QueryRow(ctx, `SELECT secret_sha256 FROM credentials WHERE credential_id = $1`, id).Scan(&stored); err != nil {
			return err
		}
		if string(stored) != string(hash) {
			return fmt.Errorf("%w: credential %s exists with another secret", ErrCredentialInput, id)
		}
		if out, err = credentialRow(tx.QueryRow(ctx, credentialSelect+` WHERE credential_id = $1`, id)); err != nil {
			return err
		}
		created = tag.RowsAffected() == 1
		if !created {
			return nil
		}
		return audit(ctx, tx, "issue", "credential", id, "bootstrap credential file",
			map[string]any{"name": c.Name, "role": c.Role, "company_id": c.CompanyID})
	})
	return out, created, err
}
