package store_test

import (
	"context"
	"errors"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/callctx"
	"github.com/halovet/halovet/store"
)

// asOfficer is a context as the server builds it for an officer's call (invented name).
func asOfficer(ctx context.Context) context.Context {
	return callctx.With(ctx, &callctx.Call{RequestID: "req-1", Caller: callctx.Caller{Subject: "officer.invented", CredentialID: "0123456789abcdef"}})
}

func TestAuditLogRefusesTruncate(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	if err := st.PutCompany(ctx, store.Company{CompanyID: "XA-1", Name: "Invented Co"}); err != nil {
		t.Fatal(err)
	}
	for _, sql := range []string{`TRUNCATE audit_log`, `TRUNCATE audit_log CASCADE`, `TRUNCATE credentials CASCADE`,
		`DELETE FROM audit_chain_head`, `UPDATE audit_log SET detail = '{}'`, `DELETE FROM audit_log`} {
		if _, err := st.Pool().Exec(ctx, sql); err == nil {
			t.Errorf("%s succeeded; the audit trail must refuse it", sql)
		}
	}
	var n int
	if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM audit_log`).Scan(&n); err != nil || n != 1 {
		t.Fatalf("audit rows after the refused statements: %d (err %v), want 1", n, err)
	}
}

func TestAuditActorIsTheIdentityNotTheRequestID(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := asOfficer(context.Background())
	if err := st.PutCompany(ctx, store.Company{CompanyID: "XA-1", Name: "Invented Co"}); err != nil {
		t.Fatal(err)
	}
	evs, _, err := st.ListAuditEvents(context.Background(), store.AuditFilter{Entity: "company", EntityKey: "XA-1"})
	if err != nil || len(evs) != 1 {
		t.Fatalf("events %v, err %v; want 1", evs, err)
	}
	e := evs[0]
	if e.Actor != "officer.invented" || e.CredentialID != "0123456789abcdef" || e.RequestID != "req-1" {
		t.Fatalf("event actor %q credential %q request %q; want the identity's name and credential, the request id apart", e.Actor, e.CredentialID, e.RequestID)
	}
}

func TestCredentialIssueAuthenticateRevoke(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := asOfficer(context.Background())
	if err := st.PutCompany(ctx, store.Company{CompanyID: "XA-1", Name: "Invented Co"}); err != nil {
		t.Fatal(err)
	}
	for name, c := range map[string]store.NewCredential{
		"trader without company":    {Name: "t", Role: access.RoleTrader},
		"customs with company":      {Name: "c", Role: access.RoleCustoms, CompanyID: "XA-1"},
		"unknown role":              {Name: "x", Role: "minister"},
		"empty name":                {Role: access.RoleReader},
		"trader of unknown company": {Name: "t", Role: access.RoleTrader, CompanyID: "XZ-404"},
	} {
		if _, _, err := st.IssueCredential(ctx, c); err == nil {
			t.Errorf("%s: issued; want a refusal", name)
		}
	}
	c, secret, err := st.IssueCredential(ctx, store.NewCredential{Name: "trader.xa1", Role: access.RoleTrader, CompanyID: "XA-1"})
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(secret, access.SecretPrefix+c.ID+"_") {
		t.Fatalf("secret %q does not carry the prefix and id %s", secret, c.ID)
	}
	// Only the hash is stored: the secret appears in no column of the table.
	var leaks int
	if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM credentials c WHERE row_to_json(c)::text LIKE '%' || $1 || '%'`,
		secret[len(access.SecretPrefix)+17:]).Scan(&leaks); err != nil || leaks != 0 {
		t.Fatalf("rows holding the secret: %d (err %v), want 0", leaks, err)
	}
	a := access.NewAuthenticator(st, access.AuthOptions{CacheTTL: -1})
	id, err := a.Authenticate(ctx, secret)
	if err != nil || id.Name != "trader.xa1" || id.Role != access.RoleTrader || id.Company != "XA-1" || id.CredentialID != c.ID {
		t.Fatalf("Authenticate = %+v, %v", id, err)
	}
	wrong := secret[:len(secret)-1] + map[bool]string{true: "B", false: "A"}[strings.HasSuffix(secret, "A")]
	if _, err := a.Authenticate(ctx, wrong); !errors.Is(err, access.ErrUnauthenticated) {
		t.Fatalf("wrong secret: %v; want ErrUnauthenticated", err)
	}
	if _, err := st.RevokeCredential(ctx, c.ID, "left the company"); err != nil {
		t.Fatal(err)
	}
	if _, err := a.Authenticate(ctx, secret); !errors.Is(err, access.ErrUnauthenticated) || !strings.Contains(err.Error(), "revoked") {
		t.Fatalf("revoked: %v; want ErrUnauthenticated saying revoked", err)
	}
	// Expired.
	_, exp, err := st.IssueCredential(ctx, store.NewCredential{Name: "short", Role: access.RoleReader, ExpiresAt: time.Now().Add(-time.Minute)})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := a.Authenticate(ctx, exp); !errors.Is(err, access.ErrUnauthenticated) || !strings.Contains(err.Error(), "expired") {
		t.Fatalf("expired: %v; want ErrUnauthenticated saying expired", err)
	}
	evs, _, err := st.ListAuditEvents(ctx, store.AuditFilter{Entity: "credential", EntityKey: c.ID})
	if err != nil || len(evs) != 2 || evs[0].Action != "issue" || evs[1].Action != "revoke" || evs[1].Reason != "left the company" {
		t.Fatalf("credential events %+v (err %v); want issue then revoke with its reason", evs, err)
	}
}

func TestAuditChainFindsAnAlteredEvent(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := asOfficer(context.Background())
	// Concurrent writers: the chain must still be one line.
	var wg sync.WaitGroup
	for i := range 8 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			if err := st.PutCompany(ctx, store.Company{CompanyID: "XA-" + string(rune('A'+i)), Name: "Invented Co"}); err != nil {
				t.Error(err)
			}
		}()
	}
	wg.Wait()
	rep, err := st.VerifyAuditChain(ctx)
	if err != nil || rep.Events != 8 || len(rep.Broken) != 0 {
		t.Fatalf("untouched chain: %+v, %v; want 8 events, no break", rep, err)
	}
	// Behind the server's back: the superuser disables the trigger and rewrites an event.
	if _, err := st.Pool().Exec(ctx, `ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update`); err != nil {
		t.Fatal(err)
	}
	if _, err := st.Pool().Exec(ctx, `UPDATE audit_log SET actor = 'someone else' WHERE chain_seq = 3`); err != nil {
		t.Fatal(err)
	}
	rep, err = st.VerifyAuditChain(ctx)
	if err != nil || len(rep.Broken) != 1 || rep.Broken[0].Seq != 3 || !strings.Contains(rep.Broken[0].Reason, "altered") {
		t.Fatalf("altered event 3: %+v, %v; want one break at 3", rep, err)
	}
	if _, err := st.Pool().Exec(ctx, `DELETE FROM audit_log WHERE chain_seq IN (5, 8)`); err != nil {
		t.Fatal(err)
	}
	rep, err = st.VerifyAuditChain(ctx)
	if err != nil || len(rep.Broken) != 3 || rep.Broken[1].Seq != 6 || rep.Broken[2].Seq != 8 {
		t.Fatalf("events 5 and 8 deleted: %+v, %v; want breaks at 3, 6 (gap) and 8 (end)", rep, err)
	}
}
