package main

import (
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/pem"
	"io"
	"math/big"
	"net"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/halovet/halovet/pglocal/pgtest"
)

// testIssuer is a CA made for one test (invented names).
type testIssuer struct {
	cert *x509.Certificate
	key  *ecdsa.PrivateKey
}

var certSerial int64 = 500

func newIssuer(t *testing.T, name string) *testIssuer {
	t.Helper()
	key, _ := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	certSerial++
	tpl := &x509.Certificate{SerialNumber: big.NewInt(certSerial), Subject: pkix.Name{CommonName: name},
		NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour), IsCA: true, BasicConstraintsValid: true,
		KeyUsage: x509.KeyUsageCertSign}
	der, err := x509.CreateCertificate(rand.Reader, tpl, tpl, &key.PublicKey, key)
	if err != nil {
		t.Fatal(err)
	}
	c, _ := x509.ParseCertificate(der)
	return &testIssuer{cert: c, key: key}
}

func (is *testIssuer) writePEM(t *testing.T, path string) string {
	t.Helper()
	if err := os.WriteFile(path, pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: is.cert.Raw}), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

// clientCert writes a client certificate of subject, valid until notAfter, and its key
// into dir as NAME.crt and NAME.key; it returns the two paths and the DER.
func (is *testIssuer) clientCert(t *testing.T, dir, name string, subject pkix.Name, notAfter time.Time) (certFile, keyFile string, der []byte) {
	t.Helper()
	key, _ := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	certSerial++
	tpl := &x509.Certificate{SerialNumber: big.NewInt(certSerial), Subject: subject,
		NotBefore: notAfter.Add(-48 * time.Hour), NotAfter: notAfter, KeyUsage: x509.KeyUsageDigitalSignature,
		ExtKeyUsage: []x509.ExtKeyUsage{x509.ExtKeyUsageClientAuth}}
	der, err := x509.CreateCertificate(rand.Reader, tpl, is.cert, &key.PublicKey, is.key)
	if err != nil {
		t.Fatal(err)
	}
	kb, _ := x509.MarshalECPrivateKey(key)
	certFile, keyFile = filepath.Join(dir, name+".crt"), filepath.Join(dir, name+".key")
	writeFile(t, certFile, string(pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der})))
	writeFile(t, keyFile, string(pem.EncodeToMemory(&pem.Block{Type: "EC PRIVATE KEY", Bytes: kb})))
	return certFile, keyFile, der
}

// TestCLIClientCertificate drives the binary against `serve` with mutual TLS: the CLI
// identifies with --tls-client-cert; an expired certificate is refused by the server with
// the date (exit 4); a certificate file whose DER is truncated, or whose PEM is cut off,
// is refused before anything is dialed, naming the file (exit 2).
func TestCLIClientCertificate(t *testing.T) {
	url := pgtest.NewDatabase(t, "halovet_cmd", migrateForTest)
	dir := t.TempDir()
	serverCert, serverKey := writeSelfSigned(t, dir)
	ca := newIssuer(t, "invented client CA")
	caFile := ca.writePEM(t, filepath.Join(dir, "clients.pem"))
	mapFile := filepath.Join(dir, "map.json")
	writeFile(t, mapFile, `[{"subject": "CN=registry-desk,O=Invented Authority", "name": "registry-desk", "role": "officer"}]`)
	p := startSecuredServe(t, url, "--tls-cert", serverCert, "--tls-key", serverKey, "--tls-client-ca", caFile, "--tls-client-map", mapFile)
	cf := clientFlags{server: p.addr, useTLS: true, caFile: serverCert}
	conn, err := cf.dial()
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	waitServing(t, conn, p)

	desk := pkix.Name{CommonName: "registry-desk", Organization: []string{"Invented Authority"}}
	good, goodKey, goodDER := ca.clientCert(t, dir, "good", desk, time.Now().Add(time.Hour))
	expiredOn := time.Now().Add(-30 * time.Hour).UTC().Truncate(time.Second)
	expired, expiredKey, _ := ca.clientCert(t, dir, "expired", desk, expiredOn)
	cutDER := filepath.Join(dir, "cut-der.crt")
	writeFile(t, cutDER, string(pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: goodDER[:len(goodDER)/2]})))
	whole, _ := os.ReadFile(good)
	cutPEM := filepath.Join(dir, "cut-pem.crt")
	writeFile(t, cutPEM, string(whole[:len(whole)*2/3]))
	base := []string{"credentials", "list", "--server", p.addr, "--tls", "--tls-ca", serverCert}

	if code, _, errOut := runBin(t, nil, append(base, "--tls-client-cert", good, "--tls-client-key", goodKey)...); code != 0 {
		t.Fatalf("officer certificate: exit %d: %s", code, errOut)
	}
	code, _, errOut := runBin(t, nil, append(base, "--tls-client-cert", expired, "--tls-client-key", expiredKey)...)
	if code != exitFailure || !strings.Contains(errOut, "Unauthenticated") || !strings.Contains(errOut, "expired on "+expiredOn.Format(time.DateTime)) {
		t.Errorf("expired certificate: exit %d: %s; want %d, Unauthenticated, expired on %s", code, errOut, exitFailure, expiredOn.Format(time.DateTime))
	}
	for _, c := range []struct{ file, want string }{
		{cutDER, "certificate 1 does not parse, it is truncated or damaged"},
		{cutPEM, "not a complete PEM block"},
	} {
		code, _, errOut := runBin(t, nil, append(base, "--tls-client-cert", c.file, "--tls-client-key", goodKey)...)
		if code != exitUsage || !strings.Contains(errOut, "--tls-client-cert "+c.file) || !strings.Contains(errOut, c.want) {
			t.Errorf("%s: exit %d: %s; want %d naming the file and saying %q", filepath.Base(c.file), code, errOut, exitUsage, c.want)
		}
	}
	code, _, errOut = runBin(t, nil, "credentials", "list", "--server", p.addr, "--tls-client-cert", good, "--tls-client-key", goodKey)
	if code != exitUsage || !strings.Contains(errOut, "add --tls") {
		t.Errorf("a client certificate without --tls: exit %d: %s; want %d", code, errOut, exitUsage)
	}
	if strings.Contains(p.stderr.String(), "TLS handshake refused") {
		t.Errorf("a refused certificate file reached the server:\n%s", p.stderr)
	}
}

// TestCLICertificateAlertIsAuthentication: a TLS terminator in front of halovet that
// verifies client certificates itself refuses them with a TLS alert during the handshake;
// the CLI reports that as an authentication failure (exit 4), not as "no server answered".
func TestCLICertificateAlertIsAuthentication(t *testing.T) {
	dir := t.TempDir()
	serverCert, serverKey := writeSelfSigned(t, dir)
	sc, err := tls.LoadX509KeyPair(serverCert, serverKey)
	if err != nil {
		t.Fatal(err)
	}
	trusted, other := newIssuer(t, "invented proxy client CA"), newIssuer(t, "invented other CA")
	pool := x509.NewCertPool()
	pool.AddCert(trusted.cert)
	// Any certificate is asked for (no CA list, so the client sends what it has) and
	// verified by the terminator: one of another CA gets the alert bad_certificate.
	lis, err := tls.Listen("tcp", "127.0.0.1:0", &tls.Config{Certificates: []tls.Certificate{sc}, ClientAuth: tls.RequireAnyClientCert,
		NextProtos: []string{"h2"}, MinVersion: tls.VersionTLS12,
		VerifyPeerCertificate: func(raw [][]byte, _ [][]*x509.Certificate) error {
			c, err := x509.ParseCertificate(raw[0])
			if err != nil {
				return err
			}
			_, err = c.Verify(x509.VerifyOptions{Roots: pool, KeyUsages: []x509.ExtKeyUsage{x509.ExtKeyUsageClientAuth}})
			return err
		}})
	if err != nil {
		t.Fatal(err)
	}
	defer lis.Close()
	go func() {
		for {
			c, err := lis.Accept()
			if err != nil {
				return
			}
			go func() {
				if err := c.(*tls.Conn).Handshake(); err != nil {
					// As a careful terminator: the alert, then the rest read until the client closes.
					_ = c.SetReadDeadline(time.Now().Add(2 * time.Second))
					_, _ = io.Copy(io.Discard, c.(*tls.Conn).NetConn())
				}
				_ = c.Close()
			}()
		}
	}()
	addr := lis.Addr().String()
	if _, _, err := net.SplitHostPort(addr); err != nil {
		t.Fatal(err)
	}
	foreign, foreignKey, _ := other.clientCert(t, dir, "foreign", pkix.Name{CommonName: "registry-desk"}, time.Now().Add(time.Hour))
	base := []string{"credentials", "list", "--server", addr, "--tls", "--tls-ca", serverCert, "--timeout", "5s"}
	for _, c := range []struct {
		name string
		args []string
		want []string
	}{
		{"another CA", []string{"--tls-client-cert", foreign, "--tls-client-key", foreignKey},
			[]string{"authentication failed", "TLS alert: bad certificate", "--tls-client-cert " + foreign}},
		{"no certificate", nil, []string{"authentication failed", "TLS alert: certificate required", "no client certificate was presented"}},
	} {
		code, _, errOut := runBin(t, nil, append(base, c.args...)...)
		if code != exitFailure {
			t.Errorf("%s: exit %d: %s; want %d", c.name, code, errOut, exitFailure)
		}
		for _, w := range c.want {
			if !strings.Contains(errOut, w) {
				t.Errorf("%s: %s; want it to say %q", c.name, errOut, w)
			}
		}
		if strings.Contains(errOut, "no halovet server answered") {
			t.Errorf("%s: %s; a refused certificate is not an unreachable server", c.name, errOut)
		}
	}
}
