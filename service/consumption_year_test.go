package service_test

import (
	"context"
	"slices"
	"strings"
	"testing"

	"google.golang.org/grpc/codes"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// Worked examples of the reporting year: every quantity deducted once, "no data" apart from
// zero. Companies, Parties and quantities are INVENTED (user-assigned code XB); substance
// values are real:
//   ODPs: Montreal Protocol Annex B Group II (carbon tetrachloride 1.1), Annex E (methyl
//     bromide 0.6), Annex C Group I (HCFC-22 0.055).
// Rules: feedstock is outside "controlled substance" and not counted (Art. 1 paras 4-5;
// Decision VII/30); QPS uses of methyl bromide are not counted (Art. 2H para 6); destroyed
// amounts are deducted (Art. 1 para 5); non-Article 5 methyl bromide level 0 from 2005
// (Art. 2H para 5).

const (
	feed = halovetv1.EntryType_ENTRY_TYPE_FEEDSTOCK
	qps  = halovetv1.EntryType_ENTRY_TYPE_QPS
)

func outsideCustoms(e *halovetv1.NationalEntry) *halovetv1.NationalEntry {
	e.OutsideCustoms = true
	e.EntryKey += "/outside-customs"
	return e
}

func hasNote(notes []string, sub string) bool {
	return slices.ContainsFunc(notes, func(n string) bool { return strings.Contains(n, sub) })
}

// TestConsumptionDeductedOnce: QPS and feedstock deducted once, from the shipments' declared
// purpose, plus what never passed customs; a second deduction of the same use is refused or,
// entered before the shipments, left out with a note.
func TestConsumptionDeductedOnce(t *testing.T) {
	conn, st := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	consPutParty(t, conn, &halovetv1.Party{CountryCode: "XB", Name: "Borealia (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, ReportingParty: true})

	// Methyl bromide 2025. A whole-year QPS entry of 25 t stored before any shipment is
	// recorded (accepted then: no shipment declares QPS yet).
	consRecordEntries(t, c, consEntry(2025, qps, "methyl bromide", 25))
	consRecord(t, st,
		consShip{"mb1", "XB-1", "import", "qps", "virgin", false, 2025, "methyl bromide", 25},
		consShip{"mb2", "XB-1", "import", "critical-use", "virgin", false, 2025, "methyl bromide", 5},
		// CCl4 2025: 100 t imported as feedstock, 3 t for laboratory use.
		consShip{"cc1", "XB-2", "import", "feedstock", "virgin", false, 2025, "carbon tetrachloride", 100},
		consShip{"cc2", "XB-2", "import", "laboratory", "virgin", false, 2025, "carbon tetrachloride", 3},
		// HCFC-22 2025: 10 t imported for destruction, 4 t for servicing.
		consShip{"h1", "XB-3", "import", "destruction", "virgin", false, 2025, "HCFC-22", 10},
		consShip{"h2", "XB-3", "import", "servicing", "virgin", false, 2025, "HCFC-22", 4},
	)

	// The same feedstock use entered again as a whole-year entry is refused, naming the
	// field and what is accepted; nothing is stored.
	_, err := c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{
		consEntry(2025, feed, "CCl4", 100)}})
	consCode(t, err, codes.InvalidArgument, "entries[0].outside_customs")
	consCode(t, err, codes.InvalidArgument, "count the same use twice")
	// So is a destruction entry of HFC-23 (by-product: facility entries of its own).
	_, err = c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{
		outsideCustoms(consEntry(2025, dest, "HFC-23", 100))}})
	consCode(t, err, codes.InvalidArgument, "entries[0].entry_type")
	// Historical trade totals passed customs: they cannot be marked outside customs.
	_, err = c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{
		outsideCustoms(consEntry(2025, hImp, "HCFC-22", 1))}})
	consCode(t, err, codes.InvalidArgument, "entries[0].outside_customs")

	// What never passed customs: 40 t of CCl4 produced and used as feedstock at home; 2 t
	// of HCFC-22 stocks destroyed.
	consRecordEntries(t, c,
		outsideCustoms(consEntry(2025, prod, "carbon tetrachloride", 40)),
		outsideCustoms(consEntry(2025, feed, "carbon tetrachloride", 40)),
		outsideCustoms(consEntry(2025, dest, "HCFC-22", 2)),
	)

	got, err := c.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2025})
	if err != nil {
		t.Fatal(err)
	}
	// Hand computation (t; ODP t = t × ODP):
	//   methyl bromide: imports 25 + 5 = 30; QPS 25 (the shipment's purpose; the 25 t entry
	//     is the same use and left out): 30 − 25 = 5 t × 0.6 = 3.0 ODP t. Counted twice it
	//     read 5 − 25 = −20 t = −12.0 ODP t.
	//   CCl4: production 40 + imports 103 − feedstock (100 shipped + 40 domestic) = 3 t ×
	//     1.1 = 3.3 ODP t. With the 100 t entered again it read −97 t = −106.7 ODP t.
	//   HCFC-22: imports 14 − destruction (10 shipped + 2 stocks) = 2 t × 0.055 = 0.11 ODP t.
	mb := consSubstance(consGroup(got, "E/I"), "methyl bromide")
	consNear(t, "MB imports", mb.GetImportTonnes(), 30)
	consNear(t, "MB QPS", mb.GetQpsTonnes(), 25)
	consNear(t, "MB ODP t", consGroup(got, "E/I").GetConsumptionOdpTonnes(), 3.0)
	cc := consSubstance(consGroup(got, "B/II"), "carbon tetrachloride")
	consNear(t, "CCl4 feedstock", cc.GetFeedstockTonnes(), 140)
	consNear(t, "CCl4 ODP t", consGroup(got, "B/II").GetConsumptionOdpTonnes(), 3.3)
	h := consSubstance(consGroup(got, "C/I"), "HCFC-22")
	consNear(t, "HCFC-22 destruction", h.GetDestructionTonnes(), 12)
	consNear(t, "HCFC-22 ODP t", consGroup(got, "C/I").GetConsumptionOdpTonnes(), 0.11)
	if !hasNote(got.GetNotes(), "QPS/methyl bromide/2025") || !hasNote(got.GetNotes(), "left out") {
		t.Errorf("notes %q: want the left-out QPS entry named by its key", got.GetNotes())
	}
	if hasNote(got.GetNotes(), "national entries only") {
		t.Errorf("notes %q still say deductions come from national entries only", got.GetNotes())
	}

	// Compliance: methyl bromide 3.0 ODP t against a level of 0 is exceeded, not "within".
	ac, err := c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: "E/I", FromYear: 2025, ToYear: 2025})
	if err != nil {
		t.Fatal(err)
	}
	y := consYear(ac, 2025)
	consNear(t, "MB consumption assessed", y.GetConsumptionAmount(), 3.0)
	if y.GetOutcome() != halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED {
		t.Errorf("MB 2025 outcome %v, want EXCEEDED (allowed 0, Art. 2H para 5)", y.GetOutcome())
	}
}

// TestConsumptionNoDataApartFromZero: a recorded shipment of one group does not turn every
// other group into a zero year; a 0 t entry states a true zero.
func TestConsumptionNoDataApartFromZero(t *testing.T) {
	conn, st := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	consPutParty(t, conn, &halovetv1.Party{CountryCode: "XB", Name: "Borealia (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, ReportingParty: true})
	consRecord(t, st, consShip{"n1", "XB-1", "import", "servicing", "virgin", false, 2026, "HCFC-22", 1})
	consRecordEntries(t, c, consEntry(2026, hImp, "CFC-12", 0)) // a stated zero

	got, err := c.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2026})
	if err != nil {
		t.Fatal(err)
	}
	// Every group but C/I (shipment) and A/I (0 t entry) has no data.
	want := []string{"A/II", "B/I", "B/II", "B/III", "C/II", "C/III", "E/I", "F/I", "F/II"}
	if !slices.Equal(got.GetNoDataGroups(), want) {
		t.Errorf("no_data_groups %q, want %q", got.GetNoDataGroups(), want)
	}
	if g := consGroup(got, "A/I"); g == nil || g.GetConsumptionOdpTonnes() != "0" || consSubstance(g, "CFC-12") == nil {
		t.Errorf("A/I: %v, want the stated zero of CFC-12 listed", g)
	}
	// Methyl bromide (no data): not assessed, not "within". CFC (stated zero): within the 0 level.
	for _, cs := range []struct {
		group   string
		outcome halovetv1.ComplianceOutcome
		hasData bool
	}{
		{"E/I", halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED, false},
		{"A/I", halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN, true},
	} {
		ac, err := c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: cs.group, FromYear: 2026, ToYear: 2026})
		if err != nil {
			t.Fatal(err)
		}
		y := consYear(ac, 2026)
		if y.GetOutcome() != cs.outcome || y.GetHasData() != cs.hasData {
			t.Errorf("%s 2026: outcome %v has_data %v, want %v %v", cs.group, y.GetOutcome(), y.GetHasData(), cs.outcome, cs.hasData)
		}
	}
}

// TestComplianceExemptionsAndOfficialFigures: an authorised critical use within its limit;
// an official baseline and limit used in place of computed ones, both reported. The
// exemption, the official figures and their source texts are INVENTED. Rules: non-A5 methyl
// bromide level 0 from 2005 and critical uses authorised above it (Art. 2H para 5;
// Decision IX/6); non-A5 HCFC servicing cap 0.5 % of baseline 2020-2029 (Art. 2F para 6).
func TestComplianceExemptionsAndOfficialFigures(t *testing.T) {
	conn, st := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	consPutParty(t, conn, &halovetv1.Party{CountryCode: "XB", Name: "Borealia (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, ReportingParty: true})
	consRecord(t, st,
		consShip{"cu1", "XB-1", "import", "critical-use", "virgin", false, 2025, "methyl bromide", 5},
		consShip{"s1", "XB-2", "import", "servicing", "virgin", false, 2025, "HCFC-22", 10},
	)
	crit := halovetv1.ExemptedUse_EXEMPTED_USE_CRITICAL
	// Refusals: a critical use outside methyl bromide; an exemption without its decision.
	_, err := c.RecordExemptions(ctx, &halovetv1.RecordExemptionsRequest{Exemptions: []*halovetv1.AuthorisedExemption{
		{ExemptionKey: "x", Year: 2025, AnnexGroup: "C/I", Use: crit, Amount: "1", Source: "invented"}}})
	consCode(t, err, codes.InvalidArgument, "exemptions[0].use")
	_, err = c.RecordExemptions(ctx, &halovetv1.RecordExemptionsRequest{Exemptions: []*halovetv1.AuthorisedExemption{
		{ExemptionKey: "x", Year: 2025, AnnexGroup: "E/I", Use: crit, Amount: "1"}}})
	consCode(t, err, codes.InvalidArgument, "exemptions[0].source")

	assess := func(group string) *halovetv1.AssessComplianceResponse {
		t.Helper()
		ac, err := c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: group, FromYear: 2025, ToYear: 2025})
		if err != nil {
			t.Fatal(err)
		}
		return ac
	}
	// 5 t × 0.6 = 3.0 ODP t against 0: exceeded without the exemption.
	if y := consYear(assess("E/I"), 2025); y.GetOutcome() != halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED {
		t.Fatalf("MB 2025 without exemption: %v, want EXCEEDED", y.GetOutcome())
	}
	if _, err := c.RecordExemptions(ctx, &halovetv1.RecordExemptionsRequest{Exemptions: []*halovetv1.AuthorisedExemption{
		{ExemptionKey: "CUE-2025", Year: 2025, AnnexGroup: "E/I", Use: crit, Amount: "3.0", Source: "invented decision XB/1"}}}); err != nil {
		t.Fatal(err)
	}
	// With the authorised 3.0 ODP t: allowed 0 + 3.0, headroom 0: within.
	y := consYear(assess("E/I"), 2025)
	consNear(t, "MB computed allowed", y.GetComputedAllowedAmount(), 0)
	consNear(t, "MB exempted", y.GetExemptedAmount(), 3.0)
	consNear(t, "MB allowed", y.GetAllowedAmount(), 3.0)
	consNear(t, "MB headroom", y.GetHeadroomAmount(), 0)
	if y.GetOutcome() != halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN || len(y.GetExemptions()) != 1 ||
		y.GetExemptions()[0].GetSource() != "invented decision XB/1" {
		t.Errorf("MB 2025 with the exemption: %v %v, want WITHIN naming the decision", y.GetOutcome(), y.GetExemptions())
	}
	// The exemption beside the imports declared for the use: 5 t × 0.6 = 3 ODP t.
	if !hasNote(y.GetNotes(), "critical-use exemption 3 ODP t; imports declared for critical-use: 3 ODP t") {
		t.Errorf("notes %q: want the exemption compared with the imports declared for it", y.GetNotes())
	}

	// HCFC 2025: 10 × 0.055 = 0.55 ODP t; no 1989 data, so no computed baseline: not assessed.
	if y := consYear(assess("C/I"), 2025); y.GetOutcome() != halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED {
		t.Fatalf("HCFC 2025 without a baseline: %v, want NOT_ASSESSED", y.GetOutcome())
	}
	base := halovetv1.OfficialFigureKind_OFFICIAL_FIGURE_KIND_BASELINE
	if _, err := c.RecordOfficialFigures(ctx, &halovetv1.RecordOfficialFiguresRequest{Figures: []*halovetv1.OfficialFigure{
		{FigureKey: "B-CI", Kind: base, AnnexGroup: "C/I", Amount: "150", Source: "invented decision XB/2"}}}); err != nil {
		t.Fatal(err)
	}
	// GetBaseline shows it beside the computed one (which lacks the 1989 data).
	gb, err := c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "C/I"})
	if err != nil {
		t.Fatal(err)
	}
	if !gb.GetHasOfficialBaseline() || gb.GetOfficialBaselineAmount() != "150" || gb.GetComplete() {
		t.Errorf("GetBaseline: official %v %v, computed complete %v; want the official 150 beside an incomplete computed one",
			gb.GetHasOfficialBaseline(), gb.GetOfficialBaselineAmount(), gb.GetComplete())
	}
	// A second baseline of the same scope under another key is refused, naming the way out.
	_, err = c.RecordOfficialFigures(ctx, &halovetv1.RecordOfficialFiguresRequest{Figures: []*halovetv1.OfficialFigure{
		{FigureKey: "B-CI-again", Kind: base, AnnexGroup: "C/I", Amount: "1", Source: "invented"}}})
	consCode(t, err, codes.AlreadyExists, "under another figure_key")
	// Official baseline 150: 0.5 % × 150 = 0.75; headroom 0.2: within.
	ac := assess("C/I")
	y = consYear(ac, 2025)
	if !ac.GetHasOfficialBaseline() || ac.GetBaselineAmount() != "150" || ac.GetComputedBaselineAmount() != "" || ac.GetOfficialBaselineSource() != "invented decision XB/2" {
		t.Errorf("baseline: official %v %v (%q), computed %v; want both reported", ac.GetHasOfficialBaseline(), ac.GetBaselineAmount(), ac.GetOfficialBaselineSource(), ac.GetComputedBaselineAmount())
	}
	consNear(t, "HCFC allowed (official baseline)", y.GetAllowedAmount(), 0.75)
	consNear(t, "HCFC headroom", y.GetHeadroomAmount(), 0.2)
	// An agreed plan's limit of 0.5 ODP t: used instead of 0.75; headroom −0.05: exceeded.
	if _, err := c.RecordOfficialFigures(ctx, &halovetv1.RecordOfficialFiguresRequest{Figures: []*halovetv1.OfficialFigure{
		{FigureKey: "L-CI-2025", Kind: halovetv1.OfficialFigureKind_OFFICIAL_FIGURE_KIND_LIMIT, AnnexGroup: "C/I", Year: 2025, Amount: "0.5", Source: "invented agreed plan"}}}); err != nil {
		t.Fatal(err)
	}
	y = consYear(assess("C/I"), 2025)
	consNear(t, "HCFC computed allowed", y.GetComputedAllowedAmount(), 0.75)
	consNear(t, "HCFC allowed (official limit)", y.GetAllowedAmount(), 0.5)
	consNear(t, "HCFC headroom (official limit)", y.GetHeadroomAmount(), -0.05)
	if !y.GetHasOfficialLimit() || y.GetOutcome() != halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED {
		t.Errorf("HCFC 2025 with the official limit: %v %v, want EXCEEDED", y.GetHasOfficialLimit(), y.GetOutcome())
	}
	// Quota planning starts from the official limit too: 0.5 ODP t, all to XB-2 (the only
	// importer of 2025).
	plan, err := c.PlanQuotas(ctx, &halovetv1.PlanQuotasRequest{Year: 2025, AnnexGroup: "C/I", ReferenceYears: []int32{2025}})
	if err != nil {
		t.Fatal(err)
	}
	consNear(t, "planned allowed (official limit)", plan.GetAllowedAmount(), 0.5)
	if !hasNote(plan.GetNotes(), "invented agreed plan") {
		t.Errorf("plan notes %q: want the official limit named", plan.GetNotes())
	}
}

// TestLegacyHFC23DestructionFlagged: a destruction entry of HFC-23 stored before such
// entries were refused (written here straight through the store) is counted and flagged:
// by-product destroyed at a plant is no deduction (Art. 2J paras 6-7; Art. 3 para 1(d)).
// The entry is INVENTED.
func TestLegacyHFC23DestructionFlagged(t *testing.T) {
	conn, st := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	if err := st.PutNationalEntries(ctx, []store.NationalEntry{{Key: "OLD-HFC23", Year: 2025, Type: store.EntryDestruction, Substance: "HFC-23", Tonnes: num("100")}}); err != nil {
		t.Fatal(err)
	}
	got, err := c.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2025})
	if err != nil {
		t.Fatal(err)
	}
	// 100 t × 14800 (Annex F Group II GWP) = −1,480,000 CO2-eq t, shown and flagged.
	consNear(t, "F/II CO2-eq t", consGroup(got, "F/II").GetConsumptionCo2ETonnes(), -1480000)
	if !hasNote(got.GetNotes(), "check: 2025: destruction entries of HFC-23 (OLD-HFC23") {
		t.Errorf("notes %q: want the old HFC-23 destruction entry flagged", got.GetNotes())
	}
}
