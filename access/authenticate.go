package access

import (
	"context"
	"errors"
	"fmt"
	"sync"
	"time"
)

// ErrUnauthenticated wraps every refusal of a presented credential; the error's text is
// the reason, fit to send to the caller.
var ErrUnauthenticated = errors.New("unauthenticated")

// ErrNoCredential is returned by a CredentialSource for an id it does not hold.
var ErrNoCredential = errors.New("no such credential")

// Credential is a stored credential as the authenticator needs it.
type Credential struct {
	ID        string
	Name      string
	Role      Role
	Company   string
	Hash      []byte // SHA-256 of the secret
	ExpiresAt time.Time
	RevokedAt time.Time // zero while not revoked
}

// CredentialSource reads credentials by id (package store implements it).
type CredentialSource interface {
	// CredentialByID returns the credential, or an error wrapping ErrNoCredential.
	CredentialByID(ctx context.Context, id string) (Credential, error)
}

// AuthOptions tune an Authenticator.
type AuthOptions struct {
	// CacheTTL bounds how long a credential read from the source is used before it is
	// read again (a revocation is seen within it); 0 means 1 s, negative no cache.
	CacheTTL time.Duration
	// Now is the clock; nil means time.Now.
	Now func() time.Time
}

// Authenticator turns presented secrets into identities.
type Authenticator struct {
	src  CredentialSource
	ttl  time.Duration
	now  func() time.Time
	mu   sync.Mutex
	seen map[string]cached
}

type cached struct {
	c    Credential
	err  error
	read time.Time
}

// NewAuthenticator authenticates against src.
func NewAuthenticator(src CredentialSource, o AuthOptions) *Authenticator {
	if o.CacheTTL == 0 {
		o.CacheTTL = time.Second
	}
	if o.Now == nil {
		o.Now = time.Now
	}
	return &Authenticator{src: src, ttl: o.CacheTTL, now: o.Now, seen: map[string]cached{}}
}

// maxCached bounds the cache; it is emptied when full (a flood of unknown ids).
const maxCached = 10000

func unauth(format string, args ...any) error {
	return fmt.Errorf("%w: "+format, append([]any{ErrUnauthenticated}, args...)...)
}

// Authenticate checks a presented secret and returns its identity. A refusal wraps
// ErrUnauthenticated and says why (malformed, unknown or wrong secret, expired, revoked);
// other errors (the source failing) do not.
func (a *Authenticator) Authenticate(ctx context.Context, secret string) (Identity, error) {
	id, err := ParseSecret(secret)
	if err != nil {
		return Identity{}, fmt.Errorf("%w: %v", ErrUnauthenticated, err)
	}
	c, err := a.lookup(ctx, id)
	if errors.Is(err, ErrNoCredential) {
		return Identity{}, unauth("credential %s is not known, or the secret is wrong", id)
	}
	if err != nil {
		return Identity{}, err
	}
	if !secretMatches(secret, c.Hash) {
		return Identity{}, unauth("credential %s is not known, or the secret is wrong", id)
	}
	now := a.now()
	if !c.RevokedAt.IsZero() {
		return Identity{}, unauth("credential %s (%s) was revoked at %s", id, c.Name, c.RevokedAt.UTC().Format(time.RFC3339))
	}
	if !c.ExpiresAt.IsZero() && !now.Before(c.ExpiresAt) {
		return Identity{}, unauth("credential %s (%s) expired at %s", id, c.Name, c.ExpiresAt.UTC().Format(time.RFC3339))
	}
	return Identity{CredentialID: c.ID, Name: c.Name, Role: c.Role, Company: c.Company, Via: "credential"}, nil
}

func (a *Authenticator) lookup(ctx context.Context, id string) (Credential, error) {
	now := a.now()
	if a.ttl > 0 {
		a.mu.Lock()
		e, ok := a.seen[id]
		a.mu.Unlock()
		if ok && now.Sub(e.read) < a.ttl && now.Sub(e.read) >= 0 {
			return e.c, e.err
		}
	}
	c, err := a.src.CredentialByID(ctx, id)
	if err != nil && !errors.Is(err, ErrNoCredential) {
		return Credential{}, err // not cached: the source failed
	}
	if a.ttl > 0 {
		a.mu.Lock()
		if len(a.seen) >= maxCached {
			a.seen = map[string]cached{}
		}
		a.seen[id] = cached{c: c, err: err, read: now}
		a.mu.Unlock()
	}
	return c, err
}

// Forget drops a credential from the cache (this replica revoked it).
func (a *Authenticator) Forget(id string) {
	a.mu.Lock()
	delete(a.seen, id)
	a.mu.Unlock()
}
