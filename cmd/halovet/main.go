// Command halovet is the halovet server and its command-line client: serve the gRPC API,
// apply migrations, run the demo, and check, look up and report for people at a terminal.
package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/signal"
	"regexp"
	"strings"
	"syscall"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := run(ctx, os.Args[1:])
	stop()
	os.Exit(code)
}

// The exit codes every verb shares; exitCodeHelp explains them.
const (
	exitOK          = 0
	exitRejected    = 1
	exitUsage       = 2
	exitUnreachable = 3
	exitFailure     = 4
	exitInterrupted = 5
)

var rpcErrorText = regexp.MustCompile(`rpc error: code = (\w+) desc = `)

// exitError carries a process exit code with its message.
type exitError struct {
	code int
	err  error
}

func (e *exitError) Error() string { return e.err.Error() }
func (e *exitError) Unwrap() error { return e.err }

// usageErr marks unusable input: the command line, or a file (exit code 2).
func usageErr(format string, args ...any) error {
	return &exitError{code: exitUsage, err: fmt.Errorf(format, args...)}
}

// rejectedErr marks an answer that refuses some of the input (exit code 1).
func rejectedErr(format string, args ...any) error {
	return &exitError{code: exitRejected, err: fmt.Errorf(format, args...)}
}

var errHelpShown = errors.New("help shown")

// dialedServer is the address the last client connection was made to, for the hint
// when nothing answers there.
var dialedServer string

// presentedCert is the client certificate file the last connection presented, if any.
var presentedCert string

// certificateAlerts are the TLS alerts (as crypto/tls words them) by which a server, or
// a TLS proxy in front of it, refuses the client certificate during the handshake.
var certificateAlerts = []string{"bad certificate", "unsupported certificate", "revoked certificate",
	"expired certificate", "unknown certificate authority", "unknown certificate", "certificate required",
	"access denied", "error decoding message"}

// certificateRefusal is the alert in msg by which the server refused the client
// certificate, if it did.
func certificateRefusal(msg string) (string, bool) {
	_, alert, ok := strings.Cut(msg, "remote error: tls: ")
	if !ok {
		return "", false
	}
	for _, a := range certificateAlerts {
		if strings.HasPrefix(alert, a) {
			// A decode error is about the certificate only when one was sent.
			if a == "error decoding message" && presentedCert == "" {
				return "", false
			}
			return a, true
		}
	}
	return "", false
}

func run(ctx context.Context, args []string) int {
	root := newRoot(ctx)
	root.SetArgs(args)
	root.SetOut(os.Stdout)
	root.SetErr(os.Stderr)
	dialedServer, presentedCert = "", ""
	cmd, err := root.ExecuteC()
	if err == nil || errors.Is(err, errHelpShown) {
		return exitOK
	}
	verb := "halovet"
	if cmd != nil && cmd != root {
		verb = "halovet " + cmd.Name()
	}
	code, msg := explain(err)
	fmt.Fprintf(os.Stderr, "%s: %s\n", verb, msg)
	return code
}

// explain gives an error its exit code and its one-line message.
func explain(err error) (int, string) {
	// One line: a wrapped driver error may span several. The "did you mean" list of an
	// unknown verb reads as one line too.
	msg := strings.Join(strings.Fields(strings.ReplaceAll(err.Error(), "\n", "; ")), " ")
	if verb, rest, ok := strings.Cut(err.Error(), "\n\nDid you mean this?\n"); ok {
		msg = strings.TrimSuffix(verb, ` for "halovet"`) + "; did you mean " + strings.Join(strings.Fields(rest), " or ") + "?"
	}
	// "rpc error: code = NotFound desc = ..." reads better as "the server answered NotFound: ...".
	msg = rpcErrorText.ReplaceAllString(msg, "the server answered $1: ")
	var ee *exitError
	if errors.As(err, &ee) {
		return ee.code, msg
	}
	if strings.HasPrefix(msg, "unknown command") || strings.HasPrefix(msg, "accepts ") ||
		strings.HasPrefix(msg, "unknown flag") || strings.HasPrefix(msg, "unknown shorthand flag") {
		return exitUsage, msg + " (see --help)"
	}
	if st, ok := status.FromError(unwrapAll(err)); ok {
		if alert, ok := certificateRefusal(msg); ok && st.Code() == codes.Unavailable {
			cert := "no client certificate was presented: give one with --tls-client-cert and --tls-client-key"
			switch {
			case presentedCert != "" && alert == "certificate required":
				cert = "the server named the CAs it accepts and none of them issued --tls-client-cert " + presentedCert + ", so it was not sent; use a certificate of a CA the server trusts"
			case presentedCert != "":
				cert = "check that --tls-client-cert " + presentedCert + " is issued by a CA the server trusts, valid today, and for client authentication"
			}
			return exitFailure, "authentication failed: the server refused the TLS client certificate during the handshake (TLS alert: " + alert + "), so no call was made; " + cert
		}
		switch st.Code() {
		case codes.Unavailable, codes.DeadlineExceeded:
			where := dialedServer
			if where == "" {
				where = "--server"
			}
			return exitUnreachable, msg + "; no halovet server answered at " + where +
				": start one with 'halovet serve', or give its address with --server HOST[:PORT] (or HALOVET_SERVER)"
		case codes.InvalidArgument, codes.NotFound, codes.OutOfRange, codes.AlreadyExists, codes.FailedPrecondition:
			return exitUsage, msg
		case codes.PermissionDenied, codes.Unauthenticated:
			return exitFailure, msg + "; give a credential of a role that may make this call with --credential-file (or HALOVET_CREDENTIAL_FILE); 'halovet credentials issue' makes one"
		}
	}
	return exitFailure, msg
}

// unwrapAll finds a gRPC status error inside wrapped errors.
func unwrapAll(err error) error {
	for e := err; e != nil; e = errors.Unwrap(e) {
		if _, ok := status.FromError(e); ok && status.Code(e) != codes.Unknown {
			return e
		}
	}
	return err
}
