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
	addVerb("quotas", "propose next year's quotas per company (largest remainder), optionally as draft licences", quotasUsage, defineQuotas)
}

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

func defineQuotas(fs *pflag.FlagSet) runFunc {
	var rf reportFlags
	rf.register(fs)
	year := fs.Int("year", 0, "year the quotas are for (required)")
	group := fs.String("group", "", "Annex group (C/I, E/I, ...) or F for HFCs (required)")
	refs := fs.String("reference-years", "", "comma-separated years whose recorded imports set each company's share (required)")
	fraction := fs.String("fraction", "1", "part of the allowed level to distribute, a decimal above 0 and at most 1")
	gran := fs.String("granularity", "0.001", "smallest unit of allocation in the group's unit, a decimal above 0")
	drafts := fs.Bool("issue-drafts", false, "store the proposals as draft licences (needs an officer's credential)")
	return func(ctx context.Context, args []string) error {
		if err := rf.check(args); err != nil {
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
				AnnexGroup: *group, ReferenceYears: years, FractionRatio: *fraction, GranularityAmount: *gran, IssueDrafts: *drafts})
			if err != nil {
				return err
			}
			return writeQuotas(os.Stdout, resp, rf.output)
		})
	}
}

func writeQuotas(w io.Writer, resp *halovetv1.PlanQuotasResponse, output string) error {
	eu := resp.GetUnit()
	u := wireterms.ControlUnitText(eu)
	switch output {
	case "json":
		return wirejson.Doc(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write([]string{"company_id", "reference_amount", "reference_share", "exact_share", "quota", "unit", "draft_licence_number"})
		for _, p := range resp.GetProposals() {
			_ = cw.Write([]string{p.GetCompanyId(), p.GetReferenceAmount(), p.GetReferenceShareRatio(),
				p.GetExactShareAmount(), p.GetQuotaAmount(), u, p.GetDraftLicenceNumber()})
		}
		cw.Flush()
		return cw.Error()
	}
	f := func(s string) string { return showAmount(s, eu) }
	finer := int32(6) // finer than the unit's display
	if eu == halovetv1.ControlUnit_CONTROL_UNIT_CO2E_TONNES {
		finer = 3
	}
	fmt.Fprintf(w, "Quota plan for %s in %d\n", resp.GetAnnexGroup(), resp.GetYear())
	fmt.Fprintf(w, "Allowed level: %s %s (%s %% of baseline)\n", f(resp.GetAllowedAmount()), u, resp.GetAllowedPercent())
	fmt.Fprintf(w, "To distribute: %s %s; distributed: %s %s\n\n", f(resp.GetDistributableAmount()), u, f(resp.GetDistributedAmount()), u)
	tw := newTable(w)
	fmt.Fprintf(tw, "company\treference %s\tshare %%\texact share %s\tquota %s\tdraft licence\t\n", u, u, u)
	for _, p := range resp.GetProposals() {
		d := p.GetDraftLicenceNumber()
		if d == "" {
			d = "-"
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t\n", p.GetCompanyId(), f(p.GetReferenceAmount()),
			wireDec(p.GetReferenceShareRatio()).Shift(2).Fixed(2), wireDec(p.GetExactShareAmount()).Fixed(finer), f(p.GetQuotaAmount()), d)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	writeNotes(w, "Notes", resp.GetNotes())
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}
