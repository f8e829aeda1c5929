package access

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/coreos/go-oidc/v3/oidc"
)

// TokenOptions configure the checking of OpenID Connect bearer tokens (ID tokens or
// JWT access tokens of the configured issuer).
type TokenOptions struct {
	// Issuer is the issuer URL; the token's "iss" must be exactly it.
	Issuer string
	// Audience is the "aud" the token must carry (the client id halovet is known by).
	Audience string
	// JWKSURL is the issuer's key set; empty: found by discovery
	// (Issuer + "/.well-known/openid-configuration").
	JWKSURL string
	// RoleClaim names the claim holding the halovet role (default "halovet_role").
	RoleClaim string
	// CompanyClaim names the claim holding a trader's company (default "halovet_company").
	CompanyClaim string
	// Now is the clock for expiry; nil means time.Now.
	Now func() time.Time
}

// TokenVerifier turns OpenID Connect bearer tokens into identities.
type TokenVerifier struct {
	v    *oidc.IDTokenVerifier
	opts TokenOptions
}

// NewTokenVerifier prepares the verifier; with discovery it asks the issuer now.
func NewTokenVerifier(ctx context.Context, o TokenOptions) (*TokenVerifier, error) {
	if o.Issuer == "" || o.Audience == "" {
		return nil, errors.New("an OpenID Connect issuer needs both the issuer URL and the audience")
	}
	if o.RoleClaim == "" {
		o.RoleClaim = "halovet_role"
	}
	if o.CompanyClaim == "" {
		o.CompanyClaim = "halovet_company"
	}
	if o.Now == nil {
		o.Now = time.Now
	}
	cfg := &oidc.Config{ClientID: o.Audience, Now: o.Now, SupportedSigningAlgs: []string{oidc.RS256, oidc.ES256, oidc.PS256, oidc.EdDSA}}
	var v *oidc.IDTokenVerifier
	if o.JWKSURL != "" {
		v = oidc.NewVerifier(o.Issuer, oidc.NewRemoteKeySet(context.WithoutCancel(ctx), o.JWKSURL), cfg)
	} else {
		p, err := oidc.NewProvider(ctx, o.Issuer)
		if err != nil {
			return nil, fmt.Errorf("OpenID Connect discovery at %s: %w", o.Issuer, err)
		}
		v = p.VerifierContext(context.WithoutCancel(ctx), cfg)
	}
	return &TokenVerifier{v: v, opts: o}, nil
}

// LooksLikeToken reports whether a bearer value has the form of a JWT (three
// base64url parts) rather than a halovet secret.
func LooksLikeToken(bearer string) bool {
	return !strings.HasPrefix(bearer, SecretPrefix) && strings.Count(bearer, ".") == 2
}

// Verify checks a token's signature, issuer, audience and expiry and reads the identity
// from its claims: the name is "preferred_username" (else "sub") with the issuer's
// subject as credential id ("oidc:" + sub), the role from RoleClaim, a trader's company
// from CompanyClaim. Refusals wrap ErrUnauthenticated with the reason.
func (t *TokenVerifier) Verify(ctx context.Context, raw string) (Identity, error) {
	tok, err := t.v.Verify(ctx, raw)
	if err != nil {
		var exp *oidc.TokenExpiredError
		if errors.As(err, &exp) {
			return Identity{}, unauth("the bearer token expired at %s", exp.Expiry.UTC().Format(time.RFC3339))
		}
		return Identity{}, unauth("the bearer token is not valid: %v", err)
	}
	var claims map[string]any
	if err := tok.Claims(&claims); err != nil {
		return Identity{}, unauth("the bearer token's claims do not read: %v", err)
	}
	str := func(k string) string { s, _ := claims[k].(string); return s }
	roleText := str(t.opts.RoleClaim)
	if roleText == "" {
		return Identity{}, unauth("the bearer token carries no %q claim naming a halovet role", t.opts.RoleClaim)
	}
	role, err := ParseRole(roleText)
	if err != nil {
		return Identity{}, unauth("the bearer token's %q claim: %v", t.opts.RoleClaim, err)
	}
	company := str(t.opts.CompanyClaim)
	if (role == RoleTrader) != (company != "") {
		return Identity{}, unauth("the bearer token's %q claim: a trader needs one company, and only a trader may have one", t.opts.CompanyClaim)
	}
	name := str("preferred_username")
	if name == "" {
		name = tok.Subject
	}
	return Identity{CredentialID: "oidc:" + tok.Subject, Name: name, Role: role, Company: company, Via: "oidc"}, nil
}
