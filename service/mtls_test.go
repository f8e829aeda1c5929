package service_test

import (
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/pem"
	"math/big"
	"net"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/credentials"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// testCA is a certificate authority made for one test (invented names).
type testCA struct {
	cert *x509.Certificate
	key  *ecdsa.PrivateKey
	pem  []byte
}

var serial int64 = 100

func newTestCA(t *testing.T, name string) *testCA {
	t.Helper()
	key, _ := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	serial++
	tmpl := &x509.Certificate{SerialNumber: big.NewInt(serial), Subject: pkix.Name{CommonName: name},
		NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour), IsCA: true, BasicConstraintsValid: true,
		KeyUsage: x509.KeyUsageCertSign}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, tmpl, &key.PublicKey, key)
	if err != nil {
		t.Fatal(err)
	}
	cert, _ := x509.ParseCertificate(der)
	return &testCA{cert: cert, key: key, pem: pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der})}
}

// issue makes a leaf certificate; server ones name 127.0.0.1.
func (ca *testCA) issue(t *testing.T, subject pkix.Name, server bool) (certPEM, keyPEM []byte, tc tls.Certificate) {
	t.Helper()
	key, _ := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	serial++
	tmpl := &x509.Certificate{SerialNumber: big.NewInt(serial), Subject: subject,
		NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour), KeyUsage: x509.KeyUsageDigitalSignature}
	if server {
		tmpl.ExtKeyUsage = []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth}
		tmpl.IPAddresses = []net.IP{net.IPv4(127, 0, 0, 1)}
	} else {
		tmpl.ExtKeyUsage = []x509.ExtKeyUsage{x509.ExtKeyUsageClientAuth}
	}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, ca.cert, &key.PublicKey, ca.key)
	if err != nil {
		t.Fatal(err)
	}
	kb, _ := x509.MarshalECPrivateKey(key)
	certPEM = pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der})
	keyPEM = pem.EncodeToMemory(&pem.Block{Type: "EC PRIVATE KEY", Bytes: kb})
	tc, err = tls.X509KeyPair(certPEM, keyPEM)
	if err != nil {
		t.Fatal(err)
	}
	return certPEM, keyPEM, tc
}

func write(t *testing.T, path string, b []byte) {
	t.Helper()
	// A new modification time even within the file system's time resolution.
	if err := os.WriteFile(path+".new", b, 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.Rename(path+".new", path); err != nil {
		t.Fatal(err)
	}
	later := time.Now().Add(time.Duration(serial) * time.Millisecond)
	_ = os.Chtimes(path, later, later)
}

// TestMutualTLSIdentities: a client certificate signed by the client CA and mapped acts
// as its mapped role; an unmapped subject, a certificate of another CA, and one for the
// wrong use are refused Unauthenticated with the reason; server certificate, client CA
// and map are reloaded when their files change.
func TestMutualTLSIdentities(t *testing.T) {
	dir := t.TempDir()
	serverCA, clientCA, otherCA := newTestCA(t, "invented server CA"), newTestCA(t, "invented client CA"), newTestCA(t, "invented other CA")
	certFile, keyFile, caFile, mapFile := filepath.Join(dir, "server.crt"), filepath.Join(dir, "server.key"), filepath.Join(dir, "clients.pem"), filepath.Join(dir, "map.json")
	sc, sk, _ := serverCA.issue(t, pkix.Name{CommonName: "first"}, true)
	write(t, certFile, sc)
	write(t, keyFile, sk)
	write(t, caFile, clientCA.pem)
	write(t, mapFile, []byte(`[{"subject": "CN=gateway,O=Invented Customs", "name": "customs-gateway", "role": "customs"}]`))
	files, err := service.NewTLSFiles(certFile, keyFile, caFile, mapFile, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	_, conn, _, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{
		ServerOptions: []grpc.ServerOption{grpc.Creds(credentials.NewTLS(files.Config()))},
		ClientCAs:     files.ClientCAs, CertIdentities: files.CertIdentities})
	addr := conn.Target()

	roots := x509.NewCertPool()
	roots.AddCert(serverCA.cert)
	dialWith := func(cert *tls.Certificate, seen *string) *grpc.ClientConn {
		cfg := &tls.Config{RootCAs: roots, MinVersion: tls.VersionTLS12,
			VerifyConnection: func(cs tls.ConnectionState) error {
				if seen != nil {
					*seen = cs.PeerCertificates[0].Subject.CommonName
				}
				return nil
			}}
		if cert != nil {
			cfg.Certificates = []tls.Certificate{*cert}
		}
		c, err := grpc.NewClient(addr, grpc.WithTransportCredentials(credentials.NewTLS(cfg)))
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { _ = c.Close() })
		return c
	}
	ctx := context.Background()
	listLicences := func(c *grpc.ClientConn) error {
		_, err := halovetv1.NewLicensingServiceClient(c).ListLicences(ctx, &halovetv1.ListLicencesRequest{})
		return err
	}

	_, _, gateway := clientCA.issue(t, pkix.Name{CommonName: "gateway", Organization: []string{"Invented Customs"}}, false)
	var seen string
	gw := dialWith(&gateway, &seen)
	if err := listLicences(gw); err != nil {
		t.Fatalf("mapped customs certificate, ListLicences: %v", err)
	}
	if seen != "first" {
		t.Fatalf("server certificate %q; want first", seen)
	}
	_, err = halovetv1.NewLicensingServiceClient(gw).PutParty(ctx, &halovetv1.PutPartyRequest{})
	if status.Code(err) != codes.PermissionDenied || !strings.Contains(err.Error(), "customs-gateway") {
		t.Fatalf("customs certificate, PutParty: %v; want PermissionDenied naming customs-gateway", err)
	}

	refusals := []struct {
		name string
		cert tls.Certificate
		want string
	}{
		{"unmapped subject", third(clientCA.issue(t, pkix.Name{CommonName: "stranger"}, false)), "not mapped"},
		{"another CA", third(otherCA.issue(t, pkix.Name{CommonName: "gateway", Organization: []string{"Invented Customs"}}, false)), "is not issued by a configured client CA"},
		{"a server certificate", third(clientCA.issue(t, pkix.Name{CommonName: "gateway", Organization: []string{"Invented Customs"}}, true)), "is not for client authentication"},
	}
	for _, r := range refusals {
		err := listLicences(dialWith(&r.cert, nil))
		if status.Code(err) != codes.Unauthenticated || !strings.Contains(err.Error(), r.want) {
			t.Errorf("%s: %v; want Unauthenticated saying %q", r.name, err, r.want)
		}
	}
	// A truncated certificate does not parse: Go's TLS server ends the handshake
	// (a TLS alert) before any call exists, so the client sees Unavailable and no
	// handler runs (TestCertRefusalReasonsOverGRPC: what the server logs and counts).
	trunc := gateway
	trunc.Certificate = [][]byte{gateway.Certificate[0][:len(gateway.Certificate[0])/2]}
	if err := listLicences(dialWith(&trunc, nil)); status.Code(err) != codes.Unavailable {
		// The alert or, when the server closes first, a broken pipe: either way no call.
		t.Errorf("truncated certificate: %v; want the handshake refused (Unavailable)", err)
	}
	// Without a certificate and without a credential: anonymous.
	if err := listLicences(dialWith(nil, nil)); status.Code(err) != codes.Unauthenticated {
		t.Errorf("no certificate: %v; want Unauthenticated", err)
	}

	// Reload: a new server certificate, a new client CA and a new map, without restart.
	sc2, sk2, _ := serverCA.issue(t, pkix.Name{CommonName: "second"}, true)
	write(t, certFile, sc2)
	write(t, keyFile, sk2)
	newClientCA := newTestCA(t, "invented client CA 2")
	write(t, caFile, newClientCA.pem)
	write(t, mapFile, []byte(`[{"subject": "CN=erp,O=Invented Trader", "name": "xa-erp", "role": "trader", "company_id": "XA-1"}]`))
	_, _, erp := newClientCA.issue(t, pkix.Name{CommonName: "erp", Organization: []string{"Invented Trader"}}, false)
	seen = ""
	if err := listLicences(dialWith(&erp, &seen)); err != nil {
		t.Fatalf("certificate of the reloaded CA and map: %v", err)
	}
	if seen != "second" {
		t.Fatalf("server certificate after the files changed: %q; want second", seen)
	}
	if err := listLicences(dialWith(&gateway, nil)); status.Code(err) != codes.Unauthenticated {
		t.Fatalf("certificate of the replaced CA: %v; want Unauthenticated", err)
	}
	// A file that no longer reads keeps the last good one.
	write(t, certFile, []byte("not a certificate"))
	seen = ""
	if err := listLicences(dialWith(&erp, &seen)); err != nil || seen != "second" {
		t.Fatalf("after a broken certificate file: %v, served %q; want the last good one (second)", err, seen)
	}
}

func third(_, _ []byte, c tls.Certificate) tls.Certificate { return c }
