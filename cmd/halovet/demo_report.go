package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"google.golang.org/grpc"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// demoYear is the year of the demo batch (testdata/demo/README.md: declared in 2026).
const demoYear = 2026

// demoReports is the reporting part of 'halovet demo': it imports the scenario's national
// entries (national_entries.csv in the scenario directory, when there is one: invented
// historical totals for the base years), then reports the batch year's consumption, the
// HCFC and HFC baselines, compliance over three years with an SVG chart, and a quota plan
// for the next year (proposals only, no drafts), and the year's data report (its files
// beside the charts when a chart directory is given).
func demoReports(ctx context.Context, conn *grpc.ClientConn, dir, chartDir string, out io.Writer, step func(string, ...any)) error {
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
	if chartDir != "" {
		if err := os.MkdirAll(chartDir, 0o755); err != nil {
			return fmt.Errorf("--chart-dir: %w", err)
		}
	}
	for _, g := range []string{"C/I", "F"} {
		chart := filepath.Join(chartDir, strings.ReplaceAll(strings.ToLower(g), "/", "")+".svg")
		cmdline := fmt.Sprintf("halovet compliance --group %s --from %d --to %d", g, demoYear-2, demoYear)
		if chartDir != "" {
			cmdline += " --chart " + chart
		}
		step("Compliance of %s %d-%d (%s)", g, demoYear-2, demoYear, cmdline)
		ac, err := client.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: g, FromYear: demoYear - 2, ToYear: demoYear})
		if err != nil {
			return err
		}
		if err := writeCompliance(out, ac, "text"); err != nil {
			return err
		}
		if chartDir == "" {
			continue
		}
		party, err := reportingPartyName(ctx, conn)
		if err != nil {
			return err
		}
		if err := writeChartFile(chart, ac, party); err != nil {
			return err
		}
		fmt.Fprintf(out, "chart written to %s\n", chart)
	}
	step("Quota proposals for %d (halovet quotas --year %d --group C/I --reference-years %d)", demoYear+1, demoYear+1, demoYear)
	plan, err := client.PlanQuotas(ctx, &halovetv1.PlanQuotasRequest{Year: demoYear + 1, AnnexGroup: "C/I", ReferenceYears: []int32{demoYear}})
	if err != nil {
		return err
	}
	if err := writeQuotas(out, plan, "text"); err != nil {
		return err
	}
	reportDir := ""
	cmdline := fmt.Sprintf("halovet year-report --year %d", demoYear)
	if chartDir != "" {
		reportDir = filepath.Join(chartDir, fmt.Sprintf("year-report-%d", demoYear))
		cmdline += " --dir " + reportDir
	}
	step("Data report for %d (%s)", demoYear, cmdline)
	rep, err := client.GetYearReport(ctx, &halovetv1.GetYearReportRequest{Year: demoYear})
	if err != nil {
		return err
	}
	if reportDir != "" {
		files, err := yearReportFiles(rep)
		if err != nil {
			return err
		}
		if err := writeFilesAtomically(reportDir, files); err != nil {
			return err
		}
	}
	return writeYearSummary(out, rep, reportDir)
}
