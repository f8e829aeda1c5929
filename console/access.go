package console

import (
	"context"
	"errors"
	"fmt"

	"github.com/halovet/halovet/access"
)

// AccessAuthenticator signs in with the credentials of package access: the secret a
// credential was issued with ('halovet credentials issue').
type AccessAuthenticator struct {
	A *access.Authenticator
}

// Authenticate checks the secret; a refusal wraps ErrBadCredentials and says why
// (malformed, unknown, wrong, expired, revoked).
func (a AccessAuthenticator) Authenticate(ctx context.Context, secret string) (Identity, error) {
	id, err := a.A.Authenticate(ctx, secret)
	if err != nil {
		if errors.Is(err, access.ErrUnauthenticated) {
			return Identity{}, fmt.Errorf("%w: %v", ErrBadCredentials, err)
		}
		return Identity{}, err
	}
	return Identity{CredentialID: id.CredentialID, Name: id.Name, Role: string(id.Role), Company: id.Company}, nil
}

// AccessPolicy is package access's policy table, the one the server's interceptors apply.
type AccessPolicy struct{}

// Allowed reports whether the role may call the method.
func (AccessPolicy) Allowed(role, fullMethod string) bool {
	return access.Allowed(access.Role(role), fullMethod)
}
