package main

import (
	"context"
	"fmt"
	"io"
	"maps"
	"os"
	"slices"
	"strconv"
	"strings"

	"github.com/spf13/pflag"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/terms"
)

// The verbs that change one licence, or name the reporting Party: each a single call with
// a reason and an effective date, written to the audit log and the licence's history.

func init() {
	for _, v := range statusVerbs {
		addVerb(v.name, v.summary, v.usage, defineStatusVerb(v))
	}
	addVerb("amend", "amend a licence's validity or quota allocations from a date", amendUsage, defineAmend)
	addVerb("close-line", "close a quota line (and open another in its place)", closeLineUsage, defineCloseLine)
	addVerb("history", "show a licence's dated history: issue, status changes, amendments", historyUsage, defineHistory)
	addVerb("reporting-party", "name the reporting Party (the country running halovet)", reportingPartyUsage, defineReportingParty)
}

type statusVerb struct {
	name, summary, usage string
	status               halovetv1.LicenceStatus
}

const statusFlagsHelp = `
--reason is required: it goes into the audit log and the licence's history. --from
DATE (YYYY-MM-DD, default today) is the first day of the new status; it may lie in the
past (a declaration is judged by the status on its own date, so shipments declared
from that day on are refused and those declared before are not) but not before the
licence's last status change. --expected-version N refuses the change when the
licence is no longer at version N (see 'halovet licences --output json').`

var statusVerbs = []statusVerb{
	{"suspend", "suspend an active licence from a date", `suspend [flags] LICENCE --reason TEXT

Suspends an active licence from --from on: declarations dated on or after that day
are refused LICENCE_INACTIVE until it is reinstated; earlier ones are judged as the
licence stood then.
` + statusFlagsHelp + `

Examples:
  halovet suspend XA-IMP-2026-004 --from 2026-09-15 --reason "inspection pending"`, halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED},
	{"reinstate", "reinstate a suspended licence (or make a draft valid) from a date", `reinstate [flags] LICENCE --reason TEXT

Makes a suspended licence active again from --from on (a licence that is not
suspended is refused, naming its status); for a draft licence (from quota planning)
it makes the draft valid. A revoked licence cannot be reinstated.
` + statusFlagsHelp + `

Examples:
  halovet reinstate XA-IMP-2026-004 --from 2026-10-01 --reason "inspection passed"`, halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE},
	{"revoke", "revoke a licence for good from a date", `revoke [flags] LICENCE --reason TEXT

Revokes a licence from --from on, for good: it can be neither reinstated nor amended
afterwards. Declarations dated before that day are judged as the licence stood then.
` + statusFlagsHelp + `

Examples:
  halovet revoke XA-IMP-2026-004 --from 2026-11-01 --reason "company dissolved"`, halovetv1.LicenceStatus_LICENCE_STATUS_REVOKED},
}

// changeFlags are the flags of a verb that changes a licence.
type changeFlags struct {
	reason  string
	from    string
	version int32
}

func (c *changeFlags) register(fs *pflag.FlagSet) {
	fs.StringVar(&c.reason, "reason", "", "why (required): written to the audit log and the licence's history")
	fs.StringVar(&c.from, "from", "", "effective date YYYY-MM-DD (default today)")
	fs.Int32Var(&c.version, "expected-version", 0, "refuse the change unless the licence is at this version (0: no check)")
}

func (c *changeFlags) check() error {
	if strings.TrimSpace(c.reason) == "" {
		return usageErr("--reason is required: say why, for the audit log")
	}
	return nil
}

func defineStatusVerb(v statusVerb) func(fs *pflag.FlagSet) runFunc {
	return func(fs *pflag.FlagSet) runFunc {
		var cf clientFlags
		cf.register(fs)
		var ch changeFlags
		ch.register(fs)
		return func(ctx context.Context, args []string) error {
			if len(args) != 1 {
				return usageErr("give exactly one LICENCE number (see --help)")
			}
			if err := ch.check(); err != nil {
				return err
			}
			conn, err := cf.dial()
			if err != nil {
				return err
			}
			defer conn.Close()
			resp, err := halovetv1.NewLicensingServiceClient(conn).SetLicenceStatus(ctx, &halovetv1.SetLicenceStatusRequest{
				LicenceNumber: args[0], Status: v.status, Reason: ch.reason, EffectiveDate: ch.from, ExpectedVersion: ch.version})
			if err != nil {
				return err
			}
			l := resp.GetLicence()
			from := effectiveOrToday(ch.from)
			if h := l.GetStatusHistory(); len(h) > 0 {
				from = h[len(h)-1].GetFromDate()
			}
			fmt.Printf("licence %s %s from %s; status today %s (version %d)\n", l.GetLicenceNumber(), eventWord(resp.GetChange()),
				from, statusLabel(l.GetStatus()), l.GetVersion())
			return nil
		}
	}
}

func effectiveOrToday(d string) string {
	if d == "" {
		return "today"
	}
	return d
}

// eventWord is the text of a history entry's kind.
func eventWord(k halovetv1.LicenceEventKind) string {
	return strings.ToLower(strings.ReplaceAll(strings.TrimPrefix(k.String(), "LICENCE_EVENT_KIND_"), "_", " "))
}

const amendUsage = `amend [flags] LICENCE --reason TEXT

Amends a licence: reads it, applies the changes given, and sends it back with the
version read (a licence changed in between is refused, so no one's change is lost).

  --allocate LINE=AMOUNT   new allocation of quota line LINE, in the line's unit
                           (repeat for several lines); not below what is drawn
  --add-line SCOPE:UNIT:AMOUNT
                           a new quota line: SCOPE an Annex group (C/I) or a
                           substance (HCFC-22), UNIT metric-t, odp-t or co2e-t
  --valid-from DATE, --valid-to DATE
                           new first or last day of validity

A line that has draws keeps its unit and scope, and the licence its company: what
was drawn stays what it was. To count a line differently, close it and open another
('halovet close-line'). --from DATE (default today, not later) is the day the
amendment takes effect, for the history; --reason is required.

Examples:
  halovet amend XA-IMP-2026-001 --allocate 1=12.5 --reason "reallocation, decision 9/2026"
  halovet amend XA-IMP-2026-001 --add-line F/I:co2e-t:5000 --reason "HFC quota added"`

func defineAmend(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	var ch changeFlags
	fs.StringVar(&ch.reason, "reason", "", "why (required): written to the audit log and the licence's history")
	fs.StringVar(&ch.from, "from", "", "effective date YYYY-MM-DD (default today; not later)")
	allocate := fs.StringArray("allocate", nil, "LINE=AMOUNT: new allocation of a quota line, in its unit (repeatable)")
	addLine := fs.StringArray("add-line", nil, "SCOPE:UNIT:AMOUNT: a new quota line, e.g. C/I:odp-t:2.5 (repeatable)")
	validFrom := fs.String("valid-from", "", "new first day of validity YYYY-MM-DD")
	validTo := fs.String("valid-to", "", "new last day of validity YYYY-MM-DD")
	return func(ctx context.Context, args []string) error {
		if len(args) != 1 {
			return usageErr("give exactly one LICENCE number (see --help)")
		}
		if err := ch.check(); err != nil {
			return err
		}
		if len(*allocate) == 0 && len(*addLine) == 0 && *validFrom == "" && *validTo == "" {
			return usageErr("nothing to amend: give --allocate, --add-line, --valid-from or --valid-to (see --help)")
		}
		allocs := map[int32]string{}
		for _, a := range *allocate {
			ln, amt, ok := strings.Cut(a, "=")
			n, err1 := strconv.ParseInt(ln, 10, 32)
			v, err2 := exact.Parse(amt)
			if !ok || err1 != nil || err2 != nil || n < 1 || v.Sign() < 0 {
				return usageErr("--allocate %q: give LINE=AMOUNT with the amount a decimal 0 or more in the line's unit, e.g. 1=12.5", a)
			}
			allocs[int32(n)] = v.String()
		}
		var added []*halovetv1.QuotaLine
		for _, a := range *addLine {
			q, err := parseLineSpec("--add-line", a)
			if err != nil {
				return err
			}
			added = append(added, q)
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		client := halovetv1.NewLicensingServiceClient(conn)
		got, err := client.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: args[0]})
		if err != nil {
			return err
		}
		l := got.GetLicence()
		top := int32(0)
		for _, q := range l.GetQuotaLines() {
			if v, ok := allocs[q.GetLineNumber()]; ok {
				q.AllocatedAmount = v
				delete(allocs, q.GetLineNumber())
			}
			top = max(top, q.GetLineNumber())
		}
		if missing := slices.Sorted(maps.Keys(allocs)); len(missing) > 0 {
			return usageErr("--allocate: licence %s has no quota line %d", args[0], missing[0])
		}
		for _, q := range added {
			top++
			q.LineNumber = top
			l.QuotaLines = append(l.QuotaLines, q)
		}
		if *validFrom != "" {
			l.ValidFrom = *validFrom
		}
		if *validTo != "" {
			l.ValidTo = *validTo
		}
		resp, err := client.AmendLicence(ctx, &halovetv1.AmendLicenceRequest{Licence: l, Reason: ch.reason,
			EffectiveDate: ch.from, ExpectedVersion: l.GetVersion()})
		if err != nil {
			return err
		}
		out := &halovetv1.ListLicencesResponse{Licences: []*halovetv1.Licence{resp.GetLicence()}}
		fmt.Printf("licence %s amended from %s (version %d)\n\n", args[0], effectiveOrToday(ch.from), resp.GetLicence().GetVersion())
		return writeLicences(os.Stdout, out, "text")
	}
}

// parseLineSpec reads SCOPE:UNIT:AMOUNT. SCOPE is an Annex group when it holds a "/"
// (C/I, F/I), a substance otherwise.
func parseLineSpec(flag, spec string) (*halovetv1.QuotaLine, error) {
	i := strings.LastIndex(spec, ":")
	j := -1
	if i > 0 {
		j = strings.LastIndex(spec[:i], ":")
	}
	if j <= 0 {
		return nil, usageErr("%s %q: give SCOPE:UNIT:AMOUNT, e.g. C/I:odp-t:2.5 or HCFC-22:metric-t:40", flag, spec)
	}
	scope, unit, amount := spec[:j], spec[j+1:i], spec[i+1:]
	qu, err := terms.ParseQuotaUnit(unit)
	u := wireterms.QuotaUnitToWire(qu)
	if err != nil || qu == terms.QuotaUnitUnspecified {
		return nil, usageErr("%s %q: unit %q: use metric-t, odp-t or co2e-t", flag, spec, unit)
	}
	v, err := exact.Parse(amount)
	if err != nil || v.Sign() < 0 {
		return nil, usageErr("%s %q: amount %q is not a decimal 0 or more (plain notation with a point, e.g. 2.5)", flag, spec, amount)
	}
	q := &halovetv1.QuotaLine{Unit: u, AllocatedAmount: v.String()}
	if strings.Contains(scope, "/") {
		q.AnnexGroup = scope
	} else {
		q.Substance = scope
	}
	return q, nil
}

const closeLineUsage = `close-line [flags] LICENCE LINE --reason TEXT

Closes quota line LINE of a licence from --from on (default today, not later): its
allocation is cut to what it has drawn, so it takes no more draws, and its unit,
scope and draws stay as they were. --open SCOPE:UNIT:AMOUNT opens a new line in its
place (SCOPE an Annex group or a substance; UNIT metric-t, odp-t or co2e-t): the way
to count a line with draws in another unit or scope. --reason is required.

Examples:
  halovet close-line XA-IMP-2026-001 1 --open C/I:metric-t:40 --reason "quota in metric t from July"`

func defineCloseLine(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	var ch changeFlags
	ch.register(fs)
	open := fs.String("open", "", "SCOPE:UNIT:AMOUNT: a new line opened in its place")
	return func(ctx context.Context, args []string) error {
		if len(args) != 2 {
			return usageErr("give LICENCE and LINE (see --help)")
		}
		n, err := strconv.ParseInt(args[1], 10, 32)
		if err != nil || n < 1 {
			return usageErr("LINE %q: give the number of a quota line (1, 2, ...)", args[1])
		}
		if err := ch.check(); err != nil {
			return err
		}
		req := &halovetv1.CloseQuotaLineRequest{LicenceNumber: args[0], LineNumber: int32(n), Reason: ch.reason,
			EffectiveDate: ch.from, ExpectedVersion: ch.version}
		if *open != "" {
			if req.Successor, err = parseLineSpec("--open", *open); err != nil {
				return err
			}
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		resp, err := halovetv1.NewLicensingServiceClient(conn).CloseQuotaLine(ctx, req)
		if err != nil {
			return err
		}
		msg := fmt.Sprintf("licence %s line %d closed from %s", args[0], n, effectiveOrToday(ch.from))
		if s := resp.GetSuccessorLineNumber(); s != 0 {
			msg += fmt.Sprintf("; line %d opened in its place", s)
		}
		fmt.Println(msg + "\n")
		return writeLicences(os.Stdout, &halovetv1.ListLicencesResponse{Licences: []*halovetv1.Licence{resp.GetLicence()}}, "text")
	}
}

const historyUsage = `history [flags] LICENCE

Shows a licence's dated history, oldest first: its issue, every suspension,
reinstatement and revocation with the day it takes effect, every amendment and
closed quota line, each with the reason given, who made it and when it was recorded;
then the status from each day on (a declaration is judged by the period holding its
date). --output json prints the ListLicenceHistoryResponse.

Examples:
  halovet history XA-IMP-2026-005`

func defineHistory(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	output := fs.String("output", "text", "output: text (a table for people) or json")
	return func(ctx context.Context, args []string) error {
		if len(args) != 1 {
			return usageErr("give exactly one LICENCE number (see --help)")
		}
		if *output != "text" && *output != "json" {
			return usageErr("--output %q: use text or json", *output)
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		resp, err := halovetv1.ReadAllPages(ctx, halovetv1.NewLicensingServiceClient(conn).ListLicenceHistory,
			&halovetv1.ListLicenceHistoryRequest{LicenceNumber: args[0], PageSize: listPageSize}, "events")
		if err != nil {
			return err
		}
		if *output == "json" {
			return wirejson.Doc(os.Stdout, resp)
		}
		return writeHistory(os.Stdout, args[0], resp)
	}
}

func writeHistory(w io.Writer, number string, resp *halovetv1.ListLicenceHistoryResponse) error {
	fmt.Fprintf(w, "History of licence %s\n\n", number)
	tw := newTable(w)
	fmt.Fprintln(tw, "effective\tchange\tstatus from then\treason\tby\trecorded at\t")
	for _, e := range resp.GetEvents() {
		st := "-"
		if e.GetStatus() != halovetv1.LicenceStatus_LICENCE_STATUS_UNSPECIFIED {
			st = statusLabel(e.GetStatus())
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t\n", e.GetEffectiveDate(), eventWord(e.GetKind()), st, e.GetReason(), e.GetActor(), e.GetRecordedAt())
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(w, "\nStatus by date")
	tw = newTable(w)
	fmt.Fprintln(tw, "from\tstatus\t")
	for _, p := range resp.GetStatusHistory() {
		fmt.Fprintf(tw, "%s\t%s\t\n", p.GetFromDate(), statusLabel(p.GetStatus()))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}

const reportingPartyUsage = `reporting-party [flags] COUNTRY

Names the reporting Party: the country running halovet, whose consumption the
recorded shipments and national entries make up. COUNTRY is an ISO 3166-1 alpha-2
code whose party settings are stored ('halovet load'). Once shipments or national
entries are recorded the change is refused, since it changes whose consumption they
count in, unless --force is given with --reason (both audited).

Examples:
  halovet reporting-party XA
  halovet reporting-party XB --force --reason "register set up on the wrong country"`

func defineReportingParty(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	force := fs.Bool("force", false, "change it although shipments or national entries are recorded (needs --reason)")
	reason := fs.String("reason", "", "why, for the audit log (required with --force)")
	return func(ctx context.Context, args []string) error {
		if len(args) != 1 {
			return usageErr("give exactly one COUNTRY code (see --help)")
		}
		if *force && strings.TrimSpace(*reason) == "" {
			return usageErr("--force needs --reason: say why, for the audit log")
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		resp, err := halovetv1.NewLicensingServiceClient(conn).SetReportingParty(ctx, &halovetv1.SetReportingPartyRequest{
			CountryCode: args[0], Force: *force, Reason: *reason})
		if err != nil {
			return err
		}
		if resp.GetChanged() {
			fmt.Printf("%s (%s) is now the reporting Party\n", resp.GetParty().GetCountryCode(), resp.GetParty().GetName())
		} else {
			fmt.Printf("%s (%s) is the reporting Party already; nothing changed\n", resp.GetParty().GetCountryCode(), resp.GetParty().GetName())
		}
		return nil
	}
}
