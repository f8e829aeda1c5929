package main

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"
	"google.golang.org/protobuf/reflect/protoreflect"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/terms"
)

func init() {
	addVerb("load", "load parties, companies and licences from a JSON file", loadUsage, defineLoad)
	addVerb("licences", "list licences with their quota balances", licencesUsage, defineLicences)
}

const loadUsage = `load [flags] FILE

Loads a registry file into the server: party settings of countries, companies, and
licences with quota lines. The file is a JSON object with arrays "parties",
"companies" and "licences" whose items are the API's Party, Company and Licence
messages in protobuf JSON or halovet's JSON dialect (see testdata/demo/scenario.json).

The whole file is one transaction: when any object is refused, nothing is changed,
and the error names the object (e.g. licences[3] (XA-IMP-2026-004)) and why. New
parties, companies and licences are created; existing ones are changed to what the
file says, under the same rules as the single calls: a quota line with draws keeps
its unit and scope, and its licence its company; PutParty's rules keep the reporting
Party as it is (change it with 'halovet reporting-party'). A licence is brought to
the status the file gives it (ACTIVE reinstates a suspended licence), from its
"statusEffectiveDate" (default today); a licence without a status keeps its own.

Each object is reported as created, changed or unchanged, with the status changes.
--dry-run reports the same without writing anything. --reason is written to the audit
log and the licence histories (default "loaded from FILE").

Examples:
  halovet load --dry-run registry-2027.json
  halovet load --reason "2027 allocations, decision 14/2026" registry-2027.json`

// registryFile is the layout of a load file.
type registryFile struct {
	Parties   []json.RawMessage `json:"parties"`
	Companies []json.RawMessage `json:"companies"`
	Licences  []json.RawMessage `json:"licences"`
}

func defineLoad(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	dry := fs.Bool("dry-run", false, "report what the load would create and change, and write nothing")
	reason := fs.String("reason", "", `why, for the audit log and the licence histories (default "loaded from FILE")`)
	output := fs.String("output", "text", "output: text (a table for people) or json (the LoadRegistryResponse)")
	return func(ctx context.Context, args []string) error {
		if len(args) != 1 {
			return usageErr("give exactly one FILE (see --help)")
		}
		if *output != "text" && *output != "json" {
			return usageErr("--output %q: use text or json", *output)
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		resp, err := sendRegistry(ctx, conn, args[0], *reason, *dry)
		if err != nil {
			return err
		}
		if *output == "json" {
			return wirejson.Doc(os.Stdout, resp)
		}
		return writeLoadReport(os.Stdout, resp, args[0])
	}
}

// loadRegistry loads a registry file and returns a one-line account (the demo's step).
func loadRegistry(ctx context.Context, conn *grpc.ClientConn, path string) (string, error) {
	resp, err := sendRegistry(ctx, conn, path, "", false)
	if err != nil {
		return "", err
	}
	return loadSummary(resp, path), nil
}

// sendRegistry reads a registry file and sends it as one LoadRegistry call.
func sendRegistry(ctx context.Context, conn *grpc.ClientConn, path, reason string, dry bool) (*halovetv1.LoadRegistryResponse, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var rf registryFile
	if err := json.Unmarshal(b, &rf); err != nil {
		return nil, &exitError{code: 2, err: fmt.Errorf("%s: not a registry file: %w", path, err)}
	}
	if reason == "" {
		reason = "loaded from " + path
	}
	req := &halovetv1.LoadRegistryRequest{Reason: reason, DryRun: dry}
	for i, raw := range rf.Parties {
		p := &halovetv1.Party{}
		if err := wirejson.Unmarshal(raw, p); err != nil {
			return nil, &exitError{code: 2, err: fmt.Errorf("%s: parties[%d]: %w", path, i, err)}
		}
		req.Parties = append(req.Parties, p)
	}
	for i, raw := range rf.Companies {
		c := &halovetv1.Company{}
		if err := wirejson.Unmarshal(raw, c); err != nil {
			return nil, &exitError{code: 2, err: fmt.Errorf("%s: companies[%d]: %w", path, i, err)}
		}
		req.Companies = append(req.Companies, c)
	}
	for i, raw := range rf.Licences {
		l := &halovetv1.Licence{}
		if err := wirejson.Unmarshal(raw, l); err != nil {
			return nil, &exitError{code: 2, err: fmt.Errorf("%s: licences[%d]: %w", path, i, err)}
		}
		req.Licences = append(req.Licences, l)
	}
	resp, err := halovetv1.NewLicensingServiceClient(conn).LoadRegistry(ctx, req)
	if err != nil {
		return nil, fmt.Errorf("%s: nothing was changed: %w", path, err)
	}
	return resp, nil
}

var loadResultWord = map[halovetv1.LoadResult]string{
	halovetv1.LoadResult_LOAD_RESULT_CREATED: "created", halovetv1.LoadResult_LOAD_RESULT_CHANGED: "changed",
	halovetv1.LoadResult_LOAD_RESULT_UNCHANGED: "unchanged",
}

// loadSummary is one line: what was loaded, and how many objects were created, changed
// and left unchanged.
func loadSummary(resp *halovetv1.LoadRegistryResponse, path string) string {
	n := map[string]int{}
	by := map[halovetv1.LoadResult]int{}
	for _, o := range resp.GetObjects() {
		n[o.GetKind()]++
		by[o.GetResult()]++
	}
	verb := "loaded"
	if resp.GetDryRun() {
		verb = "dry run, nothing written: would load"
	}
	return fmt.Sprintf("%s %d parties, %d companies, %d licences from %s: %d created, %d changed, %d unchanged",
		verb, n["party"], n["company"], n["licence"], path,
		by[halovetv1.LoadResult_LOAD_RESULT_CREATED], by[halovetv1.LoadResult_LOAD_RESULT_CHANGED], by[halovetv1.LoadResult_LOAD_RESULT_UNCHANGED])
}

// writeLoadReport prints one row per object, then the summary.
func writeLoadReport(w io.Writer, resp *halovetv1.LoadRegistryResponse, path string) error {
	tw := newTable(w)
	fmt.Fprintln(tw, "object\tkey\tresult\tstatus change\t")
	for _, o := range resp.GetObjects() {
		ch := strings.Join(o.GetChanges(), "; ")
		if ch == "" {
			ch = "-"
		}
		fmt.Fprintf(tw, "%s[%d]	%s	%s	%s	\n", plural(o.GetKind()), o.GetIndex(), o.GetKey(), loadResultWord[o.GetResult()], ch)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := fmt.Fprintln(w, "\n"+loadSummary(resp, path))
	return err
}

func plural(kind string) string {
	switch kind {
	case "party":
		return "parties"
	case "company":
		return "companies"
	}
	return kind + "s"
}

const licencesUsage = `licences [flags]

Lists licences: holder, status, validity (first and last day), the directions and
special purposes covered, and each quota line with allocated, drawn and remaining in
the line's unit (metric t, ODP t or CO2-eq t) and the share used. A licence without
quota lines is listed once, with "-" for the line.

--output text (default) prints a table for people, ending with the decision-support
notice; --output csv one row per quota line (columns licence_number, company_id,
status, valid_from, valid_to, directions, special_purposes, line_number, annex_group,
substance, unit, allocated_amount, drawn_amount, remaining_amount (exact decimals in
the line's unit); lists joined by ";"); --output json the
ListLicencesResponse ('halovet help json').

Examples:
  halovet licences
  halovet licences --company XA-1001 --year 2026
  halovet licences --year 2026 --output csv > licences-2026.csv`

func defineLicences(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	company := fs.String("company", "", "only this company's licences")
	year := fs.Int("year", 0, "only licences valid on some day of this year")
	output := fs.String("output", "text", "output: text (a table for people), csv, or json (see 'halovet help json')")
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		switch *output {
		case "text", "csv", "json":
		default:
			return usageErr("--output %q: use text, csv or json", *output)
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		resp, err := halovetv1.ReadAllPages(ctx, halovetv1.NewLicensingServiceClient(conn).ListLicences,
			&halovetv1.ListLicencesRequest{CompanyId: *company, Year: int32(*year), PageSize: listPageSize}, "licences")
		if err != nil {
			return err
		}
		return writeLicences(os.Stdout, resp, *output)
	}
}

// printLicences lists the licences as text (the demo's step).
func printLicences(ctx context.Context, conn *grpc.ClientConn, w io.Writer, company string, year int32) error {
	resp, err := halovetv1.ReadAllPages(ctx, halovetv1.NewLicensingServiceClient(conn).ListLicences,
		&halovetv1.ListLicencesRequest{CompanyId: company, Year: year, PageSize: listPageSize}, "licences")
	if err != nil {
		return err
	}
	return writeLicences(w, resp, "text")
}

// words joins enum values as the JSON dialect spells them.
func words[E interface {
	Descriptor() protoreflect.EnumDescriptor
	Number() protoreflect.EnumNumber
}](vs []E, sep string) string {
	out := make([]string, len(vs))
	for i, v := range vs {
		out[i] = wirejson.EnumWord(v.Descriptor(), v.Number())
	}
	return strings.Join(out, sep)
}

func writeLicences(w io.Writer, resp *halovetv1.ListLicencesResponse, output string) error {
	switch output {
	case "json":
		return wirejson.Doc(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write([]string{"licence_number", "company_id", "status", "valid_from", "valid_to", "directions",
			"special_purposes", "line_number", "annex_group", "substance", "unit", "allocated_amount", "drawn_amount", "remaining_amount", "line_purposes"})
		for _, l := range resp.GetLicences() {
			head := []string{l.GetLicenceNumber(), l.GetCompanyId(), words([]halovetv1.LicenceStatus{l.GetStatus()}, ""),
				l.GetValidFrom(), l.GetValidTo(), words(l.GetDirections(), ";"), words(l.GetSpecialPurposes(), ";")}
			if len(l.GetQuotaLines()) == 0 {
				_ = cw.Write(append(head, "", "", "", "", "", "", "", ""))
			}
			for _, q := range l.GetQuotaLines() {
				_ = cw.Write(append(append([]string{}, head...), strconv.Itoa(int(q.GetLineNumber())), q.GetAnnexGroup(), q.GetSubstance(),
					words([]halovetv1.QuotaUnit{q.GetUnit()}, ""), q.GetAllocatedAmount(), q.GetDrawnAmount(), q.GetRemainingAmount(),
					words(q.GetPurposes(), ";")))
			}
		}
		cw.Flush()
		return cw.Error()
	}
	if len(resp.GetLicences()) == 0 {
		fmt.Fprintln(w, "No licences match.")
		_, err := io.WriteString(w, "\n"+reportFooter(nil))
		return err
	}
	tw := newTable(w)
	fmt.Fprintln(tw, "licence\tcompany\tstatus\tvalid from\tvalid to\tdirections\tline\tscope\tallocated\tdrawn\tremaining\tunit\tused %\t")
	for _, l := range resp.GetLicences() {
		dirs := words(l.GetDirections(), ",")
		if sp := words(l.GetSpecialPurposes(), ","); sp != "" {
			dirs += " (" + sp + ")"
		}
		head := fmt.Sprintf("%s\t%s\t%s\t%s\t%s\t%s\t", l.GetLicenceNumber(), l.GetCompanyId(), statusLabel(l.GetStatus()),
			l.GetValidFrom(), l.GetValidTo(), dirs)
		if len(l.GetQuotaLines()) == 0 {
			fmt.Fprintf(tw, "%s-\t-\t-\t-\t-\t-\t-\t\n", head)
		}
		for _, q := range l.GetQuotaLines() {
			scope := q.GetAnnexGroup()
			switch scope {
			case "":
				scope = q.GetSubstance()
			case "F":
				scope = "F (whole Annex)"
			}
			if p := words(q.GetPurposes(), ","); p != "" {
				scope += " for " + p
			}
			used := "-"
			if a := wireDec(q.GetAllocatedAmount()); a.Sign() > 0 {
				used = wireDec(q.GetDrawnAmount()).Shift(2).DivRound(a, 1).Fixed(1)
			}
			unit := quotaUnitSymbol(q.GetUnit())
			f := func(s string) string { return quotaShown(s, q.GetUnit()) }
			fmt.Fprintf(tw, "%s%d\t%s\t%s\t%s\t%s\t%s\t%s\t\n", head, q.GetLineNumber(), scope,
				f(q.GetAllocatedAmount()), f(q.GetDrawnAmount()), f(q.GetRemainingAmount()), unit, used)
		}
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}

func statusLabel(s halovetv1.LicenceStatus) string {
	if st, ok := wireterms.LicenceStatusFromWire(s); ok && st != terms.LicenceStatusUnspecified {
		return st.String()
	}
	return "?"
}

// quotaUnitSymbol prints a wire quota unit beside a figure ("ODP t"); "" when unspecified.
// quotaShown shows a quota amount (a wire decimal in the line's unit u) rounded for u's
// row of exact.Units.
func quotaShown(s string, u halovetv1.QuotaUnit) string {
	switch u {
	case halovetv1.QuotaUnit_QUOTA_UNIT_METRIC_TONNES:
		return shown(s, exact.Tonnes)
	case halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES:
		return shown(s, exact.ODPTonnes)
	case halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES:
		return shown(s, exact.CO2eTonnes)
	}
	return s
}

func quotaUnitSymbol(u halovetv1.QuotaUnit) string {
	d, _ := wireterms.QuotaUnitFromWire(u)
	return d.Symbol()
}
