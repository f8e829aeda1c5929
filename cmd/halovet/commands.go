package main

import (
	"context"
	"fmt"
	"os"
	"runtime/debug"
	"sort"
	"strings"
	"time"

	"github.com/spf13/cobra"
	"github.com/spf13/cobra/doc"
	"github.com/spf13/pflag"
)

// runFunc runs a verb with its positional arguments, after its flags are parsed.
type runFunc func(ctx context.Context, args []string) error

// verbDef is one verb of the halovet binary: define registers its flags on fs and
// returns the function that runs the verb with the parsed flags.
type verbDef struct {
	name, summary, usage string
	define               func(fs *pflag.FlagSet) runFunc
}

var verbs = map[string]verbDef{}

// verbGroups are the summaries of the verbs that group others ("credentials issue").
var verbGroups = map[string]string{}

// addVerb registers a verb. usage starts with the synopsis line ("check [flags] FILE"),
// then a blank line and the long description.
func addVerb(name, summary, usage string, define func(fs *pflag.FlagSet) runFunc) {
	verbs[name] = verbDef{name: name, summary: summary, usage: usage, define: define}
}

// version and commit are set at link time (make build: -ldflags "-X main.version=...
// -X main.commit=..."); otherwise they come from the binary's build information.
var version, commit = "", ""

func versionString() string {
	if version != "" {
		return version
	}
	if bi, ok := debug.ReadBuildInfo(); ok && bi.Main.Version != "" {
		return bi.Main.Version
	}
	return "(devel)"
}

// commitString is the commit the binary was built from, or "unknown".
func commitString() string {
	if commit != "" {
		return commit
	}
	if bi, ok := debug.ReadBuildInfo(); ok {
		for _, s := range bi.Settings {
			if s.Key == "vcs.revision" {
				return s.Value
			}
		}
	}
	return "unknown"
}

const exitCodeHelp = `Exit codes (every verb):
  0  success
  1  rejected: the input was read and answered, and some of it is refused
     (check: records rejected; compliance: a year exceeded; lookup: an
     identifier not resolved to one entry)
  2  unusable input: a bad command line, a missing or unreadable file, a file
     of another kind, or input the server refused as invalid
  3  server unreachable: nothing answered at --server (start one with
     'halovet serve' or set --server), or serve, migrate and demo could not
     reach their database
  4  failure: the server refused the call for another reason (permission) or
     failed; the message says which
  5  interrupted: check --record stopped part-way (the server refused a later
     message, or failed after answering some records); the message says how many
     were stored, and sending the whole file again is safe`

const rootLong = `halovet checks and reports the trade in ozone-depleting substances and HFCs.

Flags override HALOVET_* environment variables, which override the defaults.
Flags may come before or after the arguments; "--" ends the flags.

` + exitCodeHelp + `

Results are decision support: the treaty text, national law, the national
authority and licensed practice prevail.`

const jsonDialectHelp = `Every machine-readable output of halovet (--output json, the JSON Lines of lookup
and of check --report FILE.jsonl, the report.json of year-report --dir and the
console's report.json download) is written in one dialect:

  - keys are snake_case: the API's .proto field names, which are also the column
    names of --output csv;
  - every field is present, zeros included (0, false, "", []); a nested message that
    is not set (a figure that is unknown) is left out;
  - enums are lower-case words joined by hyphens, without the type's prefix:
    QUOTA_UNIT_CO2E_TONNES is "co2e-tonnes", OUTCOME_ACCEPTED_WITH_WARNINGS is
    "accepted-with-warnings";
  - integers are JSON numbers (counts are never strings); decimals are the shortest
    text that reads back as the same number;
  - fields come in the API's order, map entries sorted by key; a document is indented
    by two spaces; a JSON Lines record is one line.

CSV output has a header row with the same snake_case names, carries full values (text
output rounds for reading), and uses the same enum words.`

// newRoot builds the command tree. Every call makes fresh flags, so tests may run the
// command line many times in one process.
func newRoot(ctx context.Context) *cobra.Command {
	root := &cobra.Command{
		Use:           "halovet",
		Short:         "check and report the trade in ozone-depleting substances and HFCs",
		Long:          rootLong,
		Version:       versionString(),
		SilenceErrors: true,
		SilenceUsage:  true,
		// A mistyped verb gets "did you mean".
		SuggestionsMinimumDistance: 2,
	}
	root.SetVersionTemplate("halovet {{.Version}}\n")
	root.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return usageErr("%v (see --help)", err) })
	names := make([]string, 0, len(verbs))
	for n := range verbs {
		names = append(names, n)
	}
	sort.Strings(names)
	groups := map[string]*cobra.Command{}
	for _, n := range names {
		// "credentials issue": a verb of the group "credentials".
		if g, _, nested := strings.Cut(n, " "); nested {
			parent, ok := groups[g]
			if !ok {
				parent = &cobra.Command{Use: g, Short: verbGroups[g]}
				groups[g] = parent
				root.AddCommand(parent)
			}
			parent.AddCommand(verbCommand(ctx, verbs[n]))
			continue
		}
		root.AddCommand(verbCommand(ctx, verbs[n]))
	}
	root.AddCommand(&cobra.Command{
		Use:   "version",
		Short: "print halovet's version and the commit it was built from",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			_, err := fmt.Fprintf(cmd.OutOrStdout(), "halovet %s (commit %s)\n", versionString(), commitString())
			return err
		},
	})
	root.AddCommand(manCommand(root))
	root.AddCommand(&cobra.Command{Use: "json", Short: "the JSON and CSV every --output json|csv writes", Long: jsonDialectHelp})
	root.CompletionOptions.HiddenDefaultCmd = false
	return root
}

func verbCommand(ctx context.Context, v verbDef) *cobra.Command {
	synopsis, long, _ := strings.Cut(strings.TrimSpace(v.usage), "\n")
	if synopsis == "" {
		synopsis = v.name + " [flags]"
	}
	cmd := &cobra.Command{
		Use:   strings.TrimSpace(synopsis),
		Short: v.summary,
		Long:  strings.TrimSpace(long),
	}
	if v.usage == "" {
		// A verb registered with register parses its own flags.
		cmd.DisableFlagParsing = true
	}
	run := v.define(cmd.Flags())
	cmd.RunE = func(c *cobra.Command, args []string) error {
		return run(ctx, args)
	}
	if v.usage != "" {
		cmd.Long += "\n\n" + exitCodeHelp
	}
	return cmd
}

func manCommand(root *cobra.Command) *cobra.Command {
	return &cobra.Command{
		Use:   "man [DIR]",
		Short: "write the manual pages: halovet.1 to standard output, or one page per verb into DIR",
		Long: `Writes halovet's manual pages, generated from the same text as --help. Without DIR,
the page of halovet itself (with its list of verbs) goes to standard output, e.g.
  halovet man | man -l -
With DIR, one page per verb (halovet-check.1, ...) is written into DIR.`,
		Args: cobra.MaximumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			hdr := &doc.GenManHeader{Title: "HALOVET", Section: "1", Source: "halovet " + versionString(),
				Manual: "halovet manual", Date: manDate()}
			root.DisableAutoGenTag = true
			if len(args) == 0 {
				return doc.GenMan(root, hdr, cmd.OutOrStdout())
			}
			if err := os.MkdirAll(args[0], 0o755); err != nil {
				return usageErr("DIR %s: %v", args[0], err)
			}
			return doc.GenManTree(root, hdr, args[0])
		},
	}
}

// manDate is the pages' date: SOURCE_DATE_EPOCH when set, so that builds repeat.
func manDate() *time.Time {
	t := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	if v := os.Getenv("SOURCE_DATE_EPOCH"); v != "" {
		var sec int64
		if _, err := fmt.Sscan(v, &sec); err == nil {
			t = time.Unix(sec, 0).UTC()
		}
	}
	return &t
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

// envBoolDefault is envBool with a default for an unset variable; "0", "false", "no" and
// "off" turn it off.
func envBoolDefault(key string, def bool) bool {
	switch strings.ToLower(os.Getenv(key)) {
	case "":
		return def
	case "0", "false", "no", "off":
		return false
	}
	return envBool(key)
}

func envBool(key string) bool {
	switch strings.ToLower(os.Getenv(key)) {
	case "1", "true", "yes", "on":
		return true
	}
	return false
}
