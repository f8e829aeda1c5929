package main

import (
	"context"
	"crypto/tls"
	"crypto/x509"
	"encoding/pem"
	"net"
	"os"
	"strings"
	"time"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"
	"google.golang.org/grpc/credentials"
	"google.golang.org/grpc/credentials/insecure"
)

// clientFlags say how a client verb reaches the server.
type clientFlags struct {
	server     string
	useTLS     bool
	caFile     string
	serverName string
	certFile   string // client certificate chain for mutual TLS
	keyFile    string
	credFile   string
	timeout    time.Duration // longest wait for the server; 0: none
}

// defaultPort is the port halovet serve listens on unless told otherwise.
const defaultPort = "7390"

func (c *clientFlags) register(fs *pflag.FlagSet) {
	fs.StringVar(&c.server, "server", envOr("HALOVET_SERVER", "127.0.0.1:"+defaultPort), "halovet server address HOST[:PORT], port "+defaultPort+" when left out (env HALOVET_SERVER)")
	fs.BoolVar(&c.useTLS, "tls", envBool("HALOVET_TLS"), "connect with TLS (env HALOVET_TLS); plaintext otherwise, meant for loopback")
	fs.StringVar(&c.caFile, "tls-ca", envOr("HALOVET_TLS_CA", ""), "PEM file of the CA that signed the server's certificate (default: system roots)")
	fs.StringVar(&c.serverName, "tls-server-name", envOr("HALOVET_TLS_SERVER_NAME", ""), "server name to verify in the certificate (default: the host of --server)")
	fs.StringVar(&c.certFile, "tls-client-cert", envOr("HALOVET_TLS_CLIENT_CERT", ""), "PEM client certificate (chain: the certificate, then any intermediate CA) to identify with by mutual TLS, with --tls and --tls-client-key (env HALOVET_TLS_CLIENT_CERT)")
	fs.StringVar(&c.keyFile, "tls-client-key", envOr("HALOVET_TLS_CLIENT_KEY", ""), "PEM private key of --tls-client-cert (env HALOVET_TLS_CLIENT_KEY)")
	fs.DurationVar(&c.timeout, "timeout", envDuration("HALOVET_TIMEOUT", defaultClientTimeout), "longest wait for the server: the deadline of a single call, and for a file the longest time without a message either way; 0 waits for ever (env HALOVET_TIMEOUT)")
	fs.StringVar(&c.credFile, "credential-file", envOr("HALOVET_CREDENTIAL_FILE", ""), "file holding the credential secret 'halovet credentials issue' printed (env HALOVET_CREDENTIAL_FILE, or the secret itself in HALOVET_CREDENTIAL); sent only over --tls or to a loopback address")
}

// dial opens a client connection; it does not wait for the server.
func (c *clientFlags) dial() (*grpc.ClientConn, error) {
	var creds credentials.TransportCredentials = insecure.NewCredentials()
	if c.useTLS {
		cfg := &tls.Config{ServerName: c.serverName, MinVersion: tls.VersionTLS12}
		if c.caFile != "" {
			pem, err := os.ReadFile(c.caFile)
			if err != nil {
				return nil, usageErr("--tls-ca: %v", err)
			}
			pool := x509.NewCertPool()
			if !pool.AppendCertsFromPEM(pem) {
				return nil, usageErr("--tls-ca %s holds no PEM certificate", c.caFile)
			}
			cfg.RootCAs = pool
		}
		if c.certFile != "" || c.keyFile != "" {
			cert, err := loadClientCert(c.certFile, c.keyFile)
			if err != nil {
				return nil, err
			}
			cfg.Certificates = []tls.Certificate{cert}
			presentedCert = c.certFile
		}
		creds = credentials.NewTLS(cfg)
	} else if c.certFile != "" || c.keyFile != "" {
		return nil, usageErr("--tls-client-cert and --tls-client-key are presented over TLS only: add --tls")
	}
	opts := append([]grpc.DialOption{grpc.WithTransportCredentials(creds)}, clientLimitOptions(c.timeout)...)
	addr, err := serverAddress(c.server)
	if err != nil {
		return nil, err
	}
	secret, from, err := c.credential()
	if err != nil {
		return nil, err
	}
	if secret != "" {
		if !c.useTLS && !loopbackTarget(addr) {
			return nil, usageErr("%s: refusing to send a credential in plaintext to %s, which is not a loopback address: connect with --tls (and --tls-ca), or reach the server through loopback", from, addr)
		}
		opts = append(opts, grpc.WithPerRPCCredentials(bearer{token: secret}))
	}
	dialedServer = addr
	conn, err := grpc.NewClient(addr, opts...)
	if err != nil {
		return nil, usageErr("--server %s: %v", c.server, err)
	}
	return conn, nil
}

// credential reads the secret to present: --credential-file, else HALOVET_CREDENTIAL;
// from names where it came from. A file that is empty or unreadable is an error, never
// a call without a credential.
func (c *clientFlags) credential() (secret, from string, err error) {
	if c.credFile != "" {
		b, err := os.ReadFile(c.credFile)
		if err != nil {
			return "", "", usageErr("--credential-file: %v", err)
		}
		s := strings.TrimSpace(string(b))
		if s == "" {
			return "", "", usageErr("--credential-file %s is empty: it must hold the secret 'halovet credentials issue' printed", c.credFile)
		}
		return s, "--credential-file", nil
	}
	if v, ok := os.LookupEnv("HALOVET_CREDENTIAL"); ok {
		s := strings.TrimSpace(v)
		if s == "" {
			return "", "", usageErr("HALOVET_CREDENTIAL is set but empty: unset it or give the secret")
		}
		return s, "HALOVET_CREDENTIAL", nil
	}
	return "", "", nil
}

// loopbackTarget reports whether a dial target stays on this machine: a loopback IP,
// "localhost", or a unix socket.
func loopbackTarget(addr string) bool {
	if strings.HasPrefix(addr, "unix:") || strings.HasPrefix(addr, "unix-abstract:") {
		return true
	}
	if i := strings.Index(addr, "://"); i >= 0 {
		addr = addr[i+3:]
		if j := strings.LastIndex(addr, "/"); j >= 0 {
			addr = addr[j+1:]
		}
	}
	host, _, err := net.SplitHostPort(addr)
	if err != nil {
		host = addr
	}
	return isLoopbackHost(host)
}

// isLoopbackHost: "localhost" or a loopback IP.
func isLoopbackHost(host string) bool {
	host = strings.Trim(host, "[]")
	if strings.EqualFold(host, "localhost") {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

type bearer struct {
	token string
}

func (b bearer) GetRequestMetadata(_ context.Context, _ ...string) (map[string]string, error) {
	return map[string]string{"authorization": "Bearer " + b.token}, nil
}

func (b bearer) RequireTransportSecurity() bool { return false }

// serverAddress completes a --server value: a host without a port gets halovet's default
// port (gRPC would otherwise dial 443). Targets with a scheme (dns:///, unix:) pass as given.
func serverAddress(v string) (string, error) {
	v = strings.TrimSpace(v)
	if v == "" {
		return "", usageErr("--server is empty: give HOST[:PORT], e.g. 127.0.0.1:%s", defaultPort)
	}
	if strings.Contains(v, "://") || strings.HasPrefix(v, "unix:") {
		return v, nil
	}
	if _, port, err := net.SplitHostPort(v); err == nil {
		if port == "" {
			return v + defaultPort, nil
		}
		return v, nil
	}
	host := strings.TrimSuffix(strings.TrimPrefix(v, "["), "]")
	if strings.ContainsAny(host, "[]/ ") {
		return "", usageErr("--server %q: give HOST[:PORT], e.g. 127.0.0.1:%s or [::1]:%s", v, defaultPort, defaultPort)
	}
	return net.JoinHostPort(host, defaultPort), nil
}

// loadClientCert reads a client certificate chain and its key, and parses every
// certificate of the chain before anything is dialed: a truncated or damaged file is an
// error naming the file and the certificate, not a handshake the server refuses without
// a reason.
func loadClientCert(certFile, keyFile string) (tls.Certificate, error) {
	if certFile == "" || keyFile == "" {
		return tls.Certificate{}, usageErr("--tls-client-cert and --tls-client-key go together")
	}
	certPEM, err := os.ReadFile(certFile)
	if err != nil {
		return tls.Certificate{}, usageErr("--tls-client-cert: %v", err)
	}
	keyPEM, err := os.ReadFile(keyFile)
	if err != nil {
		return tls.Certificate{}, usageErr("--tls-client-key: %v", err)
	}
	rest, n := certPEM, 0
	for {
		var b *pem.Block
		b, rest = pem.Decode(rest)
		if b == nil {
			break
		}
		if b.Type != "CERTIFICATE" {
			return tls.Certificate{}, usageErr("--tls-client-cert %s: PEM block %d is a %q; the file must hold CERTIFICATE blocks only (the key goes in --tls-client-key)", certFile, n+1, b.Type)
		}
		n++
		if _, err := x509.ParseCertificate(b.Bytes); err != nil {
			return tls.Certificate{}, usageErr("--tls-client-cert %s: certificate %d does not parse, it is truncated or damaged (%v); accepted: PEM CERTIFICATE blocks of whole DER certificates, as the CA issued them", certFile, n, err)
		}
	}
	if strings.TrimSpace(string(rest)) != "" {
		return tls.Certificate{}, usageErr("--tls-client-cert %s: after %d whole certificate(s) the file holds text that is not a complete PEM block (cut off?); accepted: PEM CERTIFICATE blocks, each from BEGIN to END", certFile, n)
	}
	if n == 0 {
		return tls.Certificate{}, usageErr("--tls-client-cert %s holds no PEM certificate", certFile)
	}
	cert, err := tls.X509KeyPair(certPEM, keyPEM)
	if err != nil {
		return tls.Certificate{}, usageErr("--tls-client-cert %s with --tls-client-key %s: %v", certFile, keyFile, err)
	}
	return cert, nil
}
