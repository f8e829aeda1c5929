package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
)

func init() {
	addVerb("mix", "evaluate a blend or an ad-hoc composition: ODP, GWP, CO2-eq, HS code", mixUsage, defineMix)
}

const mixUsage = `mix [flags] SPEC

Evaluates a mixture. SPEC is a blend designation (R-410A; any identifier that names one
catalogue entry, a single substance too) or an ad-hoc composition written
IDENTIFIER:MASS_PERCENT,IDENTIFIER:MASS_PERCENT,... (R-32:50,R-125:50), whose shares
must sum to 100 % within 0.01 and whose identifiers must each name one substance.

Prints the mixture's ODP; its 100-year GWP under each set (MP = the Protocol's annex
values, AR4, AR5, AR6) in both conventions, "all components" (every component with a
GWP, as the EU F-gas rules weigh a blend) and "Annex F only (as the Protocol counts)";
per component the mass %, mass kg, Annex/Group, ODP tonnes and CO2-eq tonnes (mass
columns need --mass-kg); the HS 2022 subheading of the mixture or why none is decided;
the safety class and cautions. Whole GWPs are rounded half-up, the unrounded
mass-weighted sum beside them.

--output text (default) prints a report for people; --output json prints the
EvaluateMixtureResponse in halovet's JSON dialect ('halovet help json').

Exit code: 0 on success; 2 when the input is unusable, whether the command line (a
SPEC that is not IDENTIFIER:PERCENT pairs, a negative --mass-kg) or what the server
refuses (an unknown or ambiguous identifier; shares that do not sum to 100 %, with
the sum named); 3 when no server answers. Flags may come before or after SPEC.

Examples:
  halovet mix R-410A
  halovet mix R-404A --mass-kg 12.5
  halovet mix R-32:50,R-125:50 --mass-kg 1000
  halovet mix --output json HCFC-22:53,HFC-152a:13,HCFC-124:34`

func defineMix(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	output := reportOutputFlag(fs, true)
	massKg := fs.Float64("mass-kg", 0, "net mass of the mixture in kg; 0 gives figures per kg only")
	return func(ctx context.Context, pos []string) error {
		if err := checkReportOutput(*output, true); err != nil {
			return err
		}
		if len(pos) != 1 {
			return usageErr("give exactly one SPEC, e.g. R-410A or R-32:50,R-125:50 (see --help); got %d arguments", len(pos))
		}
		req, err := mixRequest(pos[0], *massKg)
		if err != nil {
			return err
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		return mixReport(ctx, conn, os.Stdout, req, *output)
	}
}

// mixRequest builds the EvaluateMixture request of a SPEC; input it cannot use is a usage
// error (exit code 2). Whether the shares sum to 100 % is the server's to judge.
func mixRequest(spec string, massKg float64) (*halovetv1.EvaluateMixtureRequest, error) {
	if math.IsNaN(massKg) || math.IsInf(massKg, 0) || massKg < 0 {
		return nil, usageErr("--mass-kg %v: give the net mass in kg, 0 or more", massKg)
	}
	spec = strings.TrimSpace(spec)
	if spec == "" {
		return nil, usageErr("SPEC is empty: give a blend (R-410A) or shares (R-32:50,R-125:50)")
	}
	req := &halovetv1.EvaluateMixtureRequest{NetMassKg: wireOf(massKg)}
	if !strings.Contains(spec, ":") {
		req.Blend = spec
		return req, nil
	}
	// Chemical names hold commas ("1,1,1,2-tetrafluoroethane:52"), so a comma separates
	// shares only after a part that has its ":PERCENT".
	var parts []string
	pending := ""
	for _, p := range strings.Split(spec, ",") {
		if pending != "" {
			p = pending + "," + p
		}
		if strings.Contains(p, ":") {
			parts, pending = append(parts, p), ""
		} else {
			pending = p
		}
	}
	if strings.TrimSpace(pending) != "" {
		return nil, usageErr("SPEC share %q has no :MASS_PERCENT; write IDENTIFIER:PERCENT pairs such as R-32:50,R-125:50", pending)
	}
	for i, p := range parts {
		at := strings.LastIndex(p, ":")
		id := strings.TrimSpace(p[:at])
		num := strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(p[at+1:]), "%"))
		if id == "" {
			return nil, usageErr("SPEC share %d (%q) has no identifier before the colon", i+1, p)
		}
		pct, err := exact.Parse(num)
		if err != nil {
			return nil, usageErr("SPEC share %d (%q): %q is not a mass percentage; write a decimal such as 50 or 23.5", i+1, p, num)
		}
		req.Composition = append(req.Composition, &halovetv1.MixtureShare{Identifier: id, MassPercent: pct.String()})
	}
	return req, nil
}

// mixReport evaluates the mixture and writes the report.
func mixReport(ctx context.Context, conn grpc.ClientConnInterface, w io.Writer, req *halovetv1.EvaluateMixtureRequest, output string) error {
	what := "the composition"
	if b := req.GetBlend(); b != "" {
		what = b
	}
	ev, err := halovetv1.NewCatalogueServiceClient(conn).EvaluateMixture(ctx, req)
	if err != nil {
		return rpcFailure("evaluating "+what, err)
	}
	switch output {
	case "json":
		return wirejson.Doc(w, ev)
	case "csv":
		return writeMixCSV(w, ev)
	}
	return writeMixText(w, ev)
}

func writeMixText(w io.Writer, ev *halovetv1.EvaluateMixtureResponse) error {
	kv := &lookupLines{w: w}
	perKg := !positive(ev.GetNetMassKg())
	amount := shown(ev.GetNetMassKg(), exact.Kg) + " kg"
	if perKg {
		amount = "per kg (no --mass-kg given)"
	}
	name := ev.GetDesignation()
	if name == "custom" {
		name = "(ad-hoc composition)"
	}
	kv.raw(fmt.Sprintf("Mixture %s, %s\n", name, amount))
	kv.line("safety class", safetyClassText(ev.GetSafetyClass()))
	kv.line("ODP", shown(ev.GetOdp(), exact.ODP)+"  (mass-weighted)")
	if !perKg {
		kv.line("ODP tonnes", shown(ev.GetOdpTonnes(), exact.ODPTonnes)+"  (each component in its own Annex group)")
		kv.line("CO2-eq tonnes", shown(ev.GetCo2ETonnes(), exact.CO2eTonnes)+"  (Annex F components x Annex GWP, as the Protocol counts)")
	}
	kv.raw(mixtureGWPTable(ev))
	kv.raw("  components\n")
	var tb strings.Builder
	tw := tabwriter.NewWriter(&tb, 0, 0, 2, ' ', 0)
	if perKg {
		fmt.Fprintln(tw, "    component\tmass %\tAnnex/Group\tODP\tGWP (MP)\tsafety class")
	} else {
		fmt.Fprintln(tw, "    component\tmass %\tmass kg\tAnnex/Group\tODP\tODP t\tGWP (MP)\tCO2-eq t\tsafety class")
	}
	for _, c := range ev.GetComponents() {
		if perKg {
			fmt.Fprintf(tw, "    %s\t%s\t%s\t%s\t%s\t%s\n", c.GetDesignation(), shown(c.GetMassPercent(), exact.Percent), textOrDash(c.GetAnnexGroup()),
				shown(c.GetOdp(), exact.ODP), shown(c.GetGwp_100YrProtocol(), exact.GWP), textOrDash(c.GetSafetyClass()))
		} else {
			fmt.Fprintf(tw, "    %s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", c.GetDesignation(), shown(c.GetMassPercent(), exact.Percent),
				shown(c.GetMassKg(), exact.Kg), textOrDash(c.GetAnnexGroup()), shown(c.GetOdp(), exact.ODP), shown(c.GetOdpTonnes(), exact.ODPTonnes),
				shown(c.GetGwp_100YrProtocol(), exact.GWP), shown(c.GetCo2ETonnes(), exact.CO2eTonnes), textOrDash(c.GetSafetyClass()))
		}
	}
	_ = tw.Flush()
	kv.raw(tb.String())
	kv.raw(mixtureHSText(ev))
	kv.raw("\n" + reportFooter(ev.GetCautions()))
	return kv.err
}

// gwpTable writes a mixture's GWPs, one row per set, one column per convention.
func mixtureGWPTable(ev *halovetv1.EvaluateMixtureResponse) string {
	type cell struct{ all, annexF string }
	rows := map[string]*cell{}
	var order []string
	partial := false
	for _, g := range ev.GetGwps() {
		set := wireterms.GWPSetWord(g.GetGwpSet())
		c, ok := rows[set]
		if !ok {
			c = &cell{all: "—", annexF: "—"}
			rows[set] = c
			order = append(order, set)
		}
		v := mixtureGWPText(g.GetGwp_100Yr())
		if !g.GetComplete() {
			v += " *"
			partial = true
		}
		switch g.GetConvention() {
		case halovetv1.GwpConvention_GWP_CONVENTION_ALL_COMPONENTS:
			c.all = v
		case halovetv1.GwpConvention_GWP_CONVENTION_ANNEX_F_ONLY:
			c.annexF = v
		}
	}
	var b strings.Builder
	b.WriteString("  GWP (100-year)\n")
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "    set\tall components\tAnnex F only (as the Protocol counts)")
	for _, set := range order {
		label := set
		if set == "MP" {
			label = "MP (Protocol annex values)"
		}
		fmt.Fprintf(tw, "    %s\t%s\t%s\n", label, rows[set].all, rows[set].annexF)
	}
	_ = tw.Flush()
	if partial {
		b.WriteString("    * partial: a component counted by this convention has no value in this set\n")
	}
	return b.String()
}

func mixtureHSText(ev *halovetv1.EvaluateMixtureResponse) string {
	code := ev.GetHs2022Subheading()
	if code == "" {
		code = "not decided (see below)"
	}
	s := fmt.Sprintf("  %-16s%s\n", "HS 2022", code)
	if ev.GetHsNote() != "" {
		s += wrapIndented(ev.GetHsNote(), "                  ", 88)
	}
	return s
}

// gwpText writes a mixture GWP as the published tables do, rounded half-up to a whole
// number (UK government CO2-eq table: R-410A 2087.5 -> 2088), with the unrounded sum beside it when
// they differ.
func mixtureGWPText(v string) string {
	d := wireDec(v)
	whole := d.Round(0)
	if whole.Equal(d) {
		return whole.String()
	}
	return fmt.Sprintf("%s (%s)", whole.String(), d.String())
}
