package main

import (
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
)

// The consumption reports: consumption, baseline, compliance and quotas. Each asks the
// server's ConsumptionService and prints the answer as a text table, CSV or JSON.

func init() {
	addVerb("consumption", "report a year's consumption per Annex group and substance", consumptionUsage, defineConsumption)
	addVerb("baseline", "report the reporting Party's baseline of an Annex group, with its arithmetic", baselineUsage, defineBaseline)
}

// reportFlags are the flags every report verb shares.
type reportFlags struct {
	client clientFlags
	output string
}

func (r *reportFlags) register(fs *pflag.FlagSet) {
	r.client.register(fs)
	fs.StringVar(&r.output, "output", "text", "output: text (a table for people), csv, or json (the API's response; see 'halovet help json')")
}

// check refuses positional arguments and checks --output.
func (r *reportFlags) check(args []string) error {
	if len(args) > 0 {
		return usageErr("unexpected argument %q (see --help)", args[0])
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

Imports and exports come from the recorded shipments; feedstock, QPS and destruction
are deducted from them by their declared purpose. National entries add production,
what never passed customs (feedstock, QPS or destruction entries marked
outside_customs) and historical totals (see 'halovet entries'); an entry that would
deduct the same use twice is refused or left out with a note. A group without a
shipment or an entry in YEAR is listed as "no data", not as zero.

Examples:
  halovet consumption --year 2026
  halovet consumption --year 2026 --group C/I --output csv > hcfc-2026.csv`

func defineConsumption(fs *pflag.FlagSet) runFunc {
	var rf reportFlags
	rf.register(fs)
	year := fs.Int("year", 0, "calendar year (required)")
	group := fs.String("group", "", "only this Annex group (C/I, F/I, ...) or F for Annex F as a whole")
	return func(ctx context.Context, args []string) error {
		if err := rf.check(args); err != nil {
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
}

var consumptionCSVHeader = []string{"annex_group", "substance", "production_t", "imports_t", "exports_t",
	"destruction_t", "feedstock_t", "qps_t", "not_counted_t", "exports_non_party_t", "consumption_t",
	"consumption_odp_t", "consumption_co2e_t"}

func consumptionRow(group, name string, s *halovetv1.SubstanceConsumption, f func(string) string) []string {
	return []string{group, name, f(s.GetProductionTonnes()), f(s.GetImportTonnes()), f(s.GetExportTonnes()),
		f(s.GetDestructionTonnes()), f(s.GetFeedstockTonnes()), f(s.GetQpsTonnes()), f(s.GetNotCountedTonnes()),
		f(s.GetExportNonPartyTonnes()), f(s.GetConsumptionTonnes())}
}

// groupTotal adds up a group's substance columns for its total row.
func groupTotal(g *halovetv1.GroupConsumption) *halovetv1.SubstanceConsumption {
	t := &halovetv1.SubstanceConsumption{ProductionTonnes: "0", ImportTonnes: "0", ExportTonnes: "0", DestructionTonnes: "0",
		FeedstockTonnes: "0", QpsTonnes: "0", NotCountedTonnes: "0", ExportNonPartyTonnes: "0"}
	for _, s := range g.GetSubstances() {
		t.ProductionTonnes = sumOf(t.ProductionTonnes, s.GetProductionTonnes())
		t.ImportTonnes = sumOf(t.ImportTonnes, s.GetImportTonnes())
		t.ExportTonnes = sumOf(t.ExportTonnes, s.GetExportTonnes())
		t.DestructionTonnes = sumOf(t.DestructionTonnes, s.GetDestructionTonnes())
		t.FeedstockTonnes = sumOf(t.FeedstockTonnes, s.GetFeedstockTonnes())
		t.QpsTonnes = sumOf(t.QpsTonnes, s.GetQpsTonnes())
		t.NotCountedTonnes = sumOf(t.NotCountedTonnes, s.GetNotCountedTonnes())
		t.ExportNonPartyTonnes = sumOf(t.ExportNonPartyTonnes, s.GetExportNonPartyTonnes())
	}
	t.ConsumptionTonnes = g.GetConsumptionTonnes()
	t.ConsumptionOdpTonnes = g.GetConsumptionOdpTonnes()
	t.ConsumptionCo2ETonnes = g.GetConsumptionCo2ETonnes()
	return t
}

func writeConsumption(w io.Writer, resp *halovetv1.GetConsumptionResponse, output string) error {
	switch output {
	case "json":
		return wirejson.Doc(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write(consumptionCSVHeader)
		for _, g := range resp.GetGroups() {
			for _, s := range g.GetSubstances() {
				_ = cw.Write(append(consumptionRow(g.GetAnnexGroup(), s.GetSubstance(), s, asIs),
					s.GetConsumptionOdpTonnes(), s.GetConsumptionCo2ETonnes()))
			}
			t := groupTotal(g)
			_ = cw.Write(append(consumptionRow(g.GetAnnexGroup(), "total", t, asIs),
				t.GetConsumptionOdpTonnes(), t.GetConsumptionCo2ETonnes()))
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
				fmt.Fprintln(tw, strings.Join(append(consumptionRow(g.GetAnnexGroup(), s.GetSubstance(), s, showT),
					showODP(s.GetConsumptionOdpTonnes()), showCO2e(s.GetConsumptionCo2ETonnes())), "\t")+"\t")
			}
			t := groupTotal(g)
			fmt.Fprintln(tw, strings.Join(append(consumptionRow(g.GetAnnexGroup(), "total", t, showT),
				showODP(t.GetConsumptionOdpTonnes()), showCO2e(t.GetConsumptionCo2ETonnes())), "\t")+"\t")
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

func defineBaseline(fs *pflag.FlagSet) runFunc {
	var rf reportFlags
	rf.register(fs)
	group := fs.String("group", "", "Annex group (A/I ... E/I), or F for HFCs (required)")
	return func(ctx context.Context, args []string) error {
		if err := rf.check(args); err != nil {
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
}

func yearRows(part string, ys []*halovetv1.BaselineYear, unit string, f func(string) string) [][]string {
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
func baselineRows(resp *halovetv1.GetBaselineResponse, f func(string, halovetv1.ControlUnit) string) [][]string {
	u := wireterms.ControlUnitText(resp.GetUnit())
	fu := func(s string) string { return f(s, resp.GetUnit()) }
	rows := yearRows(resp.GetAnnexGroup(), resp.GetYears(), u, fu)
	rows = append(rows, []string{resp.GetAnnexGroup() + " mean", "", fu(resp.GetMeanAmount()), u, ""})
	if len(resp.GetCfcYears()) > 0 {
		rows = append(rows, yearRows("A/I (CFC term)", resp.GetCfcYears(), u, fu)...)
		rows = append(rows, []string{fmt.Sprintf("CFC term (%s %% of A/I)", shareText(resp.GetCfcShareRatio())), "", fu(resp.GetCfcTermAmount()), u, ""})
	}
	if h := resp.GetHcfcBaseline(); h != nil {
		hu := wireterms.ControlUnitText(h.GetUnit())
		fh := func(s string) string { return f(s, h.GetUnit()) }
		rows = append(rows, yearRows(h.GetAnnexGroup()+" in CO2-eq", h.GetYears(), hu, fh)...)
		if len(h.GetCfcYears()) > 0 {
			rows = append(rows, yearRows("A/I in CO2-eq (CFC term)", h.GetCfcYears(), hu, fh)...)
			rows = append(rows, []string{fmt.Sprintf("CFC term in CO2-eq (%s %%)", shareText(h.GetCfcShareRatio())), "", fh(h.GetCfcTermAmount()), hu, ""})
		}
		rows = append(rows, []string{"HCFC baseline in CO2-eq", "", fh(h.GetBaselineAmount()), hu, completeWord(h.GetComplete())})
		rows = append(rows, []string{fmt.Sprintf("HCFC component (%s %%)", shareText(resp.GetHcfcShareRatio())), "", fu(resp.GetHcfcComponentAmount()), u, ""})
	}
	rows = append(rows, []string{"baseline", "", fu(resp.GetBaselineAmount()), u, completeWord(resp.GetComplete())})
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
		return wirejson.Doc(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write([]string{"part", "year", "amount", "unit", "data"})
		for _, r := range baselineRows(resp, func(s string, _ halovetv1.ControlUnit) string { return s }) {
			_ = cw.Write(r)
		}
		cw.Flush()
		return cw.Error()
	}
	u := wireterms.ControlUnitText(resp.GetUnit())
	fmt.Fprintf(w, "Baseline for %s (%s schedule)\n", resp.GetAnnexGroup(), wireterms.ControlScheduleText(resp.GetAppliesTo()))
	fmt.Fprintf(w, "Rule: %s\n\n", resp.GetRule())
	tw := newTable(w)
	fmt.Fprintln(tw, "part\tyear\tamount\tunit\tdata\t")
	for _, r := range baselineRows(resp, showAmount) {
		fmt.Fprintln(tw, strings.Join(r, "\t")+"\t")
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if resp.GetComplete() {
		fmt.Fprintf(w, "\nBaseline: %s %s\n", showAmount(resp.GetBaselineAmount(), resp.GetUnit()), u)
	} else {
		fmt.Fprintln(w, "\nThe baseline cannot be computed: data are missing.")
		writeNotes(w, "Missing", resp.GetMissing())
	}
	writeNotes(w, "Notes", resp.GetNotes())
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}
