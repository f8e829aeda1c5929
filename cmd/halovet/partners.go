package main

import (
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"regexp"
	"strconv"
	"strings"

	"github.com/spf13/pflag"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Partner reconciliation: import what partners report as exported to us, and compare it
// with the recorded imports.

func init() {
	addVerb("partners", "import partners' reported exports to us, or list the gaps against the recorded imports", partnersUsage, definePartners)
}

const partnersUsage = `partners [flags] FILE.csv
       partners --reconcile --year YEAR [--tolerance F] [--min-gap T] [flags]

Imports what trading partners report as their exports to the reporting Party, one
line per partner, substance and year; or, with --reconcile, compares them with the
imports recorded from each partner and lists every partner and substance whose
figures differ by more than the tolerance, with our shipment ids and the partner's
report keys. Such a gap is often the first sign of trade that passed no licence:
a missing import, a quantity declared short, a substance declared as another.

FILE is CSV with a header row naming these columns, in any order (* = required):
  * report_key       your own key for the line (e.g. XC-2026-HFC-134a); a stored key
                     is replaced
  * year             calendar year
  * partner_country  the exporting partner, ISO 3166-1 alpha-2 (e.g. XC)
  * substance        a single controlled substance (split blends by component)
  * metric_tonnes    metric tonnes, 0 or more
    source           where the figure comes from (the partner's data report)
Lines starting with # and blank lines are skipped. All or nothing: a file with a
wrong line stores nothing.

--reconcile exits 1 when it lists a gap, 0 when every pair agrees.

Examples:
  halovet partners partner-exports-2026.csv
  halovet partners --reconcile --year 2026 --tolerance 0.02`

var partnerColumns = []string{"report_key", "year", "partner_country", "substance", "metric_tonnes", "source"}

// readPartnerExports parses a partner file; errors name their lines.
func readPartnerExports(r io.Reader) ([]*halovetv1.PartnerExport, []int, []string) {
	cr := csv.NewReader(r)
	cr.Comment = '#'
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = true
	header, err := cr.Read()
	if err != nil {
		return nil, nil, []string{"line 1: the file is empty or unreadable; the first line must name the columns: " + strings.Join(partnerColumns, ",")}
	}
	var errs []string
	col := map[string]int{}
	for i, h := range header {
		name := strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")))
		known := false
		for _, c := range partnerColumns {
			known = known || c == name
		}
		if !known {
			errs = append(errs, fmt.Sprintf("line 1: unknown column %q; the columns are %s", name, strings.Join(partnerColumns, ", ")))
		}
		col[name] = i
	}
	for _, c := range partnerColumns[:5] {
		if _, ok := col[c]; !ok {
			errs = append(errs, fmt.Sprintf("line 1: required column %q is missing; the header must name %s (source is optional)", c, strings.Join(partnerColumns[:5], ", ")))
		}
	}
	if len(errs) > 0 {
		return nil, nil, errs
	}
	var out []*halovetv1.PartnerExport
	var lines []int
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		line, _ := cr.FieldPos(0)
		if err != nil {
			errs = append(errs, fmt.Sprintf("line %d: %v", line, err))
			continue
		}
		get := func(c string) string {
			if i, ok := col[c]; ok && i < len(rec) {
				return strings.TrimSpace(rec[i])
			}
			return ""
		}
		p := &halovetv1.PartnerExport{ReportKey: get("report_key"), PartnerCountry: get("partner_country"), Substance: get("substance"), Source: get("source")}
		if y, err := strconv.Atoi(get("year")); err != nil {
			errs = append(errs, fmt.Sprintf("line %d: year %q: give a calendar year such as 2026", line, get("year")))
		} else {
			p.Year = int32(y)
		}
		if !plainDecimal.MatchString(get("metric_tonnes")) {
			errs = append(errs, fmt.Sprintf("line %d: metric_tonnes %q: give a number of metric tonnes, 0 or more, with a decimal point", line, get("metric_tonnes")))
		} else {
			p.MetricTonnes = wireDec(strings.TrimSpace(get("metric_tonnes"))).String()
		}
		out = append(out, p)
		lines = append(lines, line)
	}
	if len(out) == 0 && len(errs) == 0 {
		errs = append(errs, "the file holds no lines after the header")
	}
	return out, lines, errs
}

var reportViolation = regexp.MustCompile(`^reports\[(\d+)\]\.?(.*)$`)

// partnerLineErrors rewrites the server's field violations with the file's line numbers.
func partnerLineErrors(err error, lines []int) error {
	return fileLineViolations(err, lines, reportViolation, "the server refused the file; nothing was stored")
}

func definePartners(fs *pflag.FlagSet) runFunc {
	var rf reportFlags
	rf.register(fs)
	reconcile := fs.Bool("reconcile", false, "list the gaps between partners' reported exports and our recorded imports")
	year := fs.Int("year", 0, "with --reconcile: the calendar year (required)")
	tol := fs.String("tolerance", "", "with --reconcile: a gap counts above this fraction of the larger figure, a decimal (default: the server's 0.05)")
	minGap := fs.String("min-gap", "", "with --reconcile: smallest gap listed, metric tonnes, a decimal (default: the server's 0.001)")
	return func(ctx context.Context, args []string) error {
		if *reconcile {
			if err := rf.check(args); err != nil {
				return err
			}
			if *year == 0 {
				return usageErr("--reconcile needs --year, e.g. --year 2026")
			}
		} else {
			if len(args) != 1 {
				return usageErr("give exactly one FILE.csv, or --reconcile --year YEAR (see --help)")
			}
			if err := rf.check(nil); err != nil {
				return err
			}
		}
		conn, err := rf.client.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		c := halovetv1.NewConsumptionServiceClient(conn)
		if !*reconcile {
			f, err := os.Open(args[0])
			if err != nil {
				return &exitError{code: 2, err: err}
			}
			defer f.Close()
			reports, lines, errs := readPartnerExports(f)
			if len(errs) > 0 {
				return &exitError{code: 2, err: fmt.Errorf("%s: nothing was stored:\n  %s", args[0], strings.Join(errs, "\n  "))}
			}
			resp, err := c.RecordPartnerExports(ctx, &halovetv1.RecordPartnerExportsRequest{Reports: reports})
			if err != nil {
				return partnerLineErrors(err, lines)
			}
			if rf.output == "json" {
				return wirejson.Doc(os.Stdout, resp)
			}
			fmt.Printf("stored %d partner figures from %s (new or replacing the figure of the same key)\n", len(resp.GetReports()), args[0])
			return nil
		}
		resp, err := c.ReconcilePartnerExports(ctx, &halovetv1.ReconcilePartnerExportsRequest{Year: int32(*year), ToleranceRatio: *tol, MinGapTonnes: *minGap})
		if err != nil {
			return err
		}
		if err := writeGaps(os.Stdout, resp, rf.output); err != nil {
			return err
		}
		if len(resp.GetGaps()) > 0 {
			return rejectedErr("%d partner and substance pairs of %d differ beyond the tolerance in %d", len(resp.GetGaps()), resp.GetPairsCompared(), *year)
		}
		return nil
	}
}

var gapHeader = []string{"partner_country", "substance", "year", "partner_t", "recorded_t", "gap_t", "shipment_ids", "report_keys"}

func gapRow(g *halovetv1.PartnerGap, f func(string) string) []string {
	ids := make([]string, len(g.GetShipmentIds()))
	for i, id := range g.GetShipmentIds() {
		ids[i] = strconv.FormatInt(id, 10)
	}
	return []string{g.GetPartnerCountry(), g.GetSubstance(), strconv.Itoa(int(g.GetYear())), f(g.GetPartnerTonnes()),
		f(g.GetRecordedTonnes()), f(g.GetGapTonnes()), strings.Join(ids, " "), strings.Join(g.GetReportKeys(), " ")}
}

func writeGaps(w io.Writer, resp *halovetv1.ReconcilePartnerExportsResponse, output string) error {
	switch output {
	case "json":
		return wirejson.Doc(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write(gapHeader)
		for _, g := range resp.GetGaps() {
			_ = cw.Write(gapRow(g, asIs))
		}
		cw.Flush()
		return cw.Error()
	}
	fmt.Fprintf(w, "Partners' reported exports against recorded imports, %d (tolerance %s of the larger figure)\n\n", resp.GetYear(), resp.GetToleranceRatio())
	if len(resp.GetGaps()) == 0 {
		fmt.Fprintf(w, "All %d partner and substance pairs agree.\n", resp.GetPairsCompared())
	} else {
		tw := newTable(w)
		fmt.Fprintln(tw, "partner\tsubstance\tyear\tpartner t\trecorded t\tgap t\tour shipments\tpartner figures\t")
		for _, g := range resp.GetGaps() {
			fmt.Fprintln(tw, strings.Join(gapRow(g, showT), "\t")+"\t")
		}
		if err := tw.Flush(); err != nil {
			return err
		}
		fmt.Fprintf(w, "\n%d of %d pairs differ. A positive gap: the partner reports more than we recorded (a missing or short import); negative: we recorded more, or under another substance.\n",
			len(resp.GetGaps()), resp.GetPairsCompared())
	}
	if ps := resp.GetPartnersNotReporting(); len(ps) > 0 {
		fmt.Fprintf(w, "\nNot compared (no figure reported for the year, which is not a report of zero): %s\n", strings.Join(ps, ", "))
	}
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}
