package service

import (
	"bytes"
	"context"
	"crypto/sha256"
	"crypto/x509"
	"encoding/hex"
	"errors"
	"fmt"
	"strconv"
	"time"

	"google.golang.org/grpc/credentials"
	"google.golang.org/grpc/peer"

	"github.com/halovet/halovet/access"
)

// certIdentity is the identity of a call's client certificate: verified against
// Options.ClientCAs (for client authentication) and its subject looked up in
// Options.CertIdentities. ok is false when the call carries no certificate or the server
// takes none; an error says why a certificate presented is refused. The TLS listener
// only requests the certificate (tls.RequestClientCert), so that a refusal reaches the
// caller as Unauthenticated with its reason rather than as a failed handshake.
func (s *Server) certIdentity(ctx context.Context) (id access.Identity, ok bool, err error) {
	if s.opts.ClientCAs == nil {
		return access.Identity{}, false, nil
	}
	p, found := peer.FromContext(ctx)
	if !found || p.AuthInfo == nil {
		return access.Identity{}, false, nil
	}
	info, isTLS := p.AuthInfo.(credentials.TLSInfo)
	if !isTLS || len(info.State.PeerCertificates) == 0 {
		return access.Identity{}, false, nil
	}
	leaf := info.State.PeerCertificates[0]
	inter := x509.NewCertPool()
	for _, c := range info.State.PeerCertificates[1:] {
		inter.AddCert(c)
	}
	roots := s.opts.ClientCAs()
	if roots == nil {
		return access.Identity{}, false, errors.New("client certificate refused: the server has no client CA loaded")
	}
	now := s.opts.Now()
	if _, err := leaf.Verify(x509.VerifyOptions{Roots: roots, Intermediates: inter,
		KeyUsages: []x509.ExtKeyUsage{x509.ExtKeyUsageClientAuth}, CurrentTime: now}); err != nil {
		return access.Identity{}, false, certRefusal(leaf, info.State.PeerCertificates[1:], now, err)
	}
	var m map[string]access.Identity
	if s.opts.CertIdentities != nil {
		m = s.opts.CertIdentities()
	}
	subject := leaf.Subject.String()
	mapped, found := m[subject]
	if !found {
		return access.Identity{}, false, fmt.Errorf("client certificate subject %q is not mapped to an identity (serve --tls-client-map)", subject)
	}
	sum := sha256.Sum256(leaf.Raw)
	mapped.CredentialID = "cert:" + hex.EncodeToString(sum[:8])
	mapped.Via = "certificate"
	if mapped.Name == "" {
		mapped.Name = subject
	}
	return mapped, true, nil
}

// certRefusal says why a client certificate does not verify, in words an operator can act
// on: which certificate, and whether it expired (on which date), is not for client
// authentication, was not issued by a configured CA, or came without the intermediate CA
// certificate it was issued by.
func certRefusal(leaf *x509.Certificate, sent []*x509.Certificate, now time.Time, err error) error {
	subject := leaf.Subject.String()
	var inv x509.CertificateInvalidError
	var unknown x509.UnknownAuthorityError
	switch {
	case errors.As(err, &inv) && inv.Reason == x509.Expired:
		which := "client certificate " + strconv.Quote(subject)
		if inv.Cert != nil && inv.Cert != leaf {
			which = "CA certificate " + strconv.Quote(inv.Cert.Subject.String()) + " in the chain of client certificate " + strconv.Quote(subject)
		}
		c := inv.Cert
		if c == nil {
			c = leaf
		}
		if now.Before(c.NotBefore) {
			return fmt.Errorf("%s is not valid before %s (UTC); it cannot be used yet", which, c.NotBefore.UTC().Format(time.DateTime))
		}
		return fmt.Errorf("%s expired on %s (UTC); the client needs a renewed certificate", which, c.NotAfter.UTC().Format(time.DateTime))
	case errors.As(err, &inv) && inv.Reason == x509.IncompatibleUsage:
		return fmt.Errorf("client certificate %q is not for client authentication: its extended key usage must include clientAuth (1.3.6.1.5.5.7.3.2)", subject)
	case errors.As(err, &unknown):
		// The chain as sent: from the leaf, each issuer the client sent with it.
		top := leaf
		for range len(sent) {
			var next *x509.Certificate
			for _, c := range sent {
				if c != top && bytes.Equal(c.RawSubject, top.RawIssuer) {
					next = c
				}
			}
			if next == nil {
				break
			}
			top = next
		}
		if top == leaf || bytes.Equal(top.RawSubject, top.RawIssuer) {
			if top == leaf {
				return fmt.Errorf("client certificate %q is not issued by a configured client CA (serve --tls-client-ca): its issuer %q is not among them, and no intermediate CA certificate was sent with it; if %q is an intermediate CA under a configured one, the intermediate is missing: the client must send it with its certificate", subject, leaf.Issuer.String(), leaf.Issuer.String())
			}
			return fmt.Errorf("client certificate %q is not issued by a configured client CA (serve --tls-client-ca): its chain ends at %q, which is not among them", subject, top.Subject.String())
		}
		return fmt.Errorf("client certificate %q is not issued by a configured client CA (serve --tls-client-ca): the chain sent ends at %q, issued by %q, which is not among them; if %q is an intermediate CA under a configured one, that intermediate is missing from the chain the client sends", subject, top.Subject.String(), top.Issuer.String(), top.Issuer.String())
	}
	return fmt.Errorf("client certificate %q refused: %v", subject, err)
}
