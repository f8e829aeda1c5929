package service_test

import (
	"context"
	"errors"
	"io"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/credentials/insecure"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	"google.golang.org/grpc/metadata"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/reflect/protoreflect"
	"google.golang.org/protobuf/reflect/protoregistry"
	"google.golang.org/protobuf/types/known/timestamppb"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

// secretCreds sends a credential secret with every call (plaintext allowed: loopback tests).
type secretCreds string

func (s secretCreds) GetRequestMetadata(context.Context, ...string) (map[string]string, error) {
	return map[string]string{"authorization": "Bearer " + string(s)}, nil
}
func (secretCreds) RequireTransportSecurity() bool { return false }

// dialAs is a new connection to the server behind conn that presents secret.
func dialAs(t *testing.T, conn *grpc.ClientConn, secret string) *grpc.ClientConn {
	t.Helper()
	c, err := grpc.NewClient(conn.Target(), append(noiseScan(t), grpc.WithTransportCredentials(insecure.NewCredentials()), grpc.WithPerRPCCredentials(secretCreds(secret)))...)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = c.Close() })
	return c
}

// TestPolicyCoversEveryRegisteredMethod: every method the server registers (from its
// service info) has a row in the policy table, and every row names a registered method.
// The proto descriptors agree: every method of every halovet service is registered.
func TestPolicyCoversEveryRegisteredMethod(t *testing.T) {
	srv, _, _, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{})
	registered := map[string]bool{}
	for _, m := range srv.Methods() {
		registered[m] = true
		if _, ok := access.Policy[m]; !ok {
			t.Errorf("method %s is registered but missing from access.Policy (it is refused to everyone until it has a row)", m)
		}
	}
	for m := range access.Policy {
		if !registered[m] {
			t.Errorf("access.Policy row %s names no registered method", m)
		}
	}
	n := 0
	protoregistry.GlobalFiles.RangeFilesByPackage("halovet.v1", func(fd protoreflect.FileDescriptor) bool {
		for i := 0; i < fd.Services().Len(); i++ {
			sd := fd.Services().Get(i)
			for j := 0; j < sd.Methods().Len(); j++ {
				full := "/" + string(sd.FullName()) + "/" + string(sd.Methods().Get(j).Name())
				n++
				if !registered[full] {
					t.Errorf("%s is in the descriptors but not registered", full)
				}
			}
		}
		return true
	})
	if n < 30 {
		t.Fatalf("found %d halovet methods in the descriptors; the registry is not loaded", n)
	}
}

// callEmpty calls method with an empty request (a stream: one empty message, then the
// close) and returns the status code of the outcome.
func callEmpty(ctx context.Context, t *testing.T, conn *grpc.ClientConn, method string) codes.Code {
	t.Helper()
	svc, name, _ := strings.Cut(strings.TrimPrefix(method, "/"), "/")
	d, err := protoregistry.GlobalFiles.FindDescriptorByName(protoreflect.FullName(svc))
	if err != nil {
		t.Fatalf("%s: %v", method, err)
	}
	md := d.(protoreflect.ServiceDescriptor).Methods().ByName(protoreflect.Name(name))
	in, err := protoregistry.GlobalTypes.FindMessageByName(md.Input().FullName())
	if err != nil {
		t.Fatalf("%s input: %v", method, err)
	}
	out, err := protoregistry.GlobalTypes.FindMessageByName(md.Output().FullName())
	if err != nil {
		t.Fatalf("%s output: %v", method, err)
	}
	ctx, cancel := context.WithTimeout(ctx, 10*time.Second)
	defer cancel()
	if !md.IsStreamingClient() && !md.IsStreamingServer() {
		return status.Code(conn.Invoke(ctx, method, in.New().Interface(), out.New().Interface()))
	}
	st, err := conn.NewStream(ctx, &grpc.StreamDesc{ServerStreams: md.IsStreamingServer(), ClientStreams: md.IsStreamingClient()}, method)
	if err != nil {
		return status.Code(err)
	}
	if err := st.SendMsg(in.New().Interface()); err != nil && !errors.Is(err, io.EOF) {
		return status.Code(err)
	}
	_ = st.CloseSend()
	if err := st.RecvMsg(out.New().Interface()); err != nil {
		if errors.Is(err, io.EOF) {
			return codes.OK
		}
		return status.Code(err)
	}
	return codes.OK // a first answer came back: the call was let through
}

// TestEveryMethodUnderEveryRole calls every registered method with every role and with no
// credential, and compares the status with the policy table: refused methods answer
// Unauthenticated (no credential) or PermissionDenied (a role without the grant) and
// reach no handler; granted ones answer anything else (an empty request is mostly
// InvalidArgument or NotFound, from the handler).
func TestEveryMethodUnderEveryRole(t *testing.T) {
	srv, conn, st, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{})
	officer := dialAs(t, conn, issueTestCredential(t, st, "officer.invented", access.RoleOfficer, ""))
	shipRegistry(t, officer)
	conns := map[access.Role]*grpc.ClientConn{access.RoleAnonymous: conn, access.RoleOfficer: officer}
	for _, r := range access.Roles[1:] {
		company := ""
		if r == access.RoleTrader {
			company = shipCompany
		}
		conns[r] = dialAs(t, conn, issueTestCredential(t, st, string(r)+".invented", r, company))
	}
	for _, m := range srv.Methods() {
		for _, r := range append([]access.Role{access.RoleAnonymous}, access.Roles...) {
			got := callEmpty(context.Background(), t, conns[r], m)
			name := string(r)
			if r == access.RoleAnonymous {
				name = "no credential"
			}
			switch {
			case !access.Allowed(r, m) && r == access.RoleAnonymous:
				if got != codes.Unauthenticated {
					t.Errorf("%s as %s: %v; the table refuses it: want Unauthenticated", m, name, got)
				}
			case !access.Allowed(r, m):
				if got != codes.PermissionDenied {
					t.Errorf("%s as %s: %v; the table refuses it: want PermissionDenied", m, name, got)
				}
			default:
				if got == codes.Unauthenticated || got == codes.PermissionDenied {
					t.Errorf("%s as %s: %v; the table grants it", m, name, got)
				}
			}
		}
	}
}

// TestBadCredentialsAreUnauthenticated: a malformed, unknown, wrong, expired or revoked
// credential is refused Unauthenticated with the reason, even for a public method, and
// writes nothing.
func TestBadCredentialsAreUnauthenticated(t *testing.T) {
	_, conn, st, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{})
	ctx := context.Background()
	good := issueTestCredential(t, st, "officer.invented", access.RoleOfficer, "")
	revoked := issueTestCredential(t, st, "officer.revoked", access.RoleOfficer, "")
	rid, _ := access.ParseSecret(revoked)
	if _, err := st.RevokeCredential(ctx, rid, "test"); err != nil {
		t.Fatal(err)
	}
	c, expired, err := st.IssueCredential(ctx, storeCredential("officer.expired", time.Now().Add(-time.Hour)))
	if err != nil {
		t.Fatal(err)
	}
	_ = c
	wrong := good[:len(good)-2] + "xx"
	if wrong == good {
		wrong = good[:len(good)-2] + "yy"
	}
	unknown := access.SecretPrefix + "00000000000000aa_" + good[len(good)-43:]
	cases := []struct{ name, header, reason string }{
		{"not bearer", "Basic abc", "Bearer"},
		{"malformed", "Bearer hello", "malformed"},
		{"a JWT, no issuer configured", "Bearer eyJhbGciOiJSUzI1NiJ9.e30.c2ln", "OpenID Connect"},
		{"truncated", "Bearer " + good[:len(good)-5], "malformed"},
		{"wrong secret", "Bearer " + wrong, "secret is wrong"},
		{"unknown id", "Bearer " + unknown, "not known"},
		{"expired", "Bearer " + expired, "expired"},
		{"revoked", "Bearer " + revoked, "revoked"},
	}
	lic := halovetv1.NewLicensingServiceClient(conn)
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			cctx := metadataCtx(ctx, tc.header)
			_, err := lic.RegisterCompany(cctx, &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: "XA-77", CountryCode: "XA"}})
			if status.Code(err) != codes.Unauthenticated || !strings.Contains(status.Convert(err).Message(), tc.reason) {
				t.Fatalf("RegisterCompany: %v; want Unauthenticated saying %q", err, tc.reason)
			}
			_, err = halovetv1.NewCatalogueServiceClient(conn).ListEntries(cctx, &halovetv1.ListEntriesRequest{})
			if status.Code(err) != codes.Unauthenticated {
				t.Fatalf("ListEntries: %v; want Unauthenticated", err)
			}
		})
	}
	var n int
	if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM companies`).Scan(&n); err != nil || n != 0 {
		t.Fatalf("companies after refused calls: %d (err %v); want 0", n, err)
	}
	if _, err := lic.RegisterCompany(withSecret(ctx, good), &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: "XA-77", CountryCode: "XA"}}); err != nil {
		t.Fatalf("with the good credential: %v", err)
	}
}

// fieldOf is the first field violation of a status, "" when there is none.
func fieldOf(err error) string {
	for _, d := range status.Convert(err).Details() {
		if br, ok := d.(*errdetails.BadRequest); ok && len(br.GetFieldViolations()) > 0 {
			return br.GetFieldViolations()[0].GetField()
		}
	}
	return ""
}

// TestTraderReachesItsOwnCompanyOnly: a trader of shipCompany may check, record and read
// its own company's records and licences; for shipOther every call is refused
// PermissionDenied naming the field, nothing is recorded, and lists hold its own only.
func TestTraderReachesItsOwnCompanyOnly(t *testing.T) {
	_, conn, st, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{})
	ctx := context.Background()
	officer := dialAs(t, conn, issueTestCredential(t, st, "officer.invented", access.RoleOfficer, ""))
	shipRegistry(t, officer)
	trader := dialAs(t, conn, issueTestCredential(t, st, "trader.invented", access.RoleTrader, shipCompany))
	ship := halovetv1.NewShipmentServiceClient(trader)
	lic := halovetv1.NewLicensingServiceClient(trader)

	other := shipRecord("other-1")
	other.CompanyId, other.LicenceNumber = shipOther, shipSuspended
	refused := func(what string, err error, field string) {
		t.Helper()
		if status.Code(err) != codes.PermissionDenied || fieldOf(err) != field {
			t.Errorf("%s of the other company: %v (field %q); want PermissionDenied on %s", what, err, fieldOf(err), field)
		}
	}

	// CheckShipment.
	if _, err := ship.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{Record: shipRecord("own-1")}); err != nil {
		t.Errorf("CheckShipment of its own company: %v", err)
	}
	_, err := ship.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{Record: other})
	refused("CheckShipment", err, "record.company_id")

	// Its own company's record citing the other company's licence: refused too (the
	// verdict would show that licence's balance).
	borrowed := shipRecord("own-borrowed")
	borrowed.LicenceNumber = shipSuspended
	_, err = ship.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{Record: borrowed})
	refused("CheckShipment citing its licence", err, "record.licence_number")

	// CheckShipments: one own record and one of the other company in one message.
	cs, err := ship.CheckShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	_ = cs.Send(&halovetv1.CheckShipmentsRequest{Records: []*halovetv1.ShipmentRecord{shipRecord("own-2"), other}})
	_ = cs.CloseSend()
	for err == nil {
		_, err = cs.Recv()
	}
	refused("CheckShipments", err, "records[1].company_id")

	// RecordShipments: refused, and nothing of the message stored.
	rs, err := ship.RecordShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	_ = rs.Send(&halovetv1.RecordShipmentsRequest{Records: []*halovetv1.ShipmentRecord{shipRecord("own-3"), other}})
	_ = rs.CloseSend()
	for err == nil {
		_, err = rs.Recv()
	}
	refused("RecordShipments", err, "records[1].company_id")
	var n int
	if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM shipments`).Scan(&n); err != nil || n != 0 {
		t.Errorf("shipments stored after the refused stream: %d (err %v); want 0", n, err)
	}
	// Its own record is recorded, under the trader's name.
	rs, err = ship.RecordShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	_ = rs.Send(&halovetv1.RecordShipmentsRequest{Record: shipRecord("own-4")})
	_ = rs.CloseSend()
	for {
		if _, err := rs.Recv(); err != nil {
			if !errors.Is(err, io.EOF) {
				t.Fatalf("RecordShipments of its own: %v", err)
			}
			break
		}
	}
	var by string
	if err := st.Pool().QueryRow(ctx, `SELECT recorded_by FROM shipments WHERE record_key = 'own-4'`).Scan(&by); err != nil || by != "trader.invented" {
		t.Errorf("recorded_by %q (err %v); want trader.invented", by, err)
	}

	// GetLicence, ListLicences, ListCompanies.
	if _, err := lic.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: shipLicence}); err != nil {
		t.Errorf("GetLicence of its own: %v", err)
	}
	_, err = lic.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: shipSuspended})
	refused("GetLicence", err, "licence_number")
	_, err = lic.ListLicences(ctx, &halovetv1.ListLicencesRequest{CompanyId: shipOther})
	refused("ListLicences", err, "company_id")
	ls, err := lic.ListLicences(ctx, &halovetv1.ListLicencesRequest{})
	if err != nil || len(ls.GetLicences()) != 1 || ls.GetLicences()[0].GetCompanyId() != shipCompany {
		t.Errorf("ListLicences unfiltered: %v, %v; want its one licence only", ls, err)
	}
	cos, err := lic.ListCompanies(ctx, &halovetv1.ListCompaniesRequest{})
	if err != nil || len(cos.GetCompanies()) != 1 || cos.GetCompanies()[0].GetCompanyId() != shipCompany {
		t.Errorf("ListCompanies: %v, %v; want its own company only", cos, err)
	}
	// The officer sees both.
	all, err := halovetv1.NewLicensingServiceClient(officer).ListLicences(ctx, &halovetv1.ListLicencesRequest{})
	if err != nil || len(all.GetLicences()) != 2 {
		t.Errorf("officer's ListLicences: %v, %v; want 2", all, err)
	}
}

// TestRevocationSeenByEveryReplica: two servers on one database; a credential revoked
// through one is refused by both within 2 s.
func TestRevocationSeenByEveryReplica(t *testing.T) {
	url := pgtest.NewDatabase(t, "halovet_service", migrateServiceDB)
	_, connA, st, _ := runSecuredServer(t, url, service.Options{})
	_, connB, _, _ := runSecuredServer(t, url, service.Options{})
	officer := issueTestCredential(t, st, "officer.invented", access.RoleOfficer, "")
	reader := issueTestCredential(t, st, "reader.invented", access.RoleReader, "")
	ctx := context.Background()
	for _, c := range []*grpc.ClientConn{connA, connB} { // both replicas have it cached now
		if _, err := halovetv1.NewLicensingServiceClient(c).ListParties(withSecret(ctx, reader), &halovetv1.ListPartiesRequest{}); err != nil {
			t.Fatalf("before revocation: %v", err)
		}
	}
	id, _ := access.ParseSecret(reader)
	if _, err := halovetv1.NewAccessServiceClient(connA).RevokeCredential(withSecret(ctx, officer),
		&halovetv1.RevokeCredentialRequest{CredentialId: id, Reason: "test"}); err != nil {
		t.Fatal(err)
	}
	revokedAt := time.Now()
	for name, c := range map[string]*grpc.ClientConn{"A": connA, "B": connB} {
		for {
			_, err := halovetv1.NewLicensingServiceClient(c).ListParties(withSecret(ctx, reader), &halovetv1.ListPartiesRequest{})
			if status.Code(err) == codes.Unauthenticated {
				break
			}
			if time.Since(revokedAt) > 2*time.Second {
				t.Fatalf("replica %s still accepts the revoked credential 2 s after revocation (last: %v)", name, err)
			}
			time.Sleep(50 * time.Millisecond)
		}
	}
}

// TestAuditTrailOverTheAPI: ListAuditEvents filters by actor and object and pages;
// VerifyAuditChain reports the chain intact, then finds an event altered behind the
// server's back.
func TestAuditTrailOverTheAPI(t *testing.T) {
	_, conn, st, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{})
	ctx := withSecret(context.Background(), issueTestCredential(t, st, "officer.invented", access.RoleOfficer, ""))
	lic := halovetv1.NewLicensingServiceClient(conn)
	for _, id := range []string{"XA-1", "XA-2", "XA-3"} {
		if _, err := lic.RegisterCompany(ctx, &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: id, CountryCode: "XA"}}); err != nil {
			t.Fatal(err)
		}
	}
	ac := halovetv1.NewAccessServiceClient(conn)
	var seen []string
	tok := ""
	for {
		page, err := ac.ListAuditEvents(ctx, &halovetv1.ListAuditEventsRequest{Actor: "officer.invented", ObjectType: "company", PageSize: 2, PageToken: tok})
		if err != nil {
			t.Fatal(err)
		}
		for _, e := range page.GetEvents() {
			seen = append(seen, e.GetObjectKey())
		}
		if tok = page.GetNextPageToken(); tok == "" {
			break
		}
	}
	if strings.Join(seen, ",") != "XA-1,XA-2,XA-3" {
		t.Fatalf("events by page: %v; want XA-1,XA-2,XA-3", seen)
	}
	if page, err := ac.ListAuditEvents(ctx, &halovetv1.ListAuditEventsRequest{Actor: "someone.else"}); err != nil || len(page.GetEvents()) != 0 {
		t.Fatalf("another actor's events: %v %v; want none", page, err)
	}
	hourAgo, inAnHour := timestamppb.New(time.Now().Add(-time.Hour)), timestamppb.New(time.Now().Add(time.Hour))
	if page, err := ac.ListAuditEvents(ctx, &halovetv1.ListAuditEventsRequest{ToTime: hourAgo}); err != nil || len(page.GetEvents()) != 0 {
		t.Fatalf("events before an hour ago: %v %v; want none", page, err)
	}
	if page, err := ac.ListAuditEvents(ctx, &halovetv1.ListAuditEventsRequest{FromTime: hourAgo, ToTime: inAnHour}); err != nil || len(page.GetEvents()) != 4 {
		t.Fatalf("events of the last hour: %v %v; want 4", page, err)
	}
	if _, err := ac.ListAuditEvents(ctx, &halovetv1.ListAuditEventsRequest{PageToken: "x"}); status.Code(err) != codes.InvalidArgument || fieldOf(err) != "page_token" {
		t.Fatalf("a made-up page token: %v; want InvalidArgument on page_token", err)
	}
	v, err := ac.VerifyAuditChain(ctx, &halovetv1.VerifyAuditChainRequest{})
	if err != nil || !v.GetIntact() || v.GetEventsChecked() != 4 { // the credential's issue + 3 companies
		t.Fatalf("VerifyAuditChain: %v %v; want intact over 4 events", v, err)
	}
	if _, err := st.Pool().Exec(context.Background(), `ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update`); err != nil {
		t.Fatal(err)
	}
	if _, err := st.Pool().Exec(context.Background(), `UPDATE audit_log SET detail = '{"company_id":"XA-9"}' WHERE entity_key = 'XA-2'`); err != nil {
		t.Fatal(err)
	}
	v, err = ac.VerifyAuditChain(ctx, &halovetv1.VerifyAuditChainRequest{})
	if err != nil || v.GetIntact() || len(v.GetBreaks()) != 1 || v.GetBreaks()[0].GetSeq() != 3 {
		t.Fatalf("after altering event 3: %v %v; want one break at 3", v, err)
	}
}

func metadataCtx(ctx context.Context, authorization string) context.Context {
	return metadata.AppendToOutgoingContext(ctx, "authorization", authorization)
}

func storeCredential(name string, expires time.Time) store.NewCredential {
	return store.NewCredential{Name: name, Role: access.RoleOfficer, ExpiresAt: expires}
}

// TestHTTPAPIAppliesThePolicy: the HTTP/JSON paths go through the same access check: no
// credential is 401, a reader on the trail is 403, an auditor reads it, and a bad secret
// is 401 with the reason.
func TestHTTPAPIAppliesThePolicy(t *testing.T) {
	srv, _, st, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{})
	h, err := srv.HTTPHandler()
	if err != nil {
		t.Fatal(err)
	}
	web := httptest.NewServer(h)
	t.Cleanup(web.Close)
	auditor := issueTestCredential(t, st, "auditor.invented", access.RoleAuditor, "")
	reader := issueTestCredential(t, st, "reader.invented", access.RoleReader, "")
	for _, tc := range []struct {
		name, auth string
		want       int
		body       string
	}{
		{"no credential", "", http.StatusUnauthorized, "needs a credential"},
		{"reader", "Bearer " + reader, http.StatusForbidden, "role reader"},
		{"auditor", "Bearer " + auditor, http.StatusOK, "events"},
		{"bad secret", "Bearer " + auditor[:len(auditor)-3], http.StatusUnauthorized, "malformed"},
	} {
		req, _ := http.NewRequest(http.MethodGet, web.URL+"/v1/audit-events", nil)
		if tc.auth != "" {
			req.Header.Set("Authorization", tc.auth)
		}
		resp, err := web.Client().Do(req)
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		if resp.StatusCode != tc.want || !strings.Contains(string(body), tc.body) {
			t.Errorf("%s: HTTP %d %s; want %d with %q", tc.name, resp.StatusCode, body, tc.want, tc.body)
		}
	}
}

// TestOpenAccessIsListedInHealth: a server with open access lists the warning in
// Health/List, one with authentication does not.
func TestOpenAccessIsListedInHealth(t *testing.T) {
	url := pgtest.NewDatabase(t, "halovet_service", migrateServiceDB)
	_, open, _, _ := runTestServer(t, url, service.Options{})
	_, secured, _, _ := runSecuredServer(t, url, service.Options{})
	for name, c := range map[string]*grpc.ClientConn{"open": open, "secured": secured} {
		resp, err := healthpb.NewHealthClient(c).List(context.Background(), &healthpb.HealthListRequest{})
		if err != nil {
			t.Fatalf("%s: Health/List: %v", name, err)
		}
		_, listed := resp.GetStatuses()[service.OpenAccessHealthName]
		if listed != (name == "open") {
			t.Errorf("%s server: %s listed %v", name, service.OpenAccessHealthName, listed)
		}
	}
}

// TestIssueCredentialRole: the role is an enum; a credential issued as ROLE_AUDITOR lists as
// ROLE_AUDITOR, and an unspecified or undeclared role is INVALID_ARGUMENT naming role.
func TestIssueCredentialRole(t *testing.T) {
	_, conn, st, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{})
	ctx := withSecret(context.Background(), issueTestCredential(t, st, "officer.invented", access.RoleOfficer, ""))
	ac := halovetv1.NewAccessServiceClient(conn)
	resp, err := ac.IssueCredential(ctx, &halovetv1.IssueCredentialRequest{Name: "auditor.invented", Role: halovetv1.Role_ROLE_AUDITOR})
	if err != nil {
		t.Fatal(err)
	}
	if got := resp.GetCredential().GetRole(); got != halovetv1.Role_ROLE_AUDITOR {
		t.Errorf("issued credential role %v; want ROLE_AUDITOR", got)
	}
	list, err := ac.ListCredentials(ctx, &halovetv1.ListCredentialsRequest{})
	if err != nil {
		t.Fatal(err)
	}
	roles := map[string]halovetv1.Role{}
	for _, c := range list.GetCredentials() {
		roles[c.GetName()] = c.GetRole()
	}
	if roles["auditor.invented"] != halovetv1.Role_ROLE_AUDITOR || roles["officer.invented"] != halovetv1.Role_ROLE_OFFICER {
		t.Errorf("listed roles %v; want auditor.invented ROLE_AUDITOR, officer.invented ROLE_OFFICER", roles)
	}
	for _, r := range []halovetv1.Role{halovetv1.Role_ROLE_UNSPECIFIED, 99} {
		_, err := ac.IssueCredential(ctx, &halovetv1.IssueCredentialRequest{Name: "nobody.invented", Role: r})
		if status.Code(err) != codes.InvalidArgument || fieldOf(err) != "role" {
			t.Errorf("role %v: %v (field %q); want INVALID_ARGUMENT naming role", r, err, fieldOf(err))
		}
	}
}
