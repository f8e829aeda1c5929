package access

import (
	"context"
	"crypto/rand"
	"crypto/rsa"
	"encoding/json"
	"errors"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	jose "github.com/go-jose/go-jose/v4"
)

// testIssuer serves a key set (and discovery) and signs tokens with its key; another key
// of the same id signs forgeries.
type testIssuer struct {
	srv          *httptest.Server
	key, forgery *rsa.PrivateKey
}

func newTestIssuer(t *testing.T) *testIssuer {
	t.Helper()
	iss := &testIssuer{}
	var err error
	if iss.key, err = rsa.GenerateKey(rand.Reader, 2048); err != nil {
		t.Fatal(err)
	}
	if iss.forgery, err = rsa.GenerateKey(rand.Reader, 2048); err != nil {
		t.Fatal(err)
	}
	mux := http.NewServeMux()
	mux.HandleFunc("/keys", func(w http.ResponseWriter, _ *http.Request) {
		_ = json.NewEncoder(w).Encode(jose.JSONWebKeySet{Keys: []jose.JSONWebKey{{Key: &iss.key.PublicKey, KeyID: "k1", Algorithm: "RS256", Use: "sig"}}})
	})
	mux.HandleFunc("/.well-known/openid-configuration", func(w http.ResponseWriter, _ *http.Request) {
		_ = json.NewEncoder(w).Encode(map[string]any{"issuer": iss.srv.URL, "jwks_uri": iss.srv.URL + "/keys",
			"id_token_signing_alg_values_supported": []string{"RS256"}})
	})
	iss.srv = httptest.NewServer(mux)
	t.Cleanup(iss.srv.Close)
	return iss
}

func (iss *testIssuer) sign(t *testing.T, key *rsa.PrivateKey, claims map[string]any) string {
	t.Helper()
	signer, err := jose.NewSigner(jose.SigningKey{Algorithm: jose.RS256, Key: key}, (&jose.SignerOptions{}).WithHeader("kid", "k1"))
	if err != nil {
		t.Fatal(err)
	}
	b, _ := json.Marshal(claims)
	jws, err := signer.Sign(b)
	if err != nil {
		t.Fatal(err)
	}
	s, err := jws.CompactSerialize()
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// TestOIDCTokens: a token of the configured issuer and audience, signed by a key of its
// key set, gives the identity in its claims; expired, foreign-audience, foreign-issuer,
// forged and role-less tokens are refused with the reason.
func TestOIDCTokens(t *testing.T) {
	iss := newTestIssuer(t)
	now := time.Date(2026, 7, 1, 12, 0, 0, 0, time.UTC)
	ctx := context.Background()
	for _, discovery := range []bool{false, true} {
		o := TokenOptions{Issuer: iss.srv.URL, Audience: "halovet", Now: func() time.Time { return now }}
		if !discovery {
			o.JWKSURL = iss.srv.URL + "/keys"
		}
		v, err := NewTokenVerifier(ctx, o)
		if err != nil {
			t.Fatal(err)
		}
		claims := func(change func(map[string]any)) map[string]any {
			c := map[string]any{"iss": iss.srv.URL, "aud": "halovet", "sub": "u-123", "preferred_username": "trader.oidc (invented)",
				"exp": now.Add(time.Hour).Unix(), "iat": now.Add(-time.Minute).Unix(), "halovet_role": "trader", "halovet_company": "XA-1"}
			if change != nil {
				change(c)
			}
			return c
		}
		tok := iss.sign(t, iss.key, claims(nil))
		if !LooksLikeToken(tok) {
			t.Fatal("a JWT does not look like a token")
		}
		id, err := v.Verify(ctx, tok)
		if err != nil || id.Name != "trader.oidc (invented)" || id.Role != RoleTrader || id.Company != "XA-1" || id.CredentialID != "oidc:u-123" {
			t.Fatalf("discovery %v: Verify = %+v, %v", discovery, id, err)
		}
		for _, tc := range []struct {
			name string
			tok  string
			want string
		}{
			{"expired", iss.sign(t, iss.key, claims(func(c map[string]any) { c["exp"] = now.Add(-time.Minute).Unix() })), "expired"},
			{"another audience", iss.sign(t, iss.key, claims(func(c map[string]any) { c["aud"] = "someone-else" })), "not valid"},
			{"another issuer", iss.sign(t, iss.key, claims(func(c map[string]any) { c["iss"] = "https://issuer.invalid" })), "not valid"},
			{"forged", iss.sign(t, iss.forgery, claims(nil)), "not valid"},
			{"truncated", tok[:len(tok)-10], "not valid"},
			{"no role", iss.sign(t, iss.key, claims(func(c map[string]any) { delete(c, "halovet_role") })), "halovet_role"},
			{"unknown role", iss.sign(t, iss.key, claims(func(c map[string]any) { c["halovet_role"] = "minister" })), "not one of"},
			{"trader without company", iss.sign(t, iss.key, claims(func(c map[string]any) { delete(c, "halovet_company") })), "needs one company"},
		} {
			_, err := v.Verify(ctx, tc.tok)
			if !errors.Is(err, ErrUnauthenticated) || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("discovery %v, %s: %v; want ErrUnauthenticated saying %q", discovery, tc.name, err, tc.want)
			}
		}
	}
	if _, err := NewTokenVerifier(ctx, TokenOptions{Issuer: iss.srv.URL}); err == nil {
		t.Error("a verifier without an audience was made")
	}
}
