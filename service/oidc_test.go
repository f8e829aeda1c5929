package service_test

import (
	"context"
	"crypto/rand"
	"crypto/rsa"
	"encoding/json"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	jose "github.com/go-jose/go-jose/v4"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// TestOIDCBearerTokens: a server configured with an issuer (its key set served by the
// test) admits a token's identity with its role and company scope, audits under its name,
// and refuses a forged token Unauthenticated before any handler.
func TestOIDCBearerTokens(t *testing.T) {
	key, _ := rsa.GenerateKey(rand.Reader, 2048)
	forged, _ := rsa.GenerateKey(rand.Reader, 2048)
	jwks := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, _ *http.Request) {
		_ = json.NewEncoder(w).Encode(jose.JSONWebKeySet{Keys: []jose.JSONWebKey{{Key: &key.PublicKey, KeyID: "k1", Algorithm: "RS256", Use: "sig"}}})
	}))
	t.Cleanup(jwks.Close)
	const issuer = "https://issuer.test.invalid"
	v, err := access.NewTokenVerifier(context.Background(), access.TokenOptions{Issuer: issuer, Audience: "halovet", JWKSURL: jwks.URL})
	if err != nil {
		t.Fatal(err)
	}
	sign := func(k *rsa.PrivateKey, role, company string) string {
		signer, _ := jose.NewSigner(jose.SigningKey{Algorithm: jose.RS256, Key: k}, (&jose.SignerOptions{}).WithHeader("kid", "k1"))
		b, _ := json.Marshal(map[string]any{"iss": issuer, "aud": "halovet", "sub": "s-1", "preferred_username": role + ".oidc",
			"exp": time.Now().Add(time.Hour).Unix(), "halovet_role": role, "halovet_company": company})
		jws, _ := signer.Sign(b)
		s, _ := jws.CompactSerialize()
		return s
	}
	_, conn, st, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{TokenVerifier: v})
	ctx := context.Background()
	officer := withSecret(ctx, sign(key, "officer", ""))
	lic := halovetv1.NewLicensingServiceClient(conn)
	for _, id := range []string{"XA-1", "XA-2"} {
		if _, err := lic.RegisterCompany(officer, &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: id, CountryCode: "XA"}}); err != nil {
			t.Fatalf("RegisterCompany as the OIDC officer: %v", err)
		}
	}
	if got := auditActor(t, st, "company", "XA-1"); got != "officer.oidc" {
		t.Errorf("audit actor %q; want officer.oidc", got)
	}
	cs, err := lic.ListCompanies(withSecret(ctx, sign(key, "trader", "XA-2")), &halovetv1.ListCompaniesRequest{})
	if err != nil || len(cs.GetCompanies()) != 1 || cs.GetCompanies()[0].GetCompanyId() != "XA-2" {
		t.Errorf("ListCompanies as an OIDC trader of XA-2: %v %v; want XA-2 only", cs, err)
	}
	_, err = lic.RegisterCompany(withSecret(ctx, sign(forged, "officer", "")), &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: "XA-3", CountryCode: "XA"}})
	if status.Code(err) != codes.Unauthenticated || !strings.Contains(err.Error(), "not valid") {
		t.Errorf("forged token: %v; want Unauthenticated", err)
	}
}
