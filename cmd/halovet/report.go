package main

import (
	"context"
	"encoding/csv"
	"flag"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"text/tabwriter"

	"google.golang.org/grpc"
	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// The consumption reports: consumption, baseline, compliance and quotas. Each asks the
// server's ConsumptionService and prints the answer as a text table, CSV or protobuf JSON.

func init() {
	register("consumption", "report a year's consumption per Annex group and substance", runConsumption)
	register("baseline", "report the reporting Party's baseline of an Annex group, with its arithmetic", runBaseline)
	register("compliance", "compare consumption with the allowed level over years (and draw it as SVG)", runCompliance)
	register("quotas", "propose next year's quotas per company (largest remainder), optionally as draft licences", runQuotas)
}

// reportFlags are the flags every report verb shares.
type reportFlags struct {
	client clientFlags
	output string
}

func (r *reportFlags) register(fs *flag.FlagSet) {
	r.client.register(fs)
	fs.StringVar(&r.output, "output", "text", "output: text (a table for people), csv, or json (the API's response in protobuf JSON)")
}

// parse parses args and checks --output; positional arguments are refused.
func (r *reportFlags) parse(fs *flag.FlagSet, args []string) error {
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return usageErr("unexpected argument %q (see --help)", fs.Arg(0))
	}
	switch r.output {
	case "text", "csv", "json":
		return nil
	}
	return usageErr("--output %q: use text, csv or json", r.output)
}

// withConn dials the server and runs fn with the connection.
func (r *reportFlags) withConn(fn func(conn *grpc.ClientConn) error) error {
	conn, err := r.client.dial()
	if err != nil {
		return err
	}
	defer conn.Close()
	return fn(conn)
}

// writeProtoJSON prints a response in protobuf JSON, indented, ending with a newline.
func writeProtoJSON(w io.Writer, m proto.Message) error {
	b, err := protojson.MarshalOptions{Multiline: true, Indent: "  "}.Marshal(m)
	if err != nil {
		return err
	}
	_, err = fmt.Fprintf(w, "%s\n", b)
	return err
}

// Number formats. Text rounds for reading (0.001 t and ODP t, 1 CO2-eq t); CSV carries
// the full value.
func fmtTonnes(v float64) string { return fmtFixed(v, 3) }
func fmtCO2e(v float64) string   { return fmtFixed(v, 0) }
func fmtFull(v float64) string   { return strconv.FormatFloat(v, 'f', -1, 64) }

// fmtFixed rounds to d decimals and never prints "-0".
func fmtFixed(v float64, d int) string {
	s := strconv.FormatFloat(v, 'f', d, 64)
	if strings.Trim(s, "-0.") == "" {
		return strings.TrimPrefix(s, "-")
	}
	return s
}

// fmtUnit formats an amount in a unit by the text rules.
func fmtUnit(v float64, unit string) string {
	if unit == "CO2-eq t" {
		return fmtCO2e(v)
	}
	return fmtTonnes(v)
}

// newTable is the aligned table of the text reports.
func newTable(w io.Writer) *tabwriter.Writer {
	return tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
}

// writeNotes prints notes under a heading, each once.
func writeNotes(w io.Writer, heading string, notes []string) {
	seen := map[string]bool{}
	first := true
	for _, n := range notes {
		if n == "" || seen[n] {
			continue
		}
		seen[n] = true
		if first {
			fmt.Fprintf(w, "\n%s:\n", heading)
			first = false
		}
		fmt.Fprintf(w, "  - %s\n", n)
	}
}

// ---- consumption -------------------------------------------------------------------

const consumptionUsage = `consumption --year YEAR [flags]

Reports the reporting Party's calculated consumption in YEAR per Annex group and
substance: production + imports − exports to Parties − destruction − feedstock use −
QPS use of methyl bromide, in metric tonnes, ODP tonnes (the figure compared for
Annexes A to E) and CO2-eq tonnes (the figure compared for Annex F). Imports and
exports of used, recycled or reclaimed substance and goods in transit are shown as
"not counted"; exports to non-Parties are shown but not deducted. Blends count per
component in each component's group. A negative result is reported as negative.

Figures come from the recorded shipments and the national entries (production,
destruction, feedstock, QPS, historical totals; see 'halovet entries').

Examples:
  halovet consumption --year 2026
  halovet consumption --year 2026 --group C/I --output csv > hcfc-2026.csv`

func runConsumption(ctx context.Context, args []string) error {
	fs := newFlagSet("consumption", consumptionUsage)
	var rf reportFlags
	rf.register(fs)
	year := fs.Int("year", 0, "calendar year (required)")
	group := fs.String("group", "", "only this Annex group (C/I, F/I, ...) or F for Annex F as a whole")
	if err := rf.parse(fs, args); err != nil {
		return err
	}
	if *year == 0 {
		return usageErr("--year is required, e.g. --year 2026")
	}
	return rf.withConn(func(conn *grpc.ClientConn) error {
		resp, err := halovetv1.NewConsumptionServiceClient(conn).GetConsumption(ctx,
			&halovetv1.GetConsumptionRequest{Year: int32(*year), AnnexGroup: *group})
		if err != nil {
			return err
		}
		return writeConsumption(os.Stdout, resp, rf.output)
	})
}

var consumptionCSVHeader = []string{"annex_group", "substance", "production_t", "imports_t", "exports_t",
	"destruction_t", "feedstock_t", "qps_t", "not_counted_t", "exports_non_party_t", "consumption_t",
	"consumption_odp_t", "consumption_co2e_t"}

func consumptionRow(group, name string, s *halovetv1.SubstanceConsumption, f func(float64) string) []string {
	return []string{group, name, f(s.GetProductionTonnes()), f(s.GetImportTonnes()), f(s.GetExportTonnes()),
		f(s.GetDestructionTonnes()), f(s.GetFeedstockTonnes()), f(s.GetQpsTonnes()), f(s.GetNotCountedTonnes()),
		f(s.GetExportNonPartyTonnes()), f(s.GetConsumptionTonnes())}
}

// groupTotal adds up a group's substance columns for its total row.
func groupTotal(g *halovetv1.GroupConsumption) *halovetv1.SubstanceConsumption {
	t := &halovetv1.SubstanceConsumption{}
	for _, s := range g.GetSubstances() {
		t.ProductionTonnes += s.GetProductionTonnes()
		t.ImportTonnes += s.GetImportTonnes()
		t.ExportTonnes += s.GetExportTonnes()
		t.DestructionTonnes += s.GetDestructionTonnes()
		t.FeedstockTonnes += s.GetFeedstockTonnes()
		t.QpsTonnes += s.GetQpsTonnes()
		t.NotCountedTonnes += s.GetNotCountedTonnes()
		t.ExportNonPartyTonnes += s.GetExportNonPartyTonnes()
	}
	t.ConsumptionTonnes = g.GetConsumptionTonnes()
	t.ConsumptionOdpTonnes = g.GetConsumptionOdpTonnes()
	t.ConsumptionCo2ETonnes = g.GetConsumptionCo2ETonnes()
	return t
}

func writeConsumption(w io.Writer, resp *halovetv1.GetConsumptionResponse, output string) error {
	switch output {
	case "json":
		return writeProtoJSON(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write(consumptionCSVHeader)
		for _, g := range resp.GetGroups() {
			for _, s := range g.GetSubstances() {
				_ = cw.Write(append(consumptionRow(g.GetAnnexGroup(), s.GetSubstance(), s, fmtFull),
					fmtFull(s.GetConsumptionOdpTonnes()), fmtFull(s.GetConsumptionCo2ETonnes())))
			}
			t := groupTotal(g)
			_ = cw.Write(append(consumptionRow(g.GetAnnexGroup(), "total", t, fmtFull),
				fmtFull(t.GetConsumptionOdpTonnes()), fmtFull(t.GetConsumptionCo2ETonnes())))
		}
		cw.Flush()
		return cw.Error()
	}
	party := resp.GetCountryCode()
	if party == "" {
		party = "(no reporting Party configured)"
	}
	fmt.Fprintf(w, "Consumption of %s in %d\n", party, resp.GetYear())
	fmt.Fprintln(w, "consumption = production + imports − exports to Parties − destroyed − feedstock − QPS")
	fmt.Fprintln(w)
	if len(resp.GetGroups()) == 0 {
		fmt.Fprintln(w, "No group has any activity in this year.")
	} else {
		tw := newTable(w)
		fmt.Fprintln(tw, "group\tsubstance\tproduction t\timports t\texports t\tdestroyed t\tfeedstock t\tQPS t\tnot counted t\tto non-Parties t\tconsumption t\tODP t\tCO2-eq t\t")
		for _, g := range resp.GetGroups() {
			for _, s := range g.GetSubstances() {
				fmt.Fprintln(tw, strings.Join(append(consumptionRow(g.GetAnnexGroup(), s.GetSubstance(), s, fmtTonnes),
					fmtTonnes(s.GetConsumptionOdpTonnes()), fmtCO2e(s.GetConsumptionCo2ETonnes())), "\t")+"\t")
			}
			t := groupTotal(g)
			fmt.Fprintln(tw, strings.Join(append(consumptionRow(g.GetAnnexGroup(), "total", t, fmtTonnes),
				fmtTonnes(t.GetConsumptionOdpTonnes()), fmtCO2e(t.GetConsumptionCo2ETonnes())), "\t")+"\t")
		}
		if err := tw.Flush(); err != nil {
			return err
		}
		fmt.Fprintln(w, "\nCompared with the allowed level: ODP t for Annexes A to E, CO2-eq t for Annex F (Groups I and II together).")
	}
	writeNotes(w, "Notes", resp.GetNotes())
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}

// ---- baseline ----------------------------------------------------------------------

const baselineUsage = `baseline --group GROUP [flags]

Reports the reporting Party's baseline for an Annex group, following its party type
(and, for Annex F, its HFC group): the base years and their consumption, the mean,
the 2.8 % CFC term of a non-Article 5 HCFC baseline, and for HFCs the HCFC baseline
recomputed in CO2-eq from base-year tonnages per substance and the share of it added
(15 %, 25 % or 65 %). A baseline that cannot be computed names the missing years and
the substances to enter for them (see 'halovet entries').

Examples:
  halovet baseline --group C/I
  halovet baseline --group F --output json`

func runBaseline(ctx context.Context, args []string) error {
	fs := newFlagSet("baseline", baselineUsage)
	var rf reportFlags
	rf.register(fs)
	group := fs.String("group", "", "Annex group (A/I ... E/I), or F for HFCs (required)")
	if err := rf.parse(fs, args); err != nil {
		return err
	}
	if *group == "" {
		return usageErr("--group is required, e.g. --group C/I or --group F")
	}
	return rf.withConn(func(conn *grpc.ClientConn) error {
		resp, err := halovetv1.NewConsumptionServiceClient(conn).GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: *group})
		if err != nil {
			return err
		}
		return writeBaseline(os.Stdout, resp, rf.output)
	})
}

func yearRows(part string, ys []*halovetv1.BaselineYear, unit string, f func(float64) string) [][]string {
	var rows [][]string
	for _, y := range ys {
		has := "yes"
		if !y.GetHasData() {
			has = "no data"
		}
		rows = append(rows, []string{part, strconv.Itoa(int(y.GetYear())), f(y.GetAmount()), unit, has})
	}
	return rows
}

// baselineRows lists the arithmetic: the base years, the CFC years, the HCFC part's years
// and the summary lines.
func baselineRows(resp *halovetv1.GetBaselineResponse, f func(float64) string) [][]string {
	u := resp.GetUnit()
	rows := yearRows(resp.GetAnnexGroup(), resp.GetYears(), u, f)
	rows = append(rows, []string{resp.GetAnnexGroup() + " mean", "", f(resp.GetMean()), u, ""})
	if len(resp.GetCfcYears()) > 0 {
		rows = append(rows, yearRows("A/I (CFC term)", resp.GetCfcYears(), u, f)...)
		rows = append(rows, []string{fmt.Sprintf("CFC term (%s %% of A/I)", fmtFull(resp.GetCfcShare()*100)), "", f(resp.GetCfcTerm()), u, ""})
	}
	if h := resp.GetHcfcBaseline(); h != nil {
		hu := h.GetUnit()
		rows = append(rows, yearRows(h.GetAnnexGroup()+" in CO2-eq", h.GetYears(), hu, f)...)
		if len(h.GetCfcYears()) > 0 {
			rows = append(rows, yearRows("A/I in CO2-eq (CFC term)", h.GetCfcYears(), hu, f)...)
			rows = append(rows, []string{fmt.Sprintf("CFC term in CO2-eq (%s %%)", fmtFull(h.GetCfcShare()*100)), "", f(h.GetCfcTerm()), hu, ""})
		}
		rows = append(rows, []string{"HCFC baseline in CO2-eq", "", f(h.GetValue()), hu, completeWord(h.GetComplete())})
		rows = append(rows, []string{fmt.Sprintf("HCFC component (%s %%)", fmtFull(resp.GetHcfcShare()*100)), "", f(resp.GetHcfcComponent()), u, ""})
	}
	rows = append(rows, []string{"baseline", "", f(resp.GetBaseline()), u, completeWord(resp.GetComplete())})
	return rows
}

func completeWord(ok bool) string {
	if ok {
		return "complete"
	}
	return "incomplete"
}

func writeBaseline(w io.Writer, resp *halovetv1.GetBaselineResponse, output string) error {
	switch output {
	case "json":
		return writeProtoJSON(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write([]string{"part", "year", "amount", "unit", "data"})
		for _, r := range baselineRows(resp, fmtFull) {
			_ = cw.Write(r)
		}
		cw.Flush()
		return cw.Error()
	}
	u := resp.GetUnit()
	fmt.Fprintf(w, "Baseline for %s (%s schedule)\n", resp.GetAnnexGroup(), resp.GetAppliesTo())
	fmt.Fprintf(w, "Rule: %s\n\n", resp.GetRule())
	f := func(v float64) string { return fmtUnit(v, u) }
	tw := newTable(w)
	fmt.Fprintln(tw, "part\tyear\tamount\tunit\tdata\t")
	for _, r := range baselineRows(resp, f) {
		fmt.Fprintln(tw, strings.Join(r, "\t")+"\t")
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if resp.GetComplete() {
		fmt.Fprintf(w, "\nBaseline: %s %s\n", fmtUnit(resp.GetBaseline(), u), u)
	} else {
		fmt.Fprintln(w, "\nThe baseline cannot be computed: data are missing.")
		writeNotes(w, "Missing", resp.GetMissing())
	}
	writeNotes(w, "Notes", resp.GetNotes())
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}

// ---- compliance --------------------------------------------------------------------

const complianceUsage = `compliance --group GROUP --from YEAR --to YEAR [flags]

Compares the reporting Party's consumption of an Annex group (F: Annex F as a whole)
with the allowed level of the control schedule in each year from --from to --to:
allowed percent of baseline, allowed level, headroom (allowed − consumption; negative
when exceeded) and an outcome: within, EXCEEDED, or not assessed (no data, no baseline
or no rule; the notes say which). The servicing tails are reported as the schedules
set them: a non-Article 5 Party's annual 0.5 % cap for HCFCs in 2020-2029, and an
Article 5 Party's ten-year average of 2.5 % over 2030-2039, shown as the running
average and the room left for the rest of the period.

--chart FILE.svg also draws consumption (points joined by a line) against the
allowed level (a step line) over the years, as a self-contained SVG file.

Examples:
  halovet compliance --group C/I --from 2020 --to 2026
  halovet compliance --group F --from 2024 --to 2026 --chart hfc.svg
  halovet compliance --group C/I --from 2013 --to 2026 --output csv`

func runCompliance(ctx context.Context, args []string) error {
	fs := newFlagSet("compliance", complianceUsage)
	var rf reportFlags
	rf.register(fs)
	group := fs.String("group", "", "Annex group (A/I ... E/I), or F for HFCs (required)")
	from := fs.Int("from", 0, "first year (required)")
	to := fs.Int("to", 0, "last year (default: --from)")
	chart := fs.String("chart", "", "also write an SVG chart of consumption against the allowed level to this file")
	if err := rf.parse(fs, args); err != nil {
		return err
	}
	if *group == "" || *from == 0 {
		return usageErr("--group and --from are required, e.g. --group C/I --from 2020 --to 2026")
	}
	if *to == 0 {
		*to = *from
	}
	if *chart != "" && !strings.HasSuffix(strings.ToLower(*chart), ".svg") {
		return usageErr("--chart %q: give a file name ending in .svg", *chart)
	}
	return rf.withConn(func(conn *grpc.ClientConn) error {
		resp, err := halovetv1.NewConsumptionServiceClient(conn).AssessCompliance(ctx,
			&halovetv1.AssessComplianceRequest{AnnexGroup: *group, FromYear: int32(*from), ToYear: int32(*to)})
		if err != nil {
			return err
		}
		if *chart != "" {
			if err := writeChartFile(*chart, resp); err != nil {
				return err
			}
		}
		if err := writeCompliance(os.Stdout, resp, rf.output); err != nil {
			return err
		}
		if *chart != "" && rf.output == "text" {
			fmt.Fprintf(os.Stderr, "chart written to %s\n", *chart)
		}
		return nil
	})
}

func outcomeWord(o halovetv1.ComplianceOutcome) string {
	switch o {
	case halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN:
		return "within"
	case halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED:
		return "EXCEEDED"
	case halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED:
		return "not assessed"
	}
	return "?"
}

// complianceRow is one year; a figure the year lacks is left empty.
func complianceRow(y *halovetv1.ComplianceYear, f func(float64) string) []string {
	assessed := y.GetOutcome() == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN ||
		y.GetOutcome() == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED
	cons, allowed, head, pct := "", "", "", ""
	if y.GetHasData() {
		cons = f(y.GetConsumption())
	}
	if assessed || y.GetAllowed() != 0 || y.GetAllowedPercent() != 0 {
		pct = fmtFull(y.GetAllowedPercent())
	}
	if assessed || y.GetAllowed() != 0 {
		allowed = f(y.GetAllowed()) // known without data when the baseline is complete
	}
	if assessed {
		head = f(y.GetHeadroom())
	}
	avg, room := "", ""
	if p := y.GetPeriod(); p != nil {
		avg, room = f(p.GetRunningAverage()), f(p.GetRoomLeft())
	}
	return []string{strconv.Itoa(int(y.GetYear())), cons, pct, allowed, head, outcomeWord(y.GetOutcome()), avg, room}
}

func writeCompliance(w io.Writer, resp *halovetv1.AssessComplianceResponse, output string) error {
	u := resp.GetUnit()
	switch output {
	case "json":
		return writeProtoJSON(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write([]string{"year", "consumption", "allowed_percent", "allowed", "headroom", "outcome",
			"period_running_average", "period_room_left", "unit", "annex_group"})
		for _, y := range resp.GetYears() {
			r := complianceRow(y, fmtFull)
			r[5] = strings.ToLower(strings.ReplaceAll(r[5], " ", "-"))
			_ = cw.Write(append(r, u, resp.GetAnnexGroup()))
		}
		cw.Flush()
		return cw.Error()
	}
	fmt.Fprintf(w, "Compliance of %s (%s schedule)\n", resp.GetAnnexGroup(), resp.GetAppliesTo())
	if resp.GetBaselineComplete() {
		fmt.Fprintf(w, "Baseline: %s %s\n", fmtUnit(resp.GetBaseline(), u), u)
	} else {
		fmt.Fprintln(w, "Baseline: cannot be computed, data are missing (years needing it are not assessed)")
	}
	fmt.Fprintf(w, "Schedule: %s\n\n", resp.GetScheduleSource())
	f := func(v float64) string { return fmtUnit(v, u) }
	tw := newTable(w)
	fmt.Fprintf(tw, "year\tconsumption %s\tallowed %%\tallowed %s\theadroom %s\toutcome\trunning average %s\troom left %s\t\n", u, u, u, u, u)
	for _, y := range resp.GetYears() {
		fmt.Fprintln(tw, strings.Join(complianceRow(y, f), "\t")+"\t")
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if !resp.GetBaselineComplete() {
		writeNotes(w, "Missing for the baseline", resp.GetBaselineMissing())
	}
	// Notes repeat from year to year (the step in force): print each once with its years.
	type noteYears struct {
		text  string
		years []int
	}
	var notes []*noteYears
	idx := map[string]*noteYears{}
	for _, y := range resp.GetYears() {
		for _, n := range y.GetNotes() {
			ny := idx[n]
			if ny == nil {
				ny = &noteYears{text: n}
				idx[n] = ny
				notes = append(notes, ny)
			}
			ny.years = append(ny.years, int(y.GetYear()))
		}
	}
	var lines []string
	for _, n := range notes {
		lines = append(lines, fmt.Sprintf("%s: %s", yearList(n.years), n.text))
	}
	writeNotes(w, "Notes", lines)
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}

// yearList writes consecutive years as a span: 2020 2021 2022 2025 → "2020–2022, 2025".
func yearList(ys []int) string {
	var out []string
	for i := 0; i < len(ys); {
		j := i
		for j+1 < len(ys) && ys[j+1] == ys[j]+1 {
			j++
		}
		if j > i {
			out = append(out, fmt.Sprintf("%d–%d", ys[i], ys[j]))
		} else {
			out = append(out, strconv.Itoa(ys[i]))
		}
		i = j + 1
	}
	return strings.Join(out, ", ")
}

// ---- quotas ------------------------------------------------------------------------

const quotasUsage = `quotas --year YEAR --group GROUP --reference-years Y1,Y2 [flags]

Proposes quotas for YEAR: the allowed level of the group in YEAR (times --fraction, to
hold a reserve back) is split among the companies in proportion to their recorded
imports that count in consumption over the reference years, in the group's unit (ODP t,
or CO2-eq t for F), by the largest-remainder method in whole units of --granularity, so
the total never exceeds the allowed level. --issue-drafts stores each proposal above 0
as a DRAFT import licence numbered <group>-DRAFT-<year>-<company> (planning again
amends the drafts); activate a draft with the licensing API once decided.

Examples:
  halovet quotas --year 2027 --group C/I --reference-years 2025,2026
  halovet quotas --year 2027 --group F --reference-years 2026 --fraction 0.95 --granularity 1
  halovet quotas --year 2027 --group C/I --reference-years 2026 --issue-drafts`

func runQuotas(ctx context.Context, args []string) error {
	fs := newFlagSet("quotas", quotasUsage)
	var rf reportFlags
	rf.register(fs)
	year := fs.Int("year", 0, "year the quotas are for (required)")
	group := fs.String("group", "", "Annex group (C/I, E/I, ...) or F for HFCs (required)")
	refs := fs.String("reference-years", "", "comma-separated years whose recorded imports set each company's share (required)")
	fraction := fs.Float64("fraction", 1, "part of the allowed level to distribute, above 0 and at most 1")
	gran := fs.Float64("granularity", 0.001, "smallest unit of allocation in the group's unit")
	drafts := fs.Bool("issue-drafts", false, "store the proposals as draft licences (needs the admin token when the server asks for one)")
	if err := rf.parse(fs, args); err != nil {
		return err
	}
	if *year == 0 || *group == "" || *refs == "" {
		return usageErr("--year, --group and --reference-years are required, e.g. --year 2027 --group C/I --reference-years 2025,2026")
	}
	var years []int32
	for _, s := range strings.Split(*refs, ",") {
		y, err := strconv.Atoi(strings.TrimSpace(s))
		if err != nil {
			return usageErr("--reference-years: %q is not a year; give years separated by commas, e.g. 2025,2026", s)
		}
		years = append(years, int32(y))
	}
	return rf.withConn(func(conn *grpc.ClientConn) error {
		resp, err := halovetv1.NewConsumptionServiceClient(conn).PlanQuotas(ctx, &halovetv1.PlanQuotasRequest{Year: int32(*year),
			AnnexGroup: *group, ReferenceYears: years, Fraction: *fraction, Granularity: *gran, IssueDrafts: *drafts})
		if err != nil {
			return err
		}
		return writeQuotas(os.Stdout, resp, rf.output)
	})
}

func writeQuotas(w io.Writer, resp *halovetv1.PlanQuotasResponse, output string) error {
	u := resp.GetUnit()
	switch output {
	case "json":
		return writeProtoJSON(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write([]string{"company_id", "reference_amount", "reference_share", "exact_share", "quota", "unit", "draft_licence_number"})
		for _, p := range resp.GetProposals() {
			_ = cw.Write([]string{p.GetCompanyId(), fmtFull(p.GetReferenceAmount()), fmtFull(p.GetReferenceShare()),
				fmtFull(p.GetExactShare()), fmtFull(p.GetQuota()), u, p.GetDraftLicenceNumber()})
		}
		cw.Flush()
		return cw.Error()
	}
	f := func(v float64) string { return fmtUnit(v, u) }
	exact := 6 // three decimals finer than the unit's display
	if u == "CO2-eq t" {
		exact = 3
	}
	fmt.Fprintf(w, "Quota plan for %s in %d\n", resp.GetAnnexGroup(), resp.GetYear())
	fmt.Fprintf(w, "Allowed level: %s %s (%s %% of baseline)\n", f(resp.GetAllowed()), u, fmtFull(resp.GetAllowedPercent()))
	fmt.Fprintf(w, "To distribute: %s %s; distributed: %s %s\n\n", f(resp.GetDistributable()), u, f(resp.GetDistributed()), u)
	tw := newTable(w)
	fmt.Fprintf(tw, "company\treference %s\tshare %%\texact share %s\tquota %s\tdraft licence\t\n", u, u, u)
	for _, p := range resp.GetProposals() {
		d := p.GetDraftLicenceNumber()
		if d == "" {
			d = "-"
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t\n", p.GetCompanyId(), f(p.GetReferenceAmount()),
			fmtFixed(p.GetReferenceShare()*100, 2), fmtFixed(p.GetExactShare(), exact), f(p.GetQuota()), d)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	writeNotes(w, "Notes", resp.GetNotes())
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}

// ---- the demo's reporting part -----------------------------------------------------

func init() { demoConsumption = demoReports }

// demoYear is the year of the demo batch (testdata/demo/README.md: declared in 2026).
const demoYear = 2026

// demoReports is the reporting part of 'halovet demo': it imports the scenario's national
// entries (national_entries.csv in the scenario directory, when there is one: invented
// historical totals for the base years), then reports the batch year's consumption, the
// HCFC and HFC baselines, compliance over three years with an SVG chart, and a quota plan
// for the next year (proposals only, no drafts).
func demoReports(ctx context.Context, conn *grpc.ClientConn, dir string, out io.Writer, step func(string, ...any)) error {
	entries := dir + string(os.PathSeparator) + "national_entries.csv"
	if _, err := os.Stat(entries); err == nil {
		step("Importing national entries from %s (invented historical totals for the base years)", entries)
		resp, err := importEntries(ctx, conn, entries)
		if err != nil {
			return err
		}
		fmt.Fprintf(out, "  stored %d entries\n", resp.GetStored())
	}
	client := halovetv1.NewConsumptionServiceClient(conn)
	step("Consumption in %d (halovet consumption --year %d)", demoYear, demoYear)
	cons, err := client.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: demoYear})
	if err != nil {
		return err
	}
	if err := writeConsumption(out, cons, "text"); err != nil {
		return err
	}
	for _, g := range []string{"C/I", "F"} {
		step("Baseline of %s (halovet baseline --group %s)", g, g)
		b, err := client.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: g})
		if err != nil {
			return err
		}
		if err := writeBaseline(out, b, "text"); err != nil {
			return err
		}
	}
	for _, g := range []string{"C/I", "F"} {
		chart := fmt.Sprintf("%s%chalovet-demo-%s.svg", os.TempDir(), os.PathSeparator, strings.ReplaceAll(strings.ToLower(g), "/", ""))
		step("Compliance of %s %d-%d (halovet compliance --group %s --from %d --to %d --chart %s)",
			g, demoYear-2, demoYear, g, demoYear-2, demoYear, chart)
		ac, err := client.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: g, FromYear: demoYear - 2, ToYear: demoYear})
		if err != nil {
			return err
		}
		if err := writeCompliance(out, ac, "text"); err != nil {
			return err
		}
		if err := writeChartFile(chart, ac); err != nil {
			return err
		}
		fmt.Fprintf(out, "chart written to %s\n", chart)
	}
	step("Quota proposals for %d (halovet quotas --year %d --group C/I --reference-years %d)", demoYear+1, demoYear+1, demoYear)
	plan, err := client.PlanQuotas(ctx, &halovetv1.PlanQuotasRequest{Year: demoYear + 1, AnnexGroup: "C/I", ReferenceYears: []int32{demoYear}})
	if err != nil {
		return err
	}
	return writeQuotas(out, plan, "text")
}
