package service_test

import (
	"context"
	"io"
	"net"
	"net/url"
	"sync"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/metadata"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

// Integration tests of what a call carries from the interceptors down to the store (the
// request id and caller in the audit trail) and of how a lost database is answered. The
// registry is the invented one of shipment_test.go.

// loseDatabase takes the server's database away: no new connection is accepted, and
// every open one (the pool's, the catalogue listener's) is terminated, as when the
// database server goes down or fails over.
func loseDatabase(t *testing.T, st *store.Store) {
	t.Helper()
	ctx := context.Background()
	var db string
	if err := st.Pool().QueryRow(ctx, `SELECT current_database()`).Scan(&db); err != nil {
		t.Fatal(err)
	}
	admin, err := pgx.Connect(ctx, pgtest.AdminURL(t))
	if err != nil {
		t.Fatalf("connect as admin: %v", err)
	}
	defer func() { _ = admin.Close(ctx) }()
	if _, err := admin.Exec(ctx, `ALTER DATABASE `+pgx.Identifier{db}.Sanitize()+` ALLOW_CONNECTIONS false`); err != nil {
		t.Fatal(err)
	}
	if _, err := admin.Exec(ctx, `SELECT pg_terminate_backend(pid) FROM pg_stat_activity
	    WHERE datname = $1 AND pid <> pg_backend_pid()`, db); err != nil {
		t.Fatal(err)
	}
}

// cutProxy forwards TCP connections to a database server until cut, when it closes
// every connection at once without a word from PostgreSQL: what the server sees when the
// database host or the network between them goes away.
type cutProxy struct {
	lis    net.Listener
	target string
	mu     sync.Mutex
	conns  []net.Conn
}

func newCutProxy(t *testing.T, target string) *cutProxy {
	t.Helper()
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	p := &cutProxy{lis: lis, target: target}
	t.Cleanup(p.cut)
	go func() {
		for {
			c, err := lis.Accept()
			if err != nil {
				return
			}
			d, err := net.Dial("tcp", target)
			if err != nil {
				_ = c.Close()
				continue
			}
			p.mu.Lock()
			p.conns = append(p.conns, c, d)
			p.mu.Unlock()
			go func() { _, _ = io.Copy(d, c) }()
			go func() { _, _ = io.Copy(c, d) }()
		}
	}()
	return p
}

func (p *cutProxy) cut() {
	_ = p.lis.Close()
	p.mu.Lock()
	defer p.mu.Unlock()
	for _, c := range p.conns {
		_ = c.Close()
	}
	p.conns = nil
}

// TestRecordStreamAnswersUnavailableWhenTheDatabaseGoesAway: a recording stream whose
// database connection is lost while a batch is being written ends with Unavailable
// (which clients' retry policies retry), not Internal. The server reaches PostgreSQL
// through a proxy; the batch's transaction is held on a licence row lock taken directly,
// and the proxy is cut while it waits.
func TestRecordStreamAnswersUnavailableWhenTheDatabaseGoesAway(t *testing.T) {
	direct := pgtest.NewDatabase(t, "halovet_service", migrateServiceDB)
	u, err := url.Parse(direct)
	if err != nil {
		t.Fatal(err)
	}
	proxy := newCutProxy(t, u.Host)
	u.Host = proxy.lis.Addr().String()
	conn, _, _ := startServerOn(t, u.String(), service.Options{})
	shipRegistry(t, conn)
	ctx := context.Background()
	stream, err := halovetv1.NewShipmentServiceClient(conn).RecordShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: shipRecord("lost-1")}); err != nil {
		t.Fatal(err)
	}
	if first, err := stream.Recv(); err != nil || !first.GetVerdict().GetRecorded() {
		t.Fatalf("first record: %v, %v; want it recorded", first, err)
	}

	holder, err := pgx.Connect(ctx, direct)
	if err != nil {
		t.Fatal(err)
	}
	defer func() { _ = holder.Close(ctx) }()
	tx, err := holder.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer func() { _ = tx.Rollback(ctx) }()
	if _, err := tx.Exec(ctx, `SELECT 1 FROM licences WHERE licence_number = $1 FOR UPDATE`, shipLicence); err != nil {
		t.Fatal(err)
	}
	if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: shipRecord("lost-2")}); err != nil {
		t.Fatal(err)
	}
	waiting := false
	for range 1000 {
		if err := holder.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM pg_stat_activity
		    WHERE datname = current_database() AND wait_event_type = 'Lock')`).Scan(&waiting); err != nil {
			t.Fatal(err)
		}
		if waiting {
			break
		}
		time.Sleep(10 * time.Millisecond)
	}
	if !waiting {
		t.Fatal("the batch's transaction never waited for the licence lock")
	}
	proxy.cut()

	resp, err := stream.Recv()
	if err == nil {
		t.Fatalf("after the database connection was lost the stream answered %v; want an Unavailable error", resp)
	}
	if got := status.Code(err); got != codes.Unavailable {
		t.Fatalf("stream ended with %v (%v); want Unavailable", got, err)
	}
}

// TestUnaryCallAnswersUnavailableWhenTheDatabaseGoesAway: the same for a unary read.
func TestUnaryCallAnswersUnavailableWhenTheDatabaseGoesAway(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	loseDatabase(t, st)
	_, err := halovetv1.NewLicensingServiceClient(conn).GetLicence(context.Background(),
		&halovetv1.GetLicenceRequest{LicenceNumber: shipLicence})
	if got := status.Code(err); got != codes.Unavailable {
		t.Fatalf("GetLicence without a database: %v (%v); want Unavailable", got, err)
	}
}

// auditActor returns the actor of the one audit row of entity/key.
func auditActor(t *testing.T, st *store.Store, entity, key string) string {
	t.Helper()
	var actors []string
	rows, err := st.Pool().Query(context.Background(),
		`SELECT actor FROM audit_log WHERE entity = $1 AND entity_key = $2 ORDER BY audit_id`, entity, key)
	if err != nil {
		t.Fatal(err)
	}
	actors, err = pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		t.Fatal(err)
	}
	if len(actors) != 1 {
		t.Fatalf("audit rows of %s %s: %q; want one", entity, key, actors)
	}
	return actors[0]
}

func registerCompany(ctx context.Context, conn *grpc.ClientConn, id string, header *metadata.MD) error {
	_, err := halovetv1.NewLicensingServiceClient(conn).RegisterCompany(ctx, &halovetv1.RegisterCompanyRequest{
		Company: &halovetv1.Company{CompanyId: id, Name: "Invented trader " + id, CountryCode: "XA"}}, grpc.Header(header))
	return err
}

// TestAuditActorIsTheRequestIDReturned: the audit row of a write names the caller as the
// server established it (here the open-access officer) and, apart, the request id the
// caller got back in the x-request-id response header; a request id the caller sends
// never becomes part of the actor.
func TestAuditActorIsTheRequestIDReturned(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	ctx := context.Background()

	cases := []struct {
		name, company, sent string
		keepsSent           bool
	}{
		{"the server picks the request id", "XA-9001", "", false},
		{"the caller's request id is kept", "XA-9002", "batch-2026.07:import-17", true},
		{"an unacceptable request id is replaced", "XA-9003", "two words", false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			callCtx := ctx
			if tc.sent != "" {
				callCtx = metadata.AppendToOutgoingContext(ctx, "x-request-id", tc.sent)
			}
			var header metadata.MD
			if err := registerCompany(callCtx, conn, tc.company, &header); err != nil {
				t.Fatalf("RegisterCompany: %v", err)
			}
			ids := header.Get("x-request-id")
			if len(ids) != 1 || ids[0] == "" {
				t.Fatalf("x-request-id response header: %q; want one id", ids)
			}
			if tc.keepsSent != (ids[0] == tc.sent) {
				t.Fatalf("request id %q returned for %q sent; keeps the caller's: %v, want %v", ids[0], tc.sent, ids[0] == tc.sent, tc.keepsSent)
			}
			if got, want := auditActor(t, st, "company", tc.company), "open-access"; got != want {
				t.Fatalf("audit actor %q; want %q", got, want)
			}
			var rid string
			if err := st.Pool().QueryRow(ctx, `SELECT request_id FROM audit_log WHERE entity = 'company' AND entity_key = $1`, tc.company).Scan(&rid); err != nil || rid != ids[0] {
				t.Fatalf("audit request id %q (err %v); want %q", rid, err, ids[0])
			}
		})
	}
}

// TestAuditActorNamesTheCredentialHolder: a write made with a credential is audited under
// the credential's name and id; the caller's x-request-id (here a would-be actor name) is
// kept only as the request id.
func TestAuditActorNamesTheCredentialHolder(t *testing.T) {
	_, conn, st, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{})
	secret := issueTestCredential(t, st, "officer.invented", access.RoleOfficer, "")
	ctx := metadata.AppendToOutgoingContext(withSecret(context.Background(), secret), "x-request-id", "api:minister-of-environment")
	var header metadata.MD
	if _, err := halovetv1.NewLicensingServiceClient(conn).PutParty(ctx, &halovetv1.PutPartyRequest{Party: &halovetv1.Party{
		CountryCode: "XA", Name: "Xandria (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1}}, grpc.Header(&header)); err != nil {
		t.Fatalf("PutParty with the officer's credential: %v", err)
	}
	if got, want := auditActor(t, st, "party", "XA"), "officer.invented"; got != want {
		t.Fatalf("audit actor %q; want %q", got, want)
	}
	id, _ := access.ParseSecret(secret)
	var cred, rid string
	if err := st.Pool().QueryRow(context.Background(), `SELECT credential_id, request_id FROM audit_log WHERE entity = 'party'`).Scan(&cred, &rid); err != nil {
		t.Fatal(err)
	}
	if cred != id || rid != "api:minister-of-environment" {
		t.Fatalf("audit credential %q request %q; want %q and the caller's request id", cred, rid, id)
	}
}
