package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"encoding/xml"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/validate"
)

// Tests of the consumption report verbs: the text, CSV and JSON renderings and, end to
// end on a real server and PostgreSQL, the demo batch's consumption against a sum computed
// here straight from the demo files. The SVG chart is tested in chart_test.go, the
// entries file reader in entries_test.go.

// reportSample is an invented compliance answer: four years, one without data, one
// exceeded, one under a period-average rule.
func reportSample() *halovetv1.AssessComplianceResponse {
	return &halovetv1.AssessComplianceResponse{AnnexGroup: "C/I", Unit: halovetv1.ControlUnit_CONTROL_UNIT_ODP_TONNES,
		BaselineAmount: "10", BaselineComplete: true,
		AppliesTo: halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5, ScheduleSource: "rulebook test",
		Years: []*halovetv1.ComplianceYear{
			{Year: 2028, ConsumptionAmount: "3", AllowedAmount: "3.25", AllowedPercent: "32.5", HeadroomAmount: "0.25", Within: true, HasData: true,
				Outcome: halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN, Notes: []string{"step in force: 32.5 %"}},
			{Year: 2029, AllowedAmount: "3.25", AllowedPercent: "32.5", Outcome: halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED,
				Notes: []string{"step in force: 32.5 %", "no data: no record for C/I (HCFCs) in 2029"}},
			{Year: 2030, ConsumptionAmount: "4", AllowedAmount: "0.25", AllowedPercent: "2.5", HeadroomAmount: "-0.75", HasData: true,
				Outcome: halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED, Notes: []string{"step in force: 0 %"},
				Period: &halovetv1.PeriodAverage{FromYear: 2030, ToYear: 2039, LimitPercent: "2.5", YearsCounted: 1, YearsRemaining: 9,
					SumAmount: "4", RunningAverageAmount: "4", RoomLeftAmount: "-1.5", BudgetAmount: "2.5"}},
			{Year: 2031, ConsumptionAmount: "-0.5", AllowedAmount: "0.25", AllowedPercent: "2.5", HeadroomAmount: "0.2", HasData: true,
				Outcome: halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN, Notes: []string{"step in force: 0 %"},
				Period: &halovetv1.PeriodAverage{FromYear: 2030, ToYear: 2039, RunningAverageAmount: "1.75", RoomLeftAmount: "-1"}},
		}}
}

func TestComplianceTextCSVJSON(t *testing.T) {
	resp := reportSample()
	var b bytes.Buffer
	if err := writeCompliance(&b, resp, "text"); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	for _, want := range []string{"consumption ODP t", "allowed ODP t", "headroom ODP t", "room left ODP t",
		"EXCEEDED", "not assessed", "-0.75", "-0.5", "2028–2029: step in force: 32.5 %", "2030–2031: step in force: 0 %",
		"decision support"} {
		if !strings.Contains(out, want) {
			t.Errorf("text output lacks %q:\n%s", want, out)
		}
	}
	// The year without data shows no consumption figure rather than a 0.
	for _, line := range strings.Split(out, "\n") {
		if f := strings.Fields(line); strings.Contains(line, "2029") && strings.Contains(line, "not assessed") && (len(f) < 2 || f[1] != "32.5") {
			t.Errorf("2029 (no data) prints a figure: %q", line)
		}
	}

	b.Reset()
	if err := writeCompliance(&b, resp, "csv"); err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(&b).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 5 || rows[0][0] != "year" || rows[3][5] != "exceeded" || rows[2][5] != "not-assessed" || rows[3][4] != "-0.75" {
		t.Fatalf("csv rows %q: want a header and 4 years, 2030 exceeded with headroom -0.75", rows)
	}

	b.Reset()
	if err := writeCompliance(&b, resp, "json"); err != nil {
		t.Fatal(err)
	}
	back := &halovetv1.AssessComplianceResponse{}
	if err := wirejson.Unmarshal(b.Bytes(), back); err != nil || len(back.GetYears()) != 4 || back.GetYears()[2].GetPeriod().GetRoomLeftAmount() != "-1.5" {
		t.Fatalf("json does not read back as the response: %v %v", err, back)
	}
}

func TestConsumptionTextAndCSV(t *testing.T) {
	// Invented figures: HCFC-22 imports 10 t, exports 12 t (negative consumption), and
	// R-408A's HFC-125 in F/I.
	resp := &halovetv1.GetConsumptionResponse{Year: 2026, CountryCode: "XA", Notes: []string{"a note"}, Groups: []*halovetv1.GroupConsumption{
		{AnnexGroup: "C/I", ConsumptionTonnes: "-2", ConsumptionOdpTonnes: "-0.11", ConsumptionCo2ETonnes: "-3620", Substances: []*halovetv1.SubstanceConsumption{
			{Substance: "HCFC-22", ProductionTonnes: "0", ImportTonnes: "10", ExportTonnes: "12", DestructionTonnes: "0", FeedstockTonnes: "0", QpsTonnes: "0",
				NotCountedTonnes: "0", ExportNonPartyTonnes: "0", ConsumptionTonnes: "-2", ConsumptionOdpTonnes: "-0.11", ConsumptionCo2ETonnes: "-3620"}}},
		{AnnexGroup: "F/I", ConsumptionTonnes: "0.7", ConsumptionOdpTonnes: "0", ConsumptionCo2ETonnes: "2450", Substances: []*halovetv1.SubstanceConsumption{
			{Substance: "HFC-125", ProductionTonnes: "0", ImportTonnes: "0.7", ExportTonnes: "0", DestructionTonnes: "0", FeedstockTonnes: "0", QpsTonnes: "0",
				NotCountedTonnes: "0", ExportNonPartyTonnes: "0", ConsumptionTonnes: "0.7", ConsumptionOdpTonnes: "0", ConsumptionCo2ETonnes: "2450"}}},
	}}
	var b bytes.Buffer
	if err := writeConsumption(&b, resp, "text"); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	for _, want := range []string{"Consumption of XA in 2026", "imports t", "ODP t", "CO2-eq t", "-0.11", "-2", "2450", "total", "a note", "decision support"} {
		if !strings.Contains(out, want) {
			t.Errorf("text lacks %q:\n%s", want, out)
		}
	}
	b.Reset()
	if err := writeConsumption(&b, resp, "csv"); err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(&b).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	// header, HCFC-22, C/I total, HFC-125, F/I total
	if len(rows) != 5 || rows[0][11] != "consumption_odp_t" || rows[1][11] != "-0.11" || rows[2][1] != "total" || rows[4][12] != "2450" {
		t.Fatalf("csv %q", rows)
	}
}

func TestBaselineTextNamesWhatIsMissing(t *testing.T) {
	co2e := halovetv1.ControlUnit_CONTROL_UNIT_CO2E_TONNES
	resp := &halovetv1.GetBaselineResponse{AnnexGroup: "F", Unit: co2e, AppliesTo: halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5_HFC_FIRST_GROUP,
		Rule:           "mean F 2020–2022 + 65 %",
		Years:          []*halovetv1.BaselineYear{{Year: 2020, Amount: "1000", HasData: true}, {Year: 2021}},
		HcfcBaseline:   &halovetv1.BaselinePart{AnnexGroup: "C/I", Unit: co2e, Years: []*halovetv1.BaselineYear{{Year: 2009, Amount: "5", HasData: true}}},
		HcfcShareRatio: "0.65", Missing: []string{"F 2021: no consumption data for F (HFCs); enter the 2021 totals"}}
	var b bytes.Buffer
	if err := writeBaseline(&b, resp, "text"); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	for _, want := range []string{"cannot be computed", "F 2021: no consumption data", "no data", "HCFC component (65 %)", "C/I in CO2-eq", "incomplete"} {
		if !strings.Contains(out, want) {
			t.Errorf("text lacks %q:\n%s", want, out)
		}
	}
}

// demoParty is a country's settings in scenario.json, as far as the test needs them.
type demoParty struct {
	CountryCode string            `json:"countryCode"`
	PartyType   string            `json:"partyType"`
	BoundFrom   map[string]string `json:"boundFrom"`
}

// TestDemoConsumptionMatchesFile records the demo batch through the shipment API and
// checks GetConsumption for 2026 against a sum computed here from shipments.csv, line by
// line, with the counting rules of Art. 1 paras 5-6, Art. 3 and Decisions IV/24 and VII/30
// written out again: imports minus exports to Parties; transit, used/recycled/reclaimed
// material, feedstock imports and methyl bromide for QPS not counted; exports to a partner
// not bound for the component's group not deducted; blends split by nominal composition.
func TestDemoConsumptionMatchesFile(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "demo")
	ts := startTestServer(t, nil)
	conn, st := ts.conn, ts.st
	ctx := context.Background()
	if _, err := loadRegistry(ctx, conn, filepath.Join(dir, "scenario.json")); err != nil {
		t.Fatal(err)
	}
	if _, err := checkFile(ctx, conn, checkOptions{path: filepath.Join(dir, "shipments.csv"), format: validate.FormatCSV, record: true,
		maxLine: validate.DefaultMaxLineBytes, output: "text"}, io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}

	// What was recorded, by (company, key).
	rows, err := st.Pool().Query(ctx, `SELECT company_id, record_key FROM shipments`)
	if err != nil {
		t.Fatal(err)
	}
	recorded := map[[2]string]bool{}
	for rows.Next() {
		var c, k string
		if err := rows.Scan(&c, &k); err != nil {
			t.Fatal(err)
		}
		recorded[[2]string{c, k}] = true
	}
	if rows.Err() != nil || len(recorded) < 300 {
		t.Fatalf("%d shipments recorded (err %v); the demo batch records over 300", len(recorded), rows.Err())
	}

	var scen struct {
		Parties []demoParty `json:"parties"`
	}
	raw, err := os.ReadFile(filepath.Join(dir, "scenario.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, &scen); err != nil {
		t.Fatal(err)
	}
	parties := map[string]demoParty{}
	for _, p := range scen.Parties {
		parties[p.CountryCode] = p
	}
	subs, blends, err := substances.Seed()
	if err != nil {
		t.Fatal(err)
	}
	cat, err := substances.NewCatalogue(subs, blends)
	if err != nil {
		t.Fatal(err)
	}

	// Read the file line by line (some special lines are deliberately broken CSV).
	f, err := os.Open(filepath.Join(dir, "shipments.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 1<<20), 1<<20)
	var header []string
	col := map[string]int{}
	seen := map[[2]string]bool{}
	odp := map[string]float64{} // by group: ODP t (A-E) or CO2-eq t (F)
	used := 0
	for n := 1; sc.Scan(); n++ {
		rec, err := csv.NewReader(strings.NewReader(sc.Text())).Read()
		if n == 1 {
			header = rec
			for i, h := range header {
				col[h] = i
			}
			continue
		}
		if err != nil || len(rec) != len(header) {
			continue
		}
		get := func(c string) string { return strings.TrimSpace(rec[col[c]]) }
		k := [2]string{get("company_id"), get("record_key")}
		if !recorded[k] || seen[k] {
			continue // rejected, or a later line with a key stored from an earlier one
		}
		seen[k] = true
		used++
		// The total when given, else the fill per package × the package count.
		qtyText := get("total_net_quantity")
		count := 1.0
		if qtyText == "" {
			qtyText = get("net_fill_per_package")
			cnt, err := strconv.Atoi(get("package_count"))
			if err != nil {
				t.Fatalf("line %d recorded with a fill and package count %q", n, get("package_count"))
			}
			count = float64(cnt)
		}
		qty, err := strconv.ParseFloat(qtyText, 64)
		if err != nil {
			t.Fatalf("line %d recorded with quantity %q", n, qtyText)
		}
		factor := map[string]float64{"kg": 1, "t": 1000, "g": 0.001, "lb": 0.45359237}[get("quantity_unit")] // 1 lb = 0.45359237 kg exactly (international yard and pound agreement, 1959)
		if factor == 0 {
			t.Fatalf("line %d recorded with unit %q", n, get("quantity_unit"))
		}
		kg := qty * factor * count
		// Components and their mass fractions.
		type part struct {
			s   *substances.Substance
			pct float64
		}
		var parts []part
		name := get("substance")
		if name == "" {
			for _, sh := range strings.Split(get("declared_composition"), ";") {
				d, p, _ := strings.Cut(sh, "=")
				s, ok := cat.Substance(strings.TrimSpace(d))
				pct, _ := strconv.ParseFloat(p, 64)
				if !ok {
					t.Fatalf("line %d: component %q", n, d)
				}
				parts = append(parts, part{s, pct})
			}
		} else {
			c, ok := cat.Resolve(name).Unique()
			if !ok {
				t.Fatalf("line %d recorded but %q does not resolve to one entry", n, name)
			}
			if c.Kind == substances.KindBlend {
				b, _ := cat.Blend(c.Designation)
				for _, bc := range b.Components {
					s, _ := cat.Substance(bc.Designation)
					parts = append(parts, part{s, bc.MassPct})
				}
			} else {
				s, _ := cat.Substance(c.Designation)
				parts = append(parts, part{s, 100})
			}
		}
		dir, purpose, cond := get("direction"), get("purpose"), get("condition")
		date := get("declaration_date")
		if dir == "transit" || cond == "used" || cond == "recycled" || cond == "reclaimed" {
			continue
		}
		for _, p := range parts {
			g := p.s.Group
			if !g.Controlled() {
				continue
			}
			tn := kg * p.pct / 100 / 1000
			var sign float64
			switch dir {
			case "import":
				sign = 1
				if purpose == "feedstock" || purpose == "process-agent" || (purpose == "qps" && g == substances.GroupEI) {
					sign = 0
				}
			case "export", "re-export":
				pp, known := parties[get("partner_country")]
				from, bound := pp.BoundFrom[string(g)]
				if known && pp.PartyType != "PARTY_TYPE_NON_PARTY" && bound && from <= date {
					sign = -1
				}
			}
			v := tn * p.s.ODP
			if g == substances.GroupFI || g == substances.GroupFII {
				v = tn * p.s.ProtocolGWP()
			}
			odp[string(g)] += sign * v
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	if used != len(recorded) {
		t.Fatalf("matched %d recorded shipments to file lines, want all %d", used, len(recorded))
	}

	resp, err := halovetv1.NewConsumptionServiceClient(conn).GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2026})
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]float64{}
	for _, g := range resp.GetGroups() {
		if strings.HasPrefix(g.GetAnnexGroup(), "F/") {
			got[g.GetAnnexGroup()] = wireDec(g.GetConsumptionCo2ETonnes()).Float64()
		} else {
			got[g.GetAnnexGroup()] = wireDec(g.GetConsumptionOdpTonnes()).Float64()
		}
	}
	for g, want := range odp {
		if math.Abs(got[g]-want) > 1e-6*math.Max(1, math.Abs(want)) {
			t.Errorf("%s 2026: the API says %.9f, the file gives %.9f", g, got[g], want)
		}
	}
	for g, v := range got {
		if _, ok := odp[g]; !ok && v != 0 {
			t.Errorf("%s 2026: the API says %v, the file gives nothing", g, v)
		}
	}
	if len(odp) < 3 {
		t.Errorf("the file's sum covers groups %v; the demo batch trades in C/I, E/I, B/II and F/I", odp)
	}
	t.Logf("demo 2026 from the file: %v", odp)
}

// TestEntriesAndReportsEndToEnd imports the demo's national entries with the CLI path and
// renders each report from the live server.
func TestEntriesAndReportsEndToEnd(t *testing.T) {
	conn := startTestServer(t, nil).conn
	ctx := context.Background()
	dir := filepath.Join("..", "..", "testdata", "demo")
	if _, err := loadRegistry(ctx, conn, filepath.Join(dir, "scenario.json")); err != nil {
		t.Fatal(err)
	}
	resp, err := importEntries(ctx, conn, filepath.Join(dir, "national_entries.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if resp.GetStored() != 31 {
		t.Fatalf("stored %d entries, want the file's 31", resp.GetStored())
	}
	// A file the server refuses: the line number comes back with the problem.
	bad := filepath.Join(t.TempDir(), "bad.csv")
	if err := os.WriteFile(bad, []byte("entry_key,year,entry_type,substance,metric_tonnes\nb1,2009,historical-import,HCFC-22,1\nb2,2009,historical-import,R-404A,1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = importEntries(ctx, conn, bad)
	if err == nil || !strings.Contains(err.Error(), "line 3") || !strings.Contains(err.Error(), "split it") {
		t.Fatalf("refused file: %v; want line 3 and the advice to split the blend", err)
	}
	c := halovetv1.NewConsumptionServiceClient(conn)
	// HCFC baseline of XA from the file (invented data), A5 mean of 2009-2010, ODP from
	// Montreal Protocol Annex C (HCFC-22 0.055, HCFC-141b 0.11, HCFC-142b 0.065,
	// HCFC-124 0.022):
	//   2009: 200 × 0.055 + 30 × 0.11 + 5 × 0.065 = 11 + 3.3 + 0.325 = 14.625
	//   2010: 210 × 0.055 + 25 × 0.11 + 0 + 2 × 0.022 = 11.55 + 2.75 + 0.044 = 14.344
	//   baseline = 14.4845 ODP t
	b, err := c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "C/I"})
	if err != nil {
		t.Fatal(err)
	}
	if b.GetBaselineAmount() != "14.4845" {
		t.Fatalf("baseline %q, want exactly 14.4845 ODP t", b.GetBaselineAmount())
	}
	var out bytes.Buffer
	if err := writeBaseline(&out, b, "text"); err != nil || !strings.Contains(out.String(), "Baseline: 14.4845 ODP t") {
		t.Fatalf("baseline text (err %v):\n%s", err, out.String())
	}
	ac, err := c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: "F", FromYear: 2024, ToYear: 2025})
	if err != nil {
		t.Fatal(err)
	}
	out.Reset()
	if err := writeChart(&out, ac, "", false); err != nil {
		t.Fatal(err)
	}
	var doc svgNode
	if err := xml.Unmarshal(out.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	points := 0
	doc.walk(func(n svgNode) {
		if strings.Contains(" "+n.attr("class")+" ", " point ") {
			points++
		}
	})
	if points != 2 {
		t.Errorf("%d points, want 2 (2024 and 2025)", points)
	}
	list, err := c.ListNationalEntries(ctx, &halovetv1.ListNationalEntriesRequest{Year: 2010})
	if err != nil {
		t.Fatal(err)
	}
	out.Reset()
	if err := writeEntries(&out, list.GetEntries(), "", "csv", list); err != nil {
		t.Fatal(err)
	}
	back, _, errs := readEntries(&out)
	if len(errs) != 0 || len(back) != 4 {
		t.Fatalf("the csv listing does not read back as an entries file: %d entries, %v", len(back), errs)
	}
}
