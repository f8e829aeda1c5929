package service

import (
	"context"
	"crypto/sha256"
	"crypto/x509"
	"encoding/hex"
	"errors"
	"fmt"

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
	if _, err := leaf.Verify(x509.VerifyOptions{Roots: roots, Intermediates: inter,
		KeyUsages: []x509.ExtKeyUsage{x509.ExtKeyUsageClientAuth}, CurrentTime: s.opts.Now()}); err != nil {
		return access.Identity{}, false, fmt.Errorf("client certificate %q refused: %v", leaf.Subject.String(), err)
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
