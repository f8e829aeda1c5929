package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"html/template"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
)

// The annual data report of a year (GetYearReport) as CSV files, one JSON document and a
// printable HTML page. Nothing in the bytes depends on when the report was made: the same
// register gives the same files.

func init() {
	addVerb("year-report", "write the annual data report of a year: CSV files, a JSON document and a printable HTML page", yearReportUsage, defineYearReport)
}

const yearReportUsage = `year-report --year YEAR [--dir DIR] [flags]

Computes the reporting Party's data report for YEAR from the register, in the
categories Article 7 and the Parties' decisions name: imports by exporting country
and exports by destination (new and recovered substance apart, with the parts
declared for feedstock, QPS, exempted uses and destruction), production,
destruction, feedstock and QPS use (from the shipments' declared purpose, or from
national entries for what never passed customs), trade with non-Parties in both
directions, HFC-23 by-product per facility (beside Annex F consumption, never in
it), and the totals per Annex group, which equal 'halovet consumption'. Every line
names the records behind it: shipment ids and national entry keys.

Without --dir the group totals are printed (or the whole report with --output
json). With --dir the report is written there, each file replaced whole:
  groups.csv       totals per Annex group (has_data no: no data, not zero, and
                   the figures are left empty)
  imports.csv      imports by exporting country and substance
  exports.csv      exports by destination and substance
  production.csv, destruction.csv, feedstock.csv, qps.csv   quantities by basis
  non-party.csv    trade with non-Parties, both directions
  hfc23.csv        HFC-23 by-product per facility
  exemptions.csv   the year's authorised exemptions with their sources
  report.json      the whole report in the JSON dialect of --output json
                   (halovet help json), the console's download byte for byte
  report.html      a printable page of the same figures
The files hold no time of computation, so a year whose register does not change
gives the same bytes.

Examples:
  halovet year-report --year 2026
  halovet year-report --year 2026 --dir report-2026`

func defineYearReport(fs *pflag.FlagSet) runFunc {
	var rf reportFlags
	rf.register(fs)
	year := fs.Int("year", 0, "calendar year (required)")
	dir := fs.String("dir", "", "write the CSV files, report.json and report.html into this directory (created if missing)")
	return func(ctx context.Context, args []string) error {
		if err := rf.check(args); err != nil {
			return err
		}
		if rf.output == "csv" {
			return usageErr("--output csv: the CSV files are written with --dir; use --output text or json")
		}
		if *year == 0 {
			return usageErr("--year is required, e.g. --year 2026")
		}
		return rf.withConn(func(conn *grpc.ClientConn) error {
			rep, err := halovetv1.NewConsumptionServiceClient(conn).GetYearReport(ctx, &halovetv1.GetYearReportRequest{Year: int32(*year)})
			if err != nil {
				return err
			}
			if *dir != "" {
				files, err := yearReportFiles(rep)
				if err != nil {
					return err
				}
				if err := writeFilesAtomically(*dir, files); err != nil {
					return err
				}
			}
			if rf.output == "json" {
				return wirejson.Doc(os.Stdout, rep)
			}
			return writeYearSummary(os.Stdout, rep, *dir)
		})
	}
}

// yearFile is one file of the report.
type yearFile struct {
	name string
	data []byte
}

func idsText(ids []int64, keys []string) string {
	parts := make([]string, 0, len(ids)+len(keys))
	for _, id := range ids {
		parts = append(parts, "shipment:"+strconv.FormatInt(id, 10))
	}
	for _, k := range keys {
		parts = append(parts, "entry:"+k)
	}
	return strings.Join(parts, " ")
}

func csvBytes(header []string, rows [][]string) ([]byte, error) {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	_ = w.Write(header)
	_ = w.WriteAll(rows)
	return b.Bytes(), w.Error()
}

var tradeHeader = []string{"partner_country", "substance", "annex_group", "partner_non_party", "new_t", "recovered_t",
	"feedstock_t", "qps_t", "exempted_t", "destruction_t", "records"}

func tradeRows(ls []*halovetv1.YearTradeLine) [][]string {
	var out [][]string
	for _, l := range ls {
		row := []string{l.GetPartnerCountry(), l.GetSubstance(), l.GetAnnexGroup(), yesNo(l.GetPartnerNonParty()),
			l.GetNewTonnes(), l.GetRecoveredTonnes(), l.GetFeedstockTonnes(), l.GetQpsTonnes(),
			l.GetExemptedTonnes(), l.GetDestructionTonnes(), idsText(l.GetShipmentIds(), l.GetEntryKeys())}
		out = append(out, row)
	}
	return out
}

var qtyHeader = []string{"substance", "annex_group", "basis", "tonnes", "records"}

func qtyRows(ls []*halovetv1.YearQuantityLine) [][]string {
	var out [][]string
	for _, l := range ls {
		out = append(out, []string{l.GetSubstance(), l.GetAnnexGroup(), wirejson.EnumWord(l.GetBasis().Descriptor(), l.GetBasis().Number()), l.GetTonnes(), idsText(l.GetShipmentIds(), l.GetEntryKeys())})
	}
	return out
}

var groupHeader = []string{"annex_group", "has_data", "production_t", "imports_t", "exports_t", "destruction_t", "feedstock_t",
	"qps_t", "exports_non_party_t", "consumption_t", "consumption_odp_t", "consumption_co2e_t"}

func groupRows(gs []*halovetv1.YearGroupTotal) [][]string {
	var out [][]string
	for _, g := range gs {
		if !g.GetHasData() {
			// No data is not zero: the figures stay empty.
			out = append(out, append([]string{g.GetAnnexGroup(), "no"}, make([]string, len(groupHeader)-2)...))
			continue
		}
		out = append(out, []string{g.GetAnnexGroup(), yesNo(g.GetHasData()), g.GetProductionTonnes(), g.GetImportTonnes(),
			g.GetExportTonnes(), g.GetDestructionTonnes(), g.GetFeedstockTonnes(), g.GetQpsTonnes(),
			g.GetExportNonPartyTonnes(), g.GetConsumptionTonnes(), g.GetConsumptionOdpTonnes(),
			g.GetConsumptionCo2ETonnes()})
	}
	return out
}

var hfc23Header = []string{"facility", "year", "generated_t", "captured_used_t", "destroyed_t", "emitted_t", "emitted_co2e_t", "entry_key"}

func hfc23Rows(es []*halovetv1.Hfc23Entry) [][]string {
	var out [][]string
	for _, e := range es {
		out = append(out, []string{e.GetFacility(), strconv.Itoa(int(e.GetYear())), e.GetGeneratedTonnes(), e.GetCapturedUsedTonnes(),
			e.GetDestroyedTonnes(), e.GetEmittedTonnes(), e.GetEmittedCo2ETonnes(), e.GetEntryKey()})
	}
	return out
}

var exemptionHeader = []string{"exemption_key", "country_code", "year", "annex_group", "use", "amount", "unit", "source"}

func exemptionRows(es []*halovetv1.AuthorisedExemption) [][]string {
	var out [][]string
	for _, e := range es {
		out = append(out, []string{e.GetExemptionKey(), e.GetCountryCode(), strconv.Itoa(int(e.GetYear())), e.GetAnnexGroup(),
			wirejson.EnumWord(e.GetUse().Descriptor(), e.GetUse().Number()), e.GetAmount(), wireterms.ControlUnitText(e.GetUnit()), e.GetSource()})
	}
	return out
}

// yearReportFiles renders every file of the report.
func yearReportFiles(rep *halovetv1.GetYearReportResponse) ([]yearFile, error) {
	var files []yearFile
	add := func(name string, header []string, rows [][]string) error {
		b, err := csvBytes(header, rows)
		if err == nil {
			files = append(files, yearFile{name, b})
		}
		return err
	}
	np := append([][]string{}, prefixRows("import", tradeRows(rep.GetImportsNonParty()))...)
	np = append(np, prefixRows("export", tradeRows(rep.GetExportsNonParty()))...)
	for _, f := range []struct {
		name   string
		header []string
		rows   [][]string
	}{
		{"groups.csv", groupHeader, groupRows(rep.GetGroups())},
		{"imports.csv", tradeHeader, tradeRows(rep.GetImports())},
		{"exports.csv", tradeHeader, tradeRows(rep.GetExports())},
		{"production.csv", qtyHeader, qtyRows(rep.GetProduction())},
		{"destruction.csv", qtyHeader, qtyRows(rep.GetDestruction())},
		{"feedstock.csv", qtyHeader, qtyRows(rep.GetFeedstock())},
		{"qps.csv", qtyHeader, qtyRows(rep.GetQps())},
		{"non-party.csv", append([]string{"direction"}, tradeHeader...), np},
		{"hfc23.csv", hfc23Header, hfc23Rows(rep.GetHfc23())},
		{"exemptions.csv", exemptionHeader, exemptionRows(rep.GetExemptions())},
	} {
		if err := add(f.name, f.header, f.rows); err != nil {
			return nil, err
		}
	}
	var j bytes.Buffer
	if err := wirejson.Doc(&j, rep); err != nil {
		return nil, err
	}
	files = append(files, yearFile{"report.json", j.Bytes()})
	var h bytes.Buffer
	if err := writeYearHTML(&h, rep); err != nil {
		return nil, err
	}
	files = append(files, yearFile{"report.html", h.Bytes()})
	return files, nil
}

func prefixRows(p string, rows [][]string) [][]string {
	for i, r := range rows {
		rows[i] = append([]string{p}, r...)
	}
	return rows
}

// writeFilesAtomically writes each file under a temporary name and renames it into place,
// so a reader never sees a half-written file.
func writeFilesAtomically(dir string, files []yearFile) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return usageErr("--dir %s: %v", dir, err)
	}
	for _, f := range files {
		tmp, err := os.CreateTemp(dir, "."+f.name+".*")
		if err != nil {
			return usageErr("--dir %s: %v", dir, err)
		}
		_, werr := tmp.Write(f.data)
		cerr := tmp.Close()
		if werr == nil {
			werr = cerr
		}
		if werr == nil {
			werr = os.Chmod(tmp.Name(), 0o644)
		}
		if werr == nil {
			werr = os.Rename(tmp.Name(), filepath.Join(dir, f.name))
		}
		if werr != nil {
			_ = os.Remove(tmp.Name())
			return fmt.Errorf("writing %s: %w", filepath.Join(dir, f.name), werr)
		}
	}
	return nil
}

func writeYearSummary(w io.Writer, rep *halovetv1.GetYearReportResponse, dir string) error {
	fmt.Fprintf(w, "Data report of %s for %d (%s)\n\n", orNone(rep.GetCountryCode()), rep.GetYear(), wirejson.EnumWord(rep.GetState().Descriptor(), rep.GetState().Number()))
	tw := newTable(w)
	fmt.Fprintln(tw, "group\tproduction t\timports t\texports t\tdestroyed t\tfeedstock t\tQPS t\tto non-Parties t\tconsumption t\tODP t\tCO2-eq t\t")
	for _, g := range rep.GetGroups() {
		if !g.GetHasData() {
			continue
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n", g.GetAnnexGroup(), showT(g.GetProductionTonnes()),
			showT(g.GetImportTonnes()), showT(g.GetExportTonnes()), showT(g.GetDestructionTonnes()), showT(g.GetFeedstockTonnes()),
			showT(g.GetQpsTonnes()), showT(g.GetExportNonPartyTonnes()), showT(g.GetConsumptionTonnes()),
			showODP(g.GetConsumptionOdpTonnes()), showCO2e(g.GetConsumptionCo2ETonnes()))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if len(rep.GetNoDataGroups()) > 0 {
		fmt.Fprintf(w, "\nNo data (not zero): %s\n", strings.Join(rep.GetNoDataGroups(), ", "))
	}
	fmt.Fprintf(w, "\n%d import lines, %d export lines, %d HFC-23 facilities\n", len(rep.GetImports()), len(rep.GetExports()), len(rep.GetHfc23()))
	if dir != "" {
		fmt.Fprintf(w, "written to %s: groups.csv imports.csv exports.csv production.csv destruction.csv feedstock.csv qps.csv non-party.csv hfc23.csv exemptions.csv report.json report.html\n", dir)
	}
	writeNotes(w, "Notes", rep.GetNotes())
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}

func orNone(s string) string {
	if s == "" {
		return "(no reporting Party configured)"
	}
	return s
}

// yearHTML is the printable page. Figures are the CSV files' (full precision); the layout
// and headings are our own.
var yearHTML = template.Must(template.New("year").Funcs(template.FuncMap{
	"t": asIs, "ids": idsText, "yn": yesNo, "unit": wireterms.ControlUnitText,
	"use":   func(u halovetv1.ExemptedUse) string { return wirejson.EnumWord(u.Descriptor(), u.Number()) },
	"basis": func(b halovetv1.QuantityBasis) string { return wirejson.EnumWord(b.Descriptor(), b.Number()) },
	"state": func(s halovetv1.ReportState) string { return wirejson.EnumWord(s.Descriptor(), s.Number()) },
}).Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>Data report {{.CountryCode}} {{.Year}}</title>
<style>
body { font-family: sans-serif; font-size: 10pt; margin: 1.5em; }
table { border-collapse: collapse; margin-bottom: 1.2em; }
th, td { border: 1px solid #888; padding: 2px 6px; text-align: right; vertical-align: top; }
th:first-child, td:first-child, td.text { text-align: left; }
td.ids { font-size: 8pt; text-align: left; max-width: 20em; }
@media print { body { margin: 0; } h2 { page-break-after: avoid; } table { page-break-inside: auto; } tr { page-break-inside: avoid; } }
</style>
</head>
<body>
<h1>Data report of {{if .CountryCode}}{{.CountryCode}}{{else}}(no reporting Party configured){{end}} for {{.Year}}</h1>
<p>State: {{state .State}}. Figures in metric tonnes unless marked; every line names the records behind it.</p>
<h2>Totals per Annex group</h2>
<table><tr><th>group</th><th>data</th><th>production</th><th>imports</th><th>exports</th><th>destroyed</th><th>feedstock</th><th>QPS</th><th>to non-Parties</th><th>consumption</th><th>ODP t</th><th>CO2-eq t</th></tr>
{{range .Groups}}{{if not .HasData}}<tr><td>{{.AnnexGroup}}</td><td class="text" colspan="11">no data (not zero)</td></tr>
{{else}}<tr><td>{{.AnnexGroup}}</td><td class="text">yes</td><td>{{t .ProductionTonnes}}</td><td>{{t .ImportTonnes}}</td><td>{{t .ExportTonnes}}</td><td>{{t .DestructionTonnes}}</td><td>{{t .FeedstockTonnes}}</td><td>{{t .QpsTonnes}}</td><td>{{t .ExportNonPartyTonnes}}</td><td>{{t .ConsumptionTonnes}}</td><td>{{t .ConsumptionOdpTonnes}}</td><td>{{t .ConsumptionCo2ETonnes}}</td></tr>
{{end}}{{end}}</table>
{{define "trade"}}<table><tr><th>partner</th><th>substance</th><th>group</th><th>non-Party</th><th>new</th><th>recovered</th><th>feedstock</th><th>QPS</th><th>exempted uses</th><th>destruction</th><th>records</th></tr>
{{range .}}<tr><td>{{.PartnerCountry}}</td><td class="text">{{.Substance}}</td><td class="text">{{.AnnexGroup}}</td><td class="text">{{yn .PartnerNonParty}}</td><td>{{t .NewTonnes}}</td><td>{{t .RecoveredTonnes}}</td><td>{{t .FeedstockTonnes}}</td><td>{{t .QpsTonnes}}</td><td>{{t .ExemptedTonnes}}</td><td>{{t .DestructionTonnes}}</td><td class="ids">{{ids .ShipmentIds .EntryKeys}}</td></tr>
{{end}}</table>{{end}}
{{define "qty"}}<table><tr><th>substance</th><th>group</th><th>basis</th><th>tonnes</th><th>records</th></tr>
{{range .}}<tr><td>{{.Substance}}</td><td class="text">{{.AnnexGroup}}</td><td class="text">{{basis .Basis}}</td><td>{{t .Tonnes}}</td><td class="ids">{{ids .ShipmentIds .EntryKeys}}</td></tr>
{{end}}</table>{{end}}
<h2>Imports by exporting country</h2>{{template "trade" .Imports}}
<h2>Exports by destination</h2>{{template "trade" .Exports}}
<h2>Production</h2>{{template "qty" .Production}}
<h2>Destruction</h2>{{template "qty" .Destruction}}
<h2>Feedstock use</h2>{{template "qty" .Feedstock}}
<h2>QPS use of methyl bromide</h2>{{template "qty" .Qps}}
<h2>Imports from non-Parties</h2>{{template "trade" .ImportsNonParty}}
<h2>Exports to non-Parties</h2>{{template "trade" .ExportsNonParty}}
<h2>HFC-23 by-product per facility (beside Annex F consumption, not part of it)</h2>
<table><tr><th>facility</th><th>generated</th><th>captured for use</th><th>destroyed</th><th>emitted</th><th>emitted CO2-eq t</th><th>entry</th></tr>
{{range .Hfc23}}<tr><td>{{.Facility}}</td><td>{{t .GeneratedTonnes}}</td><td>{{t .CapturedUsedTonnes}}</td><td>{{t .DestroyedTonnes}}</td><td>{{t .EmittedTonnes}}</td><td>{{t .EmittedCo2ETonnes}}</td><td class="text">{{.EntryKey}}</td></tr>
{{end}}</table>
<h2>Authorised exemptions</h2>
<table><tr><th>use</th><th>group</th><th>amount</th><th>unit</th><th>source</th><th>key</th></tr>
{{range .Exemptions}}<tr><td>{{use .Use}}</td><td class="text">{{.AnnexGroup}}</td><td>{{t .Amount}}</td><td class="text">{{unit .Unit}}</td><td class="text">{{.Source}}</td><td class="text">{{.ExemptionKey}}</td></tr>
{{end}}</table>
{{if .Notes}}<h2>Notes</h2><ul>{{range .Notes}}<li>{{.}}</li>{{end}}</ul>{{end}}
<p><small>` + decisionSupportNotice + ` Refrigerants are asphyxiants in confined spaces, cause frostbite on contact and decompose to toxic and corrosive products in flames; ASHRAE 34 class A2L, A2 and A3 refrigerants are flammable, class B ones of higher toxicity.</small></p>
</body>
</html>
`))

func writeYearHTML(w io.Writer, rep *halovetv1.GetYearReportResponse) error {
	return yearHTML.Execute(w, rep)
}
