package service

import (
	"crypto/tls"
	"crypto/x509"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"strings"
	"sync"

	"github.com/halovet/halovet/access"
)

// TLSFiles serves TLS from certificate files and reloads them when they change: every
// handshake looks at the files' modification times and sizes (a stat each) and reads
// them again when either differs. A file that no longer reads is logged and the last
// good one is kept, so that a rotation written in two steps (certificate, then key)
// never stops the server. The client CA file and the certificate map are reloaded the
// same way, per call.
type TLSFiles struct {
	certFile, keyFile, caFile, mapFile string
	log                                *slog.Logger

	mu      sync.Mutex
	cert    *tls.Certificate
	certSig string
	pool    *x509.CertPool
	caSig   string
	idents  map[string]access.Identity
	mapSig  string
}

// NewTLSFiles loads the certificate and key, and the client CA and certificate map when
// given (caFile and mapFile may be empty); every file must read now.
func NewTLSFiles(certFile, keyFile, caFile, mapFile string, log *slog.Logger) (*TLSFiles, error) {
	if log == nil {
		log = slog.Default()
	}
	t := &TLSFiles{certFile: certFile, keyFile: keyFile, caFile: caFile, mapFile: mapFile, log: log}
	if _, err := t.loadCert(true); err != nil {
		return nil, err
	}
	if caFile != "" {
		if _, err := t.loadCA(true); err != nil {
			return nil, err
		}
	}
	if mapFile != "" {
		if _, err := t.loadMap(true); err != nil {
			return nil, err
		}
	}
	return t, nil
}

// signature is what changes when a file is rewritten: its modification time and size.
func signature(paths ...string) (string, error) {
	var b strings.Builder
	for _, p := range paths {
		fi, err := os.Stat(p)
		if err != nil {
			return "", err
		}
		fmt.Fprintf(&b, "%s:%d:%d;", p, fi.ModTime().UnixNano(), fi.Size())
	}
	return b.String(), nil
}

func (t *TLSFiles) loadCert(first bool) (*tls.Certificate, error) {
	t.mu.Lock()
	defer t.mu.Unlock()
	sig, err := signature(t.certFile, t.keyFile)
	if err == nil && sig == t.certSig && t.cert != nil {
		return t.cert, nil
	}
	var c tls.Certificate
	if err == nil {
		c, err = tls.LoadX509KeyPair(t.certFile, t.keyFile)
	}
	if err != nil {
		if first || t.cert == nil {
			return nil, fmt.Errorf("--tls-cert/--tls-key: %w", err)
		}
		t.log.Warn("TLS certificate files changed but do not load; serving the last good certificate", "err", err)
		return t.cert, nil
	}
	if !first {
		t.log.Info("TLS certificate reloaded", "cert", t.certFile)
	}
	t.cert, t.certSig = &c, sig
	return t.cert, nil
}

func (t *TLSFiles) loadCA(first bool) (*x509.CertPool, error) {
	t.mu.Lock()
	defer t.mu.Unlock()
	sig, err := signature(t.caFile)
	if err == nil && sig == t.caSig && t.pool != nil {
		return t.pool, nil
	}
	var pem []byte
	if err == nil {
		pem, err = os.ReadFile(t.caFile)
	}
	pool := x509.NewCertPool()
	if err == nil && !pool.AppendCertsFromPEM(pem) {
		err = errors.New("holds no PEM certificate")
	}
	if err != nil {
		if first || t.pool == nil {
			return nil, fmt.Errorf("--tls-client-ca %s: %w", t.caFile, err)
		}
		t.log.Warn("client CA file changed but does not load; keeping the last good one", "err", err)
		return t.pool, nil
	}
	if !first {
		t.log.Info("client CA reloaded", "file", t.caFile)
	}
	t.pool, t.caSig = pool, sig
	return pool, nil
}

// CertMapEntry is one line of the certificate map file (a JSON array of them).
type CertMapEntry struct {
	// Subject is the certificate subject as Go prints it (pkix.Name.String()), e.g.
	// "CN=gateway,O=Invented Customs".
	Subject string `json:"subject"`
	// Name is the identity's name in the audit trail; the subject when empty.
	Name string `json:"name"`
	// Role is the identity's role.
	Role string `json:"role"`
	// CompanyID binds a trader's certificate to its company.
	CompanyID string `json:"company_id"`
}

// ParseCertMap reads a certificate map: a JSON array of CertMapEntry.
func ParseCertMap(b []byte) (map[string]access.Identity, error) {
	var es []CertMapEntry
	dec := json.NewDecoder(strings.NewReader(string(b)))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&es); err != nil {
		return nil, fmt.Errorf("expected a JSON array of {\"subject\", \"name\", \"role\", \"company_id\"}: %w", err)
	}
	out := map[string]access.Identity{}
	for i, e := range es {
		r, err := access.ParseRole(e.Role)
		if err != nil {
			return nil, fmt.Errorf("entry %d (%s): %w", i+1, e.Subject, err)
		}
		if e.Subject == "" {
			return nil, fmt.Errorf("entry %d: subject is empty", i+1)
		}
		if (r == access.RoleTrader) != (e.CompanyID != "") {
			return nil, fmt.Errorf("entry %d (%s): a trader needs company_id, and only a trader may have one", i+1, e.Subject)
		}
		if _, dup := out[e.Subject]; dup {
			return nil, fmt.Errorf("entry %d: subject %q is mapped twice", i+1, e.Subject)
		}
		out[e.Subject] = access.Identity{Name: e.Name, Role: r, Company: e.CompanyID}
	}
	return out, nil
}

func (t *TLSFiles) loadMap(first bool) (map[string]access.Identity, error) {
	t.mu.Lock()
	defer t.mu.Unlock()
	sig, err := signature(t.mapFile)
	if err == nil && sig == t.mapSig && t.idents != nil {
		return t.idents, nil
	}
	var m map[string]access.Identity
	var b []byte
	if err == nil {
		b, err = os.ReadFile(t.mapFile)
	}
	if err == nil {
		m, err = ParseCertMap(b)
	}
	if err != nil {
		if first || t.idents == nil {
			return nil, fmt.Errorf("--tls-client-map %s: %w", t.mapFile, err)
		}
		t.log.Warn("certificate map changed but does not load; keeping the last good one", "err", err)
		return t.idents, nil
	}
	t.idents, t.mapSig = m, sig
	return m, nil
}

// GetCertificate is tls.Config.GetCertificate: the current certificate.
func (t *TLSFiles) GetCertificate(*tls.ClientHelloInfo) (*tls.Certificate, error) {
	return t.loadCert(false)
}

// ClientCAs is Options.ClientCAs: the current client CAs (nil without a CA file).
func (t *TLSFiles) ClientCAs() *x509.CertPool {
	if t.caFile == "" {
		return nil
	}
	p, _ := t.loadCA(false)
	return p
}

// CertIdentities is Options.CertIdentities: the current certificate map.
func (t *TLSFiles) CertIdentities() map[string]access.Identity {
	if t.mapFile == "" {
		return nil
	}
	m, _ := t.loadMap(false)
	return m
}

// Config is the server's tls.Config: TLS 1.2 or later, the certificate reloaded on
// change and, with a client CA, a client certificate requested (verified per call, see
// certIdentity, so that a refusal carries its reason).
func (t *TLSFiles) Config() *tls.Config {
	cfg := &tls.Config{MinVersion: tls.VersionTLS12, GetCertificate: t.GetCertificate}
	if t.caFile != "" {
		cfg.ClientAuth = tls.RequestClientCert
	}
	return cfg
}
