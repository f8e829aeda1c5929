package main

import (
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
)

func init() {
	addVerb("compliance", "compare consumption with the allowed level over years (and draw it as SVG)", complianceUsage, defineCompliance)
}

const complianceUsage = `compliance --group GROUP --from YEAR --to YEAR [flags]

Compares the reporting Party's consumption of an Annex group (F: Annex F as a whole)
with the allowed level of the control schedule in each year from --from to --to:
allowed percent of baseline, allowed level, headroom (allowed − consumption; negative
when exceeded) and an outcome: within, EXCEEDED, or not assessed (no data, no baseline
or no rule; the notes say which). The servicing tails are reported as the schedules
set them: a non-Article 5 Party's annual 0.5 % cap for HCFCs in 2020-2029, and an
Article 5 Party's ten-year average of 2.5 % over 2030-2039, shown as the running
average and the room left for the rest of the period.

Exit code 1 when consumption exceeded the allowed level in some year (the output is
written in full first).

--chart FILE.svg (or FILE.png) also draws the years as a chart: consumption (points
joined by a line) against the allowed level (a step line) and the baseline (dashed);
an exceeded year is a square labelled with its excess, a year without data a shaded
column (never a point on zero), the current year is marked provisional, and the title
names the reporting Party and the group. SVG is self-contained; PNG suits reports.

Examples:
  halovet compliance --group C/I --from 2020 --to 2026
  halovet compliance --group F --from 2024 --to 2026 --chart hfc.svg
  halovet compliance --group C/I --from 2013 --to 2026 --output csv`

func defineCompliance(fs *pflag.FlagSet) runFunc {
	var rf reportFlags
	rf.register(fs)
	group := fs.String("group", "", "Annex group (A/I ... E/I), or F for HFCs (required)")
	from := fs.Int("from", 0, "first year (required)")
	to := fs.Int("to", 0, "last year (default: --from)")
	chart := fs.String("chart", "", "also draw the chart of consumption against the allowed level to this file (.svg or .png)")
	return func(ctx context.Context, args []string) error {
		if err := rf.check(args); err != nil {
			return err
		}
		if *group == "" || *from == 0 {
			return usageErr("--group and --from are required, e.g. --group C/I --from 2020 --to 2026")
		}
		if *to == 0 {
			*to = *from
		}
		if *chart != "" && !chartFormatOK(*chart) {
			return usageErr("--chart %q: give a file name ending in .svg (a vector drawing) or .png (an image for reports)", *chart)
		}
		return rf.withConn(func(conn *grpc.ClientConn) error {
			resp, err := halovetv1.NewConsumptionServiceClient(conn).AssessCompliance(ctx,
				&halovetv1.AssessComplianceRequest{AnnexGroup: *group, FromYear: int32(*from), ToYear: int32(*to)})
			if err != nil {
				return err
			}
			if *chart != "" {
				party, err := reportingPartyName(ctx, conn)
				if err != nil {
					return err
				}
				if err := writeChartFile(*chart, resp, party); err != nil {
					return err
				}
			}
			if err := writeCompliance(os.Stdout, resp, rf.output); err != nil {
				return err
			}
			if *chart != "" && rf.output == "text" {
				fmt.Fprintf(os.Stderr, "chart written to %s\n", *chart)
			}
			return exceededErr(resp)
		})
	}
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
func complianceRow(y *halovetv1.ComplianceYear, f func(string) string) []string {
	assessed := y.GetOutcome() == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN ||
		y.GetOutcome() == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED
	cons, allowed, head, pct := "", "", "", ""
	if y.GetHasData() {
		cons = f(y.GetConsumptionAmount())
	}
	nonzero := func(s string) bool { return !wireDec(s).IsZero() }
	if assessed || nonzero(y.GetAllowedAmount()) || nonzero(y.GetAllowedPercent()) {
		pct = y.GetAllowedPercent()
	}
	if assessed || nonzero(y.GetAllowedAmount()) {
		allowed = f(y.GetAllowedAmount()) // known without data when the baseline is complete
	}
	if assessed {
		head = f(y.GetHeadroomAmount())
	}
	avg, room := "", ""
	if p := y.GetPeriod(); p != nil {
		avg, room = f(p.GetRunningAverageAmount()), f(p.GetRoomLeftAmount())
	}
	return []string{strconv.Itoa(int(y.GetYear())), cons, pct, allowed, head, outcomeWord(y.GetOutcome()), avg, room}
}

func writeCompliance(w io.Writer, resp *halovetv1.AssessComplianceResponse, output string) error {
	eu := resp.GetUnit()
	u := wireterms.ControlUnitText(eu)
	switch output {
	case "json":
		return wirejson.Doc(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write([]string{"year", "consumption", "allowed_percent", "allowed", "headroom", "outcome",
			"period_running_average", "period_room_left", "unit", "annex_group", "computed_allowed", "official_limit", "exempted"})
		for _, y := range resp.GetYears() {
			r := complianceRow(y, asIs)
			r[5] = strings.ToLower(strings.ReplaceAll(r[5], " ", "-"))
			official := ""
			if y.GetHasOfficialLimit() {
				official = y.GetOfficialLimitAmount()
			}
			_ = cw.Write(append(r, u, resp.GetAnnexGroup(), y.GetComputedAllowedAmount(), official, y.GetExemptedAmount()))
		}
		cw.Flush()
		return cw.Error()
	}
	fmt.Fprintf(w, "Compliance of %s (%s schedule)\n", resp.GetAnnexGroup(), wireterms.ControlScheduleText(resp.GetAppliesTo()))
	if resp.GetHasOfficialBaseline() {
		computed := "cannot be computed, data are missing"
		if len(resp.GetBaselineMissing()) == 0 {
			computed = showAmount(resp.GetComputedBaselineAmount(), eu) + " " + u
		}
		fmt.Fprintf(w, "Baseline: %s %s as officially set (%s); computed from the data: %s\n",
			showAmount(resp.GetBaselineAmount(), eu), u, resp.GetOfficialBaselineSource(), computed)
	} else if resp.GetBaselineComplete() {
		fmt.Fprintf(w, "Baseline: %s %s\n", showAmount(resp.GetBaselineAmount(), eu), u)
	} else {
		fmt.Fprintln(w, "Baseline: cannot be computed, data are missing (years needing it are not assessed)")
	}
	fmt.Fprintf(w, "Schedule: %s\n\n", resp.GetScheduleSource())
	f := func(s string) string { return showAmount(s, eu) }
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

// exceededErr is the exit code 1 error when consumption exceeded the allowed level in
// some year of the answer.
func exceededErr(resp *halovetv1.AssessComplianceResponse) error {
	var years []string
	for _, y := range resp.GetYears() {
		if y.GetOutcome() == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED {
			years = append(years, strconv.Itoa(int(y.GetYear())))
		}
	}
	if len(years) == 0 {
		return nil
	}
	return rejectedErr("consumption of %s exceeded the allowed level in %s", resp.GetAnnexGroup(), strings.Join(years, ", "))
}
