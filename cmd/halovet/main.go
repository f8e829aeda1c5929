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
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := run(ctx, os.Args[1:])
	stop()
	os.Exit(code)
}

var rpcErrorText = regexp.MustCompile(`rpc error: code = (\w+) desc = `)

// exitError carries a process exit code with its message.
type exitError struct {
	code int
	err  error
}

func (e *exitError) Error() string { return e.err.Error() }
func (e *exitError) Unwrap() error { return e.err }

// usageErr marks bad command-line input (exit code 2).
func usageErr(format string, args ...any) error {
	return &exitError{code: 2, err: fmt.Errorf(format, args...)}
}

func run(ctx context.Context, args []string) int {
	if len(args) == 0 || args[0] == "-h" || args[0] == "--help" || args[0] == "help" {
		printUsage(os.Stdout)
		return 0
	}
	cmd, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(os.Stderr, "halovet: unknown command %q\n\n", args[0])
		printUsage(os.Stderr)
		return 2
	}
	err := cmd.run(ctx, args[1:])
	if err == nil {
		return 0
	}
	if errors.Is(err, errHelpShown) {
		return 0
	}
	// One line: a wrapped driver error may span several.
	msg := strings.Join(strings.Fields(strings.ReplaceAll(err.Error(), "\n", "; ")), " ")
	// "rpc error: code = NotFound desc = ..." reads better as "the server answered NotFound: ...".
	msg = rpcErrorText.ReplaceAllString(msg, "the server answered $1: ")
	fmt.Fprintf(os.Stderr, "halovet %s: %s\n", args[0], msg)
	var ee *exitError
	if errors.As(err, &ee) {
		return ee.code
	}
	return 1
}
