package main

import (
	"context"
	"crypto/tls"
	"crypto/x509"
	"flag"
	"fmt"
	"os"

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
	tokenFile  string
}

func (c *clientFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&c.server, "server", envOr("HALOVET_SERVER", "127.0.0.1:7390"), "halovet server address (env HALOVET_SERVER)")
	fs.BoolVar(&c.useTLS, "tls", envBool("HALOVET_TLS"), "connect with TLS (env HALOVET_TLS); plaintext otherwise, meant for loopback")
	fs.StringVar(&c.caFile, "tls-ca", envOr("HALOVET_TLS_CA", ""), "PEM file of the CA that signed the server's certificate (default: system roots)")
	fs.StringVar(&c.serverName, "tls-server-name", envOr("HALOVET_TLS_SERVER_NAME", ""), "server name to verify in the certificate (default: the host of --server)")
	fs.StringVar(&c.tokenFile, "admin-token-file", envOr("HALOVET_ADMIN_TOKEN_FILE", ""), "file with the admin bearer token, for calls that change data")
}

// dial opens a client connection; it does not wait for the server.
func (c *clientFlags) dial() (*grpc.ClientConn, error) {
	var creds credentials.TransportCredentials = insecure.NewCredentials()
	if c.useTLS {
		cfg := &tls.Config{ServerName: c.serverName, MinVersion: tls.VersionTLS12}
		if c.caFile != "" {
			pem, err := os.ReadFile(c.caFile)
			if err != nil {
				return nil, fmt.Errorf("--tls-ca: %w", err)
			}
			pool := x509.NewCertPool()
			if !pool.AppendCertsFromPEM(pem) {
				return nil, usageErr("--tls-ca %s holds no PEM certificate", c.caFile)
			}
			cfg.RootCAs = pool
		}
		creds = credentials.NewTLS(cfg)
	}
	opts := []grpc.DialOption{grpc.WithTransportCredentials(creds)}
	if c.tokenFile != "" {
		b, err := os.ReadFile(c.tokenFile)
		if err != nil {
			return nil, fmt.Errorf("--admin-token-file: %w", err)
		}
		opts = append(opts, grpc.WithPerRPCCredentials(bearer{token: string(trimSpace(b)), secure: c.useTLS}))
	}
	conn, err := grpc.NewClient(c.server, opts...)
	if err != nil {
		return nil, fmt.Errorf("--server %s: %w", c.server, err)
	}
	return conn, nil
}

type bearer struct {
	token  string
	secure bool
}

func (b bearer) GetRequestMetadata(_ context.Context, _ ...string) (map[string]string, error) {
	return map[string]string{"authorization": "Bearer " + b.token}, nil
}

func (b bearer) RequireTransportSecurity() bool { return false }

func trimSpace(b []byte) []byte {
	for len(b) > 0 && (b[len(b)-1] == '\n' || b[len(b)-1] == '\r' || b[len(b)-1] == ' ') {
		b = b[:len(b)-1]
	}
	return b
}
