package main

import (
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/pem"
	"math/big"
	"net"
	"os"
	"path/filepath"
	"testing"
	"time"

	healthpb "google.golang.org/grpc/health/grpc_health_v1"

	"github.com/halovet/halovet/pglocal/pgtest"
)

// writeSelfSigned writes a throw-away certificate for 127.0.0.1 and its key.
func writeSelfSigned(t *testing.T, dir string) (certFile, keyFile string) {
	t.Helper()
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	tpl := &x509.Certificate{SerialNumber: big.NewInt(1), Subject: pkix.Name{CommonName: "halovet test"},
		NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour),
		IPAddresses: []net.IP{net.ParseIP("127.0.0.1")}, KeyUsage: x509.KeyUsageDigitalSignature | x509.KeyUsageCertSign,
		ExtKeyUsage: []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth}, IsCA: true, BasicConstraintsValid: true}
	der, err := x509.CreateCertificate(rand.Reader, tpl, tpl, &key.PublicKey, key)
	if err != nil {
		t.Fatal(err)
	}
	kb, err := x509.MarshalECPrivateKey(key)
	if err != nil {
		t.Fatal(err)
	}
	certFile, keyFile = filepath.Join(dir, "cert.pem"), filepath.Join(dir, "key.pem")
	if err := os.WriteFile(certFile, pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der}), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(keyFile, pem.EncodeToMemory(&pem.Block{Type: "EC PRIVATE KEY", Bytes: kb}), 0o600); err != nil {
		t.Fatal(err)
	}
	return certFile, keyFile
}

// TestServeTLS: with --tls-cert/--tls-key the server speaks TLS; a client trusting the
// CA gets SERVING, a plaintext client is refused.
func TestServeTLS(t *testing.T) {
	url := pgtest.NewDatabase(t, "halovet_cmd", migrateForTest)
	cert, key := writeSelfSigned(t, t.TempDir())
	p := startServe(t, url, "--tls-cert", cert, "--tls-key", key)

	cf := clientFlags{server: p.addr, useTLS: true, caFile: cert}
	conn, err := cf.dial()
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	waitServing(t, conn, p)

	plain := dialTest(t, p.addr)
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Second)
	defer cancel()
	if _, err := healthpb.NewHealthClient(plain).Check(ctx, &healthpb.HealthCheckRequest{}); err == nil {
		t.Fatal("a plaintext client was answered by a TLS server")
	}
}
