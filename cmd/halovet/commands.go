package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"sort"
	"strings"
	"time"
)

// command is one verb of the halovet binary.
type command struct {
	summary string
	run     func(ctx context.Context, args []string) error
}

var commands = map[string]command{}

func register(name, summary string, run func(ctx context.Context, args []string) error) {
	commands[name] = command{summary: summary, run: run}
}

func printUsage(w io.Writer) {
	fmt.Fprint(w, `halovet checks and reports the trade in ozone-depleting substances and HFCs.

Usage: halovet <command> [flags]

Commands:
`)
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-12s %s\n", n, commands[n].summary)
	}
	fmt.Fprint(w, `
Run 'halovet <command> --help' for a command's flags. Flags override HALOVET_*
environment variables, which override the defaults.

Results are decision support: the treaty text, national law, the national
authority and licensed practice prevail.
`)
}

var errHelpShown = errors.New("help shown")

// newFlagSet makes a flag set whose --help prints the command's own usage text.
func newFlagSet(name, usage string) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(os.Stderr)
	fs.Usage = func() {
		// Each usage text starts with the verb's synopsis line.
		fmt.Fprintf(os.Stderr, "Usage: halovet %s\n\nFlags:\n", strings.TrimSpace(usage))
		fs.PrintDefaults()
	}
	return fs
}

// parseFlags parses args; --help is not an error, other problems are usage errors.
func parseFlags(fs *flag.FlagSet, args []string) error {
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return errHelpShown
		}
		return &exitError{code: 2, err: err}
	}
	return nil
}

func envOr(key, def string) string {
	if v, ok := os.LookupEnv(key); ok && v != "" {
		return v
	}
	return def
}

func envDuration(key string, def time.Duration) time.Duration {
	if v, ok := os.LookupEnv(key); ok && v != "" {
		if d, err := time.ParseDuration(v); err == nil {
			return d
		}
	}
	return def
}

func envBool(key string) bool {
	switch strings.ToLower(os.Getenv(key)) {
	case "1", "true", "yes", "on":
		return true
	}
	return false
}
