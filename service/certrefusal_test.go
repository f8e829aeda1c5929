package service_test

import (
	"bytes"
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/json"
	"encoding/pem"
	"io"
	"log/slog"
	"math/big"
	"net"
	"net/http"
	"net/http/httptest"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/credentials"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

// lockedBuffer collects a server's log lines for a test.
type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// certSpec is what a test certificate differs in; the rest is a client certificate valid
// for an hour either side of now.
type certSpec struct {
	subject             pkix.Name
	notBefore, notAfter time.Time
	usage               []x509.ExtKeyUsage
	ca                  bool
}

// sign makes a certificate of spec, issued by parent (self-signed when nil).
func sign(t *testing.T, parent *testCA, spec certSpec) (*testCA, tls.Certificate) {
	t.Helper()
	key, _ := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	serial++
	tmpl := &x509.Certificate{SerialNumber: big.NewInt(serial), Subject: spec.subject,
		NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour),
		KeyUsage: x509.KeyUsageDigitalSignature, ExtKeyUsage: []x509.ExtKeyUsage{x509.ExtKeyUsageClientAuth}}
	if !spec.notBefore.IsZero() {
		tmpl.NotBefore = spec.notBefore
	}
	if !spec.notAfter.IsZero() {
		tmpl.NotAfter = spec.notAfter
	}
	if spec.usage != nil {
		tmpl.ExtKeyUsage = spec.usage
	}
	if spec.ca {
		tmpl.IsCA, tmpl.BasicConstraintsValid, tmpl.KeyUsage, tmpl.ExtKeyUsage = true, true, x509.KeyUsageCertSign, nil
	}
	issuer, issuerKey := tmpl, key
	if parent != nil {
		issuer, issuerKey = parent.cert, parent.key
	}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, issuer, &key.PublicKey, issuerKey)
	if err != nil {
		t.Fatal(err)
	}
	cert, _ := x509.ParseCertificate(der)
	return &testCA{cert: cert, key: key, pem: pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der})},
		tls.Certificate{Certificate: [][]byte{der}, PrivateKey: key}
}

// certServer is a halovet server with mutual TLS on its gRPC and HTTP listeners, its
// log collected and its metrics readable.
type certServer struct {
	srv             *service.Server
	st              *store.Store
	grpcAddr, https string
	serverCA        *testCA
	clientCA        *testCA
	log             *lockedBuffer
}

// Invented identities: a registry officer, a trader bound to shipCompany.
const (
	officerSubject = "CN=registry-officer,O=Invented Authority"
	traderSubject  = "CN=erp,O=Invented Importer"
)

var (
	officerName = pkix.Name{CommonName: "registry-officer", Organization: []string{"Invented Authority"}}
	traderName  = pkix.Name{CommonName: "erp", Organization: []string{"Invented Importer"}}
)

func startCertServer(t *testing.T) *certServer {
	t.Helper()
	dir := t.TempDir()
	cs := &certServer{serverCA: newTestCA(t, "invented server CA"), clientCA: newTestCA(t, "invented client CA"), log: &lockedBuffer{}}
	certFile, keyFile, caFile, mapFile := filepath.Join(dir, "server.crt"), filepath.Join(dir, "server.key"), filepath.Join(dir, "clients.pem"), filepath.Join(dir, "map.json")
	sc, sk, _ := cs.serverCA.issue(t, pkix.Name{CommonName: "halovet test server"}, true)
	write(t, certFile, sc)
	write(t, keyFile, sk)
	write(t, caFile, cs.clientCA.pem)
	write(t, mapFile, []byte(`[{"subject": "`+officerSubject+`", "name": "officer-cert", "role": "officer"},
	  {"subject": "`+traderSubject+`", "name": "importer-erp", "role": "trader", "company_id": "`+shipCompany+`"}]`))
	files, err := service.NewTLSFiles(certFile, keyFile, caFile, mapFile, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	logger := slog.New(slog.NewTextHandler(cs.log, &slog.HandlerOptions{Level: slog.LevelDebug}))
	var conn *grpc.ClientConn
	cs.srv, conn, cs.st, _ = runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{
		TLS: files.Config(), ClientCAs: files.ClientCAs, CertIdentities: files.CertIdentities, Logger: logger})
	cs.grpcAddr = conn.Target()

	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- cs.srv.ServeHTTPAPI(ctx, lis, files.Config()) }()
	t.Cleanup(func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("ServeHTTPAPI: %v", err)
		}
	})
	cs.https = "https://" + lis.Addr().String()
	return cs
}

func (cs *certServer) roots() *x509.CertPool {
	p := x509.NewCertPool()
	p.AddCert(cs.serverCA.cert)
	return p
}

func (cs *certServer) dial(t *testing.T, cert *tls.Certificate) *grpc.ClientConn {
	t.Helper()
	cfg := &tls.Config{RootCAs: cs.roots(), MinVersion: tls.VersionTLS12}
	if cert != nil {
		cfg.Certificates = []tls.Certificate{*cert}
	}
	c, err := grpc.NewClient(cs.grpcAddr, grpc.WithTransportCredentials(credentials.NewTLS(cfg)))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = c.Close() })
	return c
}

func (cs *certServer) httpClient(cert *tls.Certificate) *http.Client {
	cfg := &tls.Config{RootCAs: cs.roots(), MinVersion: tls.VersionTLS12}
	if cert != nil {
		cfg.Certificates = []tls.Certificate{*cert}
	}
	return &http.Client{Timeout: 10 * time.Second, Transport: &http.Transport{TLSClientConfig: cfg, ForceAttemptHTTP2: true}}
}

// refusals reads halovet_tls_handshake_refusals_total for a listener and kind.
func (cs *certServer) refusals(t *testing.T, listener, kind string) string {
	t.Helper()
	rec := httptest.NewRecorder()
	cs.srv.MetricsHandler().ServeHTTP(rec, httptest.NewRequest("GET", "/metrics", nil))
	prefix := `halovet_tls_handshake_refusals_total{kind="` + kind + `",listener="` + listener + `"} `
	for _, line := range strings.Split(rec.Body.String(), "\n") {
		if v, ok := strings.CutPrefix(line, prefix); ok {
			return v
		}
	}
	return "0"
}

// credentialNamed reports whether a credential of that name was issued: the proof that
// an IssueCredential call reached its handler.
func credentialNamed(t *testing.T, st *store.Store, name string) bool {
	t.Helper()
	cs, err := st.ListCredentials(context.Background(), true)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range cs {
		if c.Name == name {
			return true
		}
	}
	return false
}

// truncated is cert with its DER cut in half: it no longer parses.
func truncated(cert tls.Certificate) tls.Certificate {
	der := cert.Certificate[0]
	cert.Certificate = [][]byte{der[:len(der)/2]}
	return cert
}

// TestCertRefusalReasonsOverGRPC: a client certificate that is expired, of a CA not
// configured, sent without its intermediate CA, or not for client authentication is
// refused Unauthenticated with a reason naming what is wrong, and the call never reaches
// its handler (IssueCredential, as an officer's certificate, issues nothing). A
// certificate whose DER is truncated cannot get that far: crypto/tls ends the handshake,
// the caller sees Unavailable, and the server logs the peer and the reason and counts it.
func TestCertRefusalReasonsOverGRPC(t *testing.T) {
	cs := startCertServer(t)
	ctx := context.Background()
	issue := func(c *grpc.ClientConn, name string) error {
		_, err := halovetv1.NewAccessServiceClient(c).IssueCredential(ctx, &halovetv1.IssueCredentialRequest{Name: name, Role: halovetv1.Role_ROLE_READER})
		return err
	}
	otherCA := newTestCA(t, "invented other CA")
	intermediate, _ := sign(t, cs.clientCA, certSpec{subject: pkix.Name{CommonName: "invented intermediate CA"}, ca: true})
	expiredOn := time.Now().Add(-26 * time.Hour).UTC().Truncate(time.Second)
	_, expired := sign(t, cs.clientCA, certSpec{subject: officerName, notBefore: expiredOn.Add(-time.Hour), notAfter: expiredOn})
	_, foreign := sign(t, otherCA, certSpec{subject: officerName})
	_, viaIntermediate := sign(t, intermediate, certSpec{subject: officerName})
	_, serverOnly := sign(t, cs.clientCA, certSpec{subject: officerName, usage: []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth}})
	_, good := sign(t, cs.clientCA, certSpec{subject: officerName})

	// Controls: the officer's good certificate, and the one of the intermediate CA sent
	// with the intermediate, are accepted and reach the handler.
	withChain := viaIntermediate
	withChain.Certificate = append(withChain.Certificate, intermediate.cert.Raw)
	for name, cert := range map[string]tls.Certificate{"good-cert": good, "intermediate-sent": withChain} {
		if err := issue(cs.dial(t, &cert), name); err != nil {
			t.Fatalf("%s: IssueCredential: %v", name, err)
		}
		if !credentialNamed(t, cs.st, name) {
			t.Fatalf("%s: accepted but no credential issued", name)
		}
	}

	for _, c := range []struct {
		name string
		cert tls.Certificate
		want []string
	}{
		{"expired", expired, []string{`client certificate "` + officerSubject + `" expired on ` + expiredOn.Format(time.DateTime) + " (UTC)"}},
		{"another-ca", foreign, []string{"is not issued by a configured client CA", "invented other CA"}},
		{"intermediate-missing", viaIntermediate, []string{"invented intermediate CA", "the intermediate is missing"}},
		{"server-auth-only", serverOnly, []string{"is not for client authentication", "clientAuth"}},
	} {
		err := issue(cs.dial(t, &c.cert), c.name)
		if status.Code(err) != codes.Unauthenticated {
			t.Errorf("%s: %v; want Unauthenticated", c.name, err)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(status.Convert(err).Message(), w) {
				t.Errorf("%s: %q; want it to say %q", c.name, status.Convert(err).Message(), w)
			}
		}
		if credentialNamed(t, cs.st, c.name) {
			t.Errorf("%s: refused, yet the handler issued a credential", c.name)
		}
	}

	// Truncated DER: the handshake fails in crypto/tls; nothing is called.
	before := cs.refusals(t, "grpc", "client-certificate-unparsable")
	err := issue(cs.dial(t, new(truncated(good))), "truncated")
	t.Logf("a DER-truncated certificate over gRPC: %v", err)
	if status.Code(err) != codes.Unavailable || !strings.Contains(err.Error(), "remote error: tls: error decoding message") {
		t.Errorf("truncated certificate: %v; want Unavailable with the server's TLS alert (the handshake refused)", err)
	}
	if credentialNamed(t, cs.st, "truncated") {
		t.Error("truncated certificate: a credential was issued")
	}
	if before != "0" || cs.refusals(t, "grpc", "client-certificate-unparsable") == "0" {
		t.Errorf("halovet_tls_handshake_refusals_total{listener=grpc,kind=client-certificate-unparsable}: %s before, %s after; want 0, then at least 1",
			before, cs.refusals(t, "grpc", "client-certificate-unparsable"))
	}
	logged := cs.log.String()
	if !strings.Contains(logged, `msg="TLS handshake refused" listener=grpc peer=127.0.0.1:`) ||
		!strings.Contains(logged, "tls: failed to parse client certificate") {
		t.Errorf("server log does not record the refused handshake with its peer and reason:\n%s", logged)
	}

	// Other refusals are counted by kind: plaintext sent to the TLS port, and a probe
	// that connects and closes (logged at debug level only).
	plain, err := net.Dial("tcp", cs.grpcAddr)
	if err != nil {
		t.Fatal(err)
	}
	_, _ = plain.Write([]byte("PRI * HTTP/2.0\r\n\r\nSM\r\n\r\n"))
	_, _ = io.Copy(io.Discard, plain) // until the server closes
	_ = plain.Close()
	probe, err := net.Dial("tcp", cs.grpcAddr)
	if err != nil {
		t.Fatal(err)
	}
	_ = probe.Close()
	deadline := time.Now().Add(5 * time.Second)
	for (cs.refusals(t, "grpc", "not-tls") == "0" || cs.refusals(t, "grpc", "closed-by-peer") == "0") && time.Now().Before(deadline) {
		time.Sleep(20 * time.Millisecond)
	}
	if a, b := cs.refusals(t, "grpc", "not-tls"), cs.refusals(t, "grpc", "closed-by-peer"); a != "1" || b != "1" {
		t.Errorf("refusals of kind not-tls %s, closed-by-peer %s; want 1 each", a, b)
	}
}

// TestCertIdentitiesOverHTTP: on the HTTP listener a client certificate acts as the same
// identity as on gRPC: a trader's certificate lists only its own company and licences on
// both, and is refused a write with its mapped name; a certificate refused on gRPC is
// refused 401 with the same reason; a truncated one fails the handshake, logged and
// counted for the http listener.
func TestCertIdentitiesOverHTTP(t *testing.T) {
	cs := startCertServer(t)
	_, officer := sign(t, cs.clientCA, certSpec{subject: officerName})
	shipRegistry(t, cs.dial(t, &officer))
	_, trader := sign(t, cs.clientCA, certSpec{subject: traderName})
	ctx := context.Background()

	lc, err := halovetv1.NewLicensingServiceClient(cs.dial(t, &trader)).ListLicences(ctx, &halovetv1.ListLicencesRequest{})
	if err != nil {
		t.Fatal(err)
	}
	var overGRPC []string
	for _, l := range lc.GetLicences() {
		overGRPC = append(overGRPC, l.GetLicenceNumber())
	}
	if len(overGRPC) != 1 || overGRPC[0] != shipLicence {
		t.Fatalf("trader certificate over gRPC lists licences %v; want only %s (its company's)", overGRPC, shipLicence)
	}

	get := func(c *http.Client, path string) (int, string) {
		t.Helper()
		resp, err := c.Get(cs.https + path)
		if err != nil {
			t.Fatalf("GET %s: %v", path, err)
		}
		defer resp.Body.Close()
		b, _ := io.ReadAll(resp.Body)
		return resp.StatusCode, string(b)
	}
	tc := cs.httpClient(&trader)
	code, body := get(tc, "/v1/licences")
	var lr struct {
		Licences []struct {
			LicenceNumber string `json:"licenceNumber"`
			CompanyID     string `json:"companyId"`
		} `json:"licences"`
	}
	if err := json.Unmarshal([]byte(body), &lr); code != http.StatusOK || err != nil {
		t.Fatalf("trader certificate, GET /v1/licences: %d %s (%v)", code, body, err)
	}
	if len(lr.Licences) != 1 || lr.Licences[0].LicenceNumber != shipLicence || lr.Licences[0].CompanyID != shipCompany {
		t.Fatalf("trader certificate over HTTP lists %s; want only %s of %s, as over gRPC", body, shipLicence, shipCompany)
	}
	code, body = get(tc, "/v1/companies")
	if code != http.StatusOK || !strings.Contains(body, shipCompany) || strings.Contains(body, shipOther) {
		t.Fatalf("trader certificate, GET /v1/companies: %d %s; want only %s", code, body, shipCompany)
	}
	code, body = get(tc, "/v1/credentials")
	if code != http.StatusForbidden || !strings.Contains(body, "importer-erp") {
		t.Fatalf("trader certificate, GET /v1/credentials: %d %s; want 403 naming the mapped identity importer-erp", code, body)
	}
	// The officer's certificate over HTTP sees both companies.
	if code, body = get(cs.httpClient(&officer), "/v1/companies"); code != http.StatusOK || !strings.Contains(body, shipOther) {
		t.Fatalf("officer certificate, GET /v1/companies: %d %s; want both companies", code, body)
	}

	expiredOn := time.Now().Add(-50 * time.Hour).UTC().Truncate(time.Second)
	_, expired := sign(t, cs.clientCA, certSpec{subject: traderName, notBefore: expiredOn.Add(-time.Hour), notAfter: expiredOn})
	_, foreign := sign(t, newTestCA(t, "invented other CA"), certSpec{subject: traderName})
	_, unmapped := sign(t, cs.clientCA, certSpec{subject: pkix.Name{CommonName: "stranger"}})
	for _, c := range []struct {
		name string
		cert tls.Certificate
		want string
	}{
		{"expired", expired, "expired on " + expiredOn.Format(time.DateTime)},
		{"another-ca", foreign, "is not issued by a configured client CA"},
		{"unmapped", unmapped, "is not mapped to an identity"},
	} {
		code, body := get(cs.httpClient(&c.cert), "/v1/licences")
		if code != http.StatusUnauthorized || !strings.Contains(body, c.want) {
			t.Errorf("%s certificate, GET /v1/licences: %d %s; want 401 saying %q", c.name, code, body, c.want)
		}
	}

	_, err = cs.httpClient(new(truncated(trader))).Get(cs.https + "/v1/licences")
	t.Logf("a DER-truncated certificate over HTTP: %v", err)
	if err == nil {
		t.Fatal("truncated certificate over HTTP: answered")
	}
	deadline := time.Now().Add(5 * time.Second)
	for cs.refusals(t, "http", "client-certificate-unparsable") == "0" && time.Now().Before(deadline) {
		time.Sleep(20 * time.Millisecond) // net/http logs after the client has seen the alert
	}
	if got := cs.refusals(t, "http", "client-certificate-unparsable"); got == "0" {
		t.Errorf("halovet_tls_handshake_refusals_total{listener=http,kind=client-certificate-unparsable} = %s; want at least 1", got)
	}
	logged := cs.log.String()
	if !strings.Contains(logged, `msg="TLS handshake refused" listener=http peer=127.0.0.1:`) ||
		!strings.Contains(logged, "tls: failed to parse client certificate") {
		t.Errorf("server log does not record the refused HTTP handshake with its peer and reason:\n%s", logged)
	}
}
