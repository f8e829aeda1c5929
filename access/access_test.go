package access

import (
	"context"
	"errors"
	"strings"
	"sync/atomic"
	"testing"
	"time"
)

func TestSecretFormat(t *testing.T) {
	iss, err := IssueSecret()
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(iss.Secret, SecretPrefix+iss.CredentialID+"_") || len(iss.Secret) != len(SecretPrefix)+16+1+43 {
		t.Fatalf("secret %q does not have the documented form", iss.Secret)
	}
	if id, err := ParseSecret(iss.Secret); err != nil || id != iss.CredentialID {
		t.Fatalf("ParseSecret = %q, %v", id, err)
	}
	for _, bad := range []string{"", "hvk1_", iss.Secret[:len(iss.Secret)-1], iss.Secret + "A", strings.ToUpper(iss.Secret[:21]) + iss.Secret[21:],
		"hvk2" + iss.Secret[4:], strings.Replace(iss.Secret, "_", "-", 2)} {
		if _, err := ParseSecret(bad); err == nil {
			t.Errorf("ParseSecret(%q) accepted", bad)
		}
	}
	other, _ := IssueSecret()
	if other.Secret == iss.Secret || other.CredentialID == iss.CredentialID {
		t.Fatal("two secrets alike")
	}
}

func TestAllowedDefaultDeny(t *testing.T) {
	if Allowed(RoleOfficer, "/halovet.v1.NewService/Anything") {
		t.Error("a method missing from the table is allowed")
	}
	if Allowed(RoleAnonymous, "/halovet.v1.CatalogueService/ListEntries") {
		t.Error("no credential may list the catalogue")
	}
	if !Allowed(RoleAnonymous, "/grpc.health.v1.Health/Check") {
		t.Error("health must be public")
	}
	if Allowed(RoleTrader, "/halovet.v1.LicensingService/IssueLicence") || Allowed(RoleAuditor, "/halovet.v1.AccessService/RevokeCredential") {
		t.Error("a trader issued a licence or an auditor revoked a credential")
	}
	if Allowed("minister", "/halovet.v1.LicensingService/ListParties") {
		t.Error("an unknown role is allowed")
	}
	if _, err := ParseRole("Minister"); err == nil {
		t.Error("ParseRole accepted an unknown role")
	}
}

type fakeSource struct {
	c     Credential
	reads atomic.Int32
}

func (f *fakeSource) CredentialByID(_ context.Context, id string) (Credential, error) {
	f.reads.Add(1)
	if id != f.c.ID {
		return Credential{}, ErrNoCredential
	}
	return f.c, nil
}

// TestAuthenticatorCacheBoundsRevocation: a revocation in the source is seen once the
// cache entry is older than CacheTTL.
func TestAuthenticatorCacheBoundsRevocation(t *testing.T) {
	iss, _ := IssueSecret()
	now := time.Date(2026, 7, 1, 12, 0, 0, 0, time.UTC)
	src := &fakeSource{c: Credential{ID: iss.CredentialID, Name: "n", Role: RoleReader, Hash: iss.Hash}}
	a := NewAuthenticator(src, AuthOptions{Now: func() time.Time { return now }})
	if _, err := a.Authenticate(context.Background(), iss.Secret); err != nil {
		t.Fatal(err)
	}
	src.c.RevokedAt = now
	now = now.Add(500 * time.Millisecond)
	if _, err := a.Authenticate(context.Background(), iss.Secret); err != nil {
		t.Fatalf("within the TTL the cached credential answers: %v", err)
	}
	now = now.Add(600 * time.Millisecond) // 1.1 s after the first read
	if _, err := a.Authenticate(context.Background(), iss.Secret); !errors.Is(err, ErrUnauthenticated) || !strings.Contains(err.Error(), "revoked") {
		t.Fatalf("after the TTL: %v; want revoked", err)
	}
	if src.reads.Load() != 2 {
		t.Fatalf("source read %d times; want 2", src.reads.Load())
	}
}
