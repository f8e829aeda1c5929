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
	"github.com/halovet/halovet/validate"
)

func init() {
	addVerb("cylinder", "match what an analyser measured in a cylinder against the catalogue and the declaration", cylinderUsage, defineCylinder)
}

const cylinderUsage = `cylinder [flags] READING

Compares a measured composition with the catalogue's substances and blends and, with
--declared, with what the cylinder was declared as. READING is what the refrigerant
analyser or the laboratory reports: IDENTIFIER=MASS_PERCENT shares separated by ";",
each optionally followed by ±UNCERTAINTY (or +-UNCERTAINTY) in mass % points, air and
other non-condensables as air=PERCENT, e.g. "HCFC-22=94.5±0.5;air=5". The shares must
sum to 100 within 2 points.

Air is set aside and the rest renormalised. A catalogue entry fits when every component
lies within the entry's ASHRAE 34 composition tolerance widened by the reading's
uncertainty (--uncertainty for shares that state none; 1 point when not given). Fitting
entries are listed best first (depth: distance from nominal in units of what the band
allows, at most 1), then the closest that do not fit (excess: mass % points outside the
bands). The report says whether the declared entry fits, names every controlled
substance the reading shows that the declaration lacks with its Annex group and the
ODP tonnes and CO2-eq tonnes it would draw at --mass-kg, tells a contaminated cylinder
(an entry fits once a minor component is set aside) from a mixed one (nothing fits),
and ends with the safety cautions for what was found (ASHRAE 34 flammability and
toxicity classes) and the decision-support notice.

--output text (default) prints a report for people; --output json prints the
AnalyseReadingResponse in halovet's JSON dialect ('halovet help json').

Exit code: 0 when the server answered (whatever the reading shows); 2 when the reading
is unusable (a share out of range, an unknown component, a sum far from 100, nothing
but air; the field is named), on the command line or as the server judges it.

Examples:
  halovet cylinder "HFC-125=44.5;HFC-143a=51.5;HFC-134a=4" --declared R-404A
  halovet cylinder "R-12=100" --declared HFC-134a --mass-kg 13.6
  halovet cylinder "R-22=95±0.5;air=5" --declared R-407C --mass-kg 1000
  halovet cylinder --output json --uncertainty 1.5 "R-32=47.5;R-125=52.5"`

func defineCylinder(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	output := reportOutputFlag(fs, false)
	declared := fs.String("declared", "", "substance or blend the cylinder is declared as (any identifier); empty: compare with the catalogue only")
	massKg := fs.Float64("mass-kg", 0, "declared net mass in kg, for the ODP t and CO2-eq t of what the reading holds")
	unc := fs.Float64("uncertainty", 0, "± mass % points of every share that states none; 0 means 1")
	near := fs.Int("near", 0, "how many entries that do not fit to list; 0 means 3")
	return func(ctx context.Context, pos []string) error {
		if err := checkReportOutput(*output, false); err != nil {
			return err
		}
		if len(pos) != 1 {
			return usageErr("give exactly one READING, e.g. \"HCFC-22=95±0.5;air=5\" (see --help); got %d arguments", len(pos))
		}
		req, err := cylinderRequest(pos[0], *declared, *massKg, *unc, *near)
		if err != nil {
			return err
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		return cylinderReport(ctx, conn, os.Stdout, req, *output)
	}
}

// cylinderRequest builds the AnalyseReading request; text it cannot read is a usage error
// (exit code 2). Whether the figures make a usable reading is the server's to judge.
func cylinderRequest(reading, declared string, massKg, uncertainty float64, near int) (*halovetv1.AnalyseReadingRequest, error) {
	if math.IsNaN(massKg) || math.IsInf(massKg, 0) || massKg < 0 {
		return nil, usageErr("--mass-kg %v: give the declared net mass in kg, 0 or more", massKg)
	}
	if math.IsNaN(uncertainty) || math.IsInf(uncertainty, 0) || uncertainty < 0 {
		return nil, usageErr("--uncertainty %v: give ± mass %% points, 0 or more", uncertainty)
	}
	if near < 0 || near > 50 {
		return nil, usageErr("--near %d: give 0 to 50", near)
	}
	shares, err := validate.ParseMeasured(reading)
	if err != nil {
		return nil, usageErr("READING: %v", err)
	}
	if len(shares) == 0 {
		return nil, usageErr("READING is empty: give the shares the analyser reports, e.g. \"HCFC-22=95±0.5;air=5\"")
	}
	req := &halovetv1.AnalyseReadingRequest{Declared: strings.TrimSpace(declared), NetMassKg: wireOf(massKg),
		UncertaintyPoints: wireOf(uncertainty), NearMissCount: int32(near)}
	for _, s := range shares {
		req.Components = append(req.Components, &halovetv1.MeasuredShare{Identifier: s.Identifier, MassPercent: wireOf(s.MassPct), UncertaintyPoints: wireOf(s.Uncertainty)})
	}
	return req, nil
}

// cylinderReport asks the server and writes the report.
func cylinderReport(ctx context.Context, conn grpc.ClientConnInterface, w io.Writer, req *halovetv1.AnalyseReadingRequest, output string) error {
	resp, err := halovetv1.NewAnalysisServiceClient(conn).AnalyseReading(ctx, req)
	if err != nil {
		return rpcFailure("analysing the reading", err)
	}
	if output == "json" {
		return wirejson.Doc(w, resp)
	}
	return writeCylinderText(w, req, resp)
}

var readingStateText = map[halovetv1.ReadingState]string{
	halovetv1.ReadingState_READING_STATE_STANDARD:     "a standard product: a catalogue entry fits",
	halovetv1.ReadingState_READING_STATE_CONTAMINATED: "contaminated: no entry fits the whole reading, one fits once a minor component is set aside",
	halovetv1.ReadingState_READING_STATE_MIXED:        "mixed or unknown: no standard blend fits",
}

func writeCylinderText(w io.Writer, req *halovetv1.AnalyseReadingRequest, r *halovetv1.AnalyseReadingResponse) error {
	kv := &lookupLines{w: w}
	kv.raw("Cylinder reading\n")
	if d := r.GetDeclared(); d != nil {
		mass := "no --mass-kg given"
		if positive(req.GetNetMassKg()) {
			mass = shown(req.GetNetMassKg(), exact.Kg) + " kg"
		}
		kv.line("declared", d.GetDesignation()+", "+mass)
		if r.GetDeclaredFits() {
			kv.line("verdict", "the reading FITS the declared "+d.GetDesignation())
		} else {
			kv.line("verdict", "the reading CONTRADICTS the declared "+d.GetDesignation())
		}
	}
	kv.line("contents", readingStateText[r.GetState()])
	if positive(r.GetNonCondensablePercent()) {
		note := shown(r.GetNonCondensablePercent(), exact.Percent) + " % (set aside before matching)"
		if r.GetNonCondensableNote() != "" {
			note += "; above 1.5 %: check for air ingress"
		}
		kv.line("non-condensable", note)
	}
	kv.raw(wrapIndented(r.GetSummary(), "  ", 88))

	if h := r.GetHidden(); len(h) > 0 {
		kv.raw("\n  UNDECLARED CONTROLLED SUBSTANCES\n")
		var tb strings.Builder
		tw := tabwriter.NewWriter(&tb, 0, 0, 2, ' ', 0)
		fmt.Fprintln(tw, "    substance\tAnnex/Group\tmass %\tmass kg\tODP\tODP t\tCO2-eq t (Annex F)\tt x Annex GWP")
		for _, s := range h {
			fmt.Fprintf(tw, "    %s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", s.GetDesignation(), s.GetAnnexGroup(), shown(s.GetMassPercent(), exact.Percent),
				shown(s.GetMassKg(), exact.Kg), shown(s.GetOdp(), exact.ODP), shown(s.GetOdpTonnes(), exact.ODPTonnes), shown(s.GetCo2ETonnes(), exact.CO2eTonnes), shown(s.GetListedCo2ETonnes(), exact.CO2eTonnes))
		}
		_ = tw.Flush()
		kv.raw(tb.String())
	}
	if a := r.GetSetAside(); len(a) > 0 {
		kv.line("set aside", strings.Join(a, ", ")+"; the rest fits "+strings.Join(r.GetCleanFits(), ", "))
	}

	kv.raw("\n  candidates (fitting first, then the closest)\n")
	var tb strings.Builder
	tw := tabwriter.NewWriter(&tb, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "    entry\tfits\tdepth\texcess points\tAnnex groups\tsafety class\treading shows, entry lacks\tentry has, reading lacks")
	for _, m := range r.GetMatches() {
		fits := "no"
		if m.GetFits() {
			fits = "yes"
		}
		fmt.Fprintf(tw, "    %s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", m.GetDesignation(), fits, wireDec(m.GetDepthRatio()).Fixed(2),
			shown(m.GetExcessPoints(), exact.Points), textOrDash(strings.Join(m.GetAnnexGroups(), " ")), textOrDash(m.GetSafetyClass()),
			textOrDash(strings.Join(m.GetExtra(), ", ")), textOrDash(strings.Join(m.GetMissing(), ", ")))
	}
	_ = tw.Flush()
	kv.raw(tb.String())

	if d := r.GetDeclared(); d != nil {
		kv.raw(fmt.Sprintf("\n  declared %s, component by component (band = tolerance widened by the uncertainty)\n", d.GetDesignation()))
		kv.raw(bandTable(d))
	}

	kv.raw("\n  reading (air set aside, renormalised)\n")
	tb.Reset()
	tw = tabwriter.NewWriter(&tb, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "    component\tread %\tmass %\t± points\tAnnex/Group\tsafety class")
	var hazards []string
	for _, c := range r.GetComponents() {
		fmt.Fprintf(tw, "    %s\t%s\t%s\t%s\t%s\t%s\n", c.GetDesignation(), shown(c.GetReadPercent(), exact.Percent), shown(c.GetMassPercent(), exact.Percent),
			shown(c.GetUncertaintyPoints(), exact.Points), textOrDash(c.GetAnnexGroup()), textOrDash(c.GetSafetyClass()))
		if h := hazardText(c.GetSafetyClass()); h != "" && positive(c.GetMassPercent()) {
			hazards = append(hazards, c.GetDesignation()+" "+h)
		}
	}
	_ = tw.Flush()
	kv.raw(tb.String())
	if len(hazards) > 0 {
		kv.line("hazards", strings.Join(hazards, "; "))
	}
	kv.raw("\n" + reportFooter(r.GetCautions()))
	return kv.err
}

// bandTable writes one candidate's comparison component by component.
func bandTable(m *halovetv1.ReadingMatch) string {
	var tb strings.Builder
	tw := tabwriter.NewWriter(&tb, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "    component\tmeasured %\tnominal %\tband %\toutside by")
	for _, f := range m.GetComponents() {
		out := "—"
		if positive(f.GetExcessPoints()) {
			out = shown(f.GetExcessPoints(), exact.Points) + " points"
		}
		fmt.Fprintf(tw, "    %s\t%s\t%s\t%s to %s\t%s\n", f.GetDesignation(), shown(f.GetMeasuredPercent(), exact.Percent),
			shown(f.GetNominalPercent(), exact.Percent), exact.Max(wireDec(f.GetBandLowPercent()), exact.Zero).Display(exact.Percent),
			shown(f.GetBandHighPercent(), exact.Percent), out)
	}
	_ = tw.Flush()
	return tb.String()
}

// hazardText names what an ASHRAE 34 class warns of: flammability (2L, 2, 3) and higher
// toxicity (B); "" for class A1 or an unknown class.
func hazardText(class string) string {
	if len(class) < 2 {
		return ""
	}
	var parts []string
	if class[0] == 'B' {
		parts = append(parts, "higher toxicity")
	}
	switch class[1:] {
	case "2L":
		parts = append(parts, "lower flammability")
	case "2":
		parts = append(parts, "flammable")
	case "3":
		parts = append(parts, "highly flammable")
	}
	if len(parts) == 0 {
		return ""
	}
	return "(ASHRAE 34 class " + class + ": " + strings.Join(parts, ", ") + ")"
}
