package service_test

import (
	"context"
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// Integration tests of ConsumptionService: the real server on loopback, a real gRPC
// client, a real PostgreSQL database. National entries go in through the API; shipments
// are written with the store's recorder (the path the shipment service uses after its
// checks), so each worked example controls exactly what is recorded.
//
// All quantities, companies and Parties below are INVENTED (worked examples with invented
// data, user-assigned country codes XA and XB). Substance values are real, with sources:
//   ODPs: Montreal Protocol Annex A and Annex C (ODP columns): CFC-11 1.0,
//     CFC-12 1.0, CFC-113 0.8, HCFC-22 0.055, HCFC-123 0.02, HCFC-141b 0.11, HCFC-142b 0.065.
//   GWPs: Kigali Amendment, Annexes A/I, C/I and F (GWP columns): CFC-11 4750,
//     CFC-12 10900, CFC-113 6130, HCFC-22 1810, HCFC-141b 725, HCFC-142b 2310, HFC-134a 1430,
//     HFC-32 675, HFC-125 3500, HFC-143a 4470, HFC-152a 124, HFC-23 14800.
//   R-408A: HFC-125/HFC-143a/HCFC-22 at 7/46/47 % by mass (ASHRAE 34; testdata/reference/blends.csv).
// Baselines: Arts. 2F para 1, 2J and 5 paras 8 ter and 8 qua; allowed levels: Arts. 2F, 2J and
// 5 para 8 ter, and the Ozone Secretariat's Annex F control summary, cited per step below.

// consTol is the tolerance of the worked examples: far below the 0.001 ODP t and 1 CO2-eq t
// the figures are checked to, far above float rounding.
const consTol = 1e-6

// consNear checks a wire figure (a decimal string) against a value: it must be a decimal,
// within consTol of want.
func consNear(t *testing.T, what string, got string, want float64) {
	t.Helper()
	d, err := exact.Parse(got)
	if err != nil {
		t.Errorf("%s = %q, not a decimal: %v", what, got, err)
		return
	}
	if g := d.Float64(); math.Abs(g-want) > consTol*math.Max(1, math.Abs(want)) {
		t.Errorf("%s = %s, want %.9f", what, got, want)
	}
}

// consExact checks a wire figure against its exact decimal.
func consExact(t *testing.T, what string, got, want string) {
	t.Helper()
	if got == want {
		return // the same decimal, or both absent
	}
	d, err := exact.Parse(got)
	if err != nil || want == "" || !d.Equal(exact.MustParse(want)) {
		t.Errorf("%s = %q, want exactly %s", what, got, want)
	}
}

// consShip is one invented shipment of a substance or blend.
type consShip struct {
	key, company, dir, purpose, cond string
	nonParty                         bool
	year                             int
	name                             string
	tonnes                           float64
}

// consRecord writes shipments with figures computed from the seed catalogue the way the
// recorder stores them: one component row per blend component, ODP t per component,
// CO2-eq t for Annex F components.
func consRecord(t *testing.T, st *store.Store, ships ...consShip) {
	t.Helper()
	consRecordFrom(t, st, "XC", ships...)
}

// consRecordFrom is consRecord with the partner country given; it returns the stored
// shipment id of each record key.
func consRecordFrom(t *testing.T, st *store.Store, partner string, ships ...consShip) map[string]int64 {
	t.Helper()
	subs, blends, err := substances.Seed()
	if err != nil {
		t.Fatal(err)
	}
	cat, err := substances.NewCatalogue(subs, blends)
	if err != nil {
		t.Fatal(err)
	}
	var rows []store.ShipmentRow
	for _, s := range ships {
		type part struct {
			sub *substances.Substance
			pct float64
		}
		var parts []part
		kind := "substance"
		if x, ok := cat.Substance(s.name); ok {
			parts = []part{{x, 100}}
		} else if b, ok := cat.Blend(s.name); ok {
			kind = "blend"
			for _, c := range b.Components {
				x, _ := cat.Substance(c.Designation)
				parts = append(parts, part{x, c.MassPct})
			}
		} else {
			t.Fatalf("test data: %s is not in the catalogue", s.name)
		}
		dir, err1 := terms.ParseDirection(s.dir)
		purpose, err2 := terms.ParsePurpose(s.purpose)
		cond, err3 := terms.ParseCondition(s.cond)
		if err := errors.Join(err1, err2, err3); err != nil {
			t.Fatalf("test data: %v", err)
		}
		row := store.ShipmentRow{CompanyID: s.company, RecordKey: s.key, Fingerprint: "fp-" + s.key, Direction: dir,
			PartnerCountry: partner, DeclarationDate: time.Date(s.year, 6, 1, 0, 0, 0, 0, time.UTC), ResolvedDesignation: s.name,
			EntryKind: kind, Purpose: purpose, Condition: cond, PartnerNonParty: s.nonParty, RecordJSON: []byte(`{}`)}
		for _, p := range parts {
			tn := s.tonnes * p.pct / 100
			co2 := 0.0
			if p.sub.Group == substances.GroupFI || p.sub.Group == substances.GroupFII {
				co2 = tn * p.sub.ProtocolGWP()
			}
			row.Components = append(row.Components, store.ShipmentComponent{Designation: p.sub.Designation,
				AnnexGroup: string(p.sub.Group), MassKg: store.ToNano(tn * 1000), ODPTonnes: store.ToNano(tn * p.sub.ODP),
				CO2eTonnes: store.ToNano(co2)})
			row.NetMassKg += store.ToNano(tn * 1000)
			row.ODPTonnes += store.ToNano(tn * p.sub.ODP)
			row.CO2eTonnes += store.ToNano(co2)
		}
		// As the checker decides it (validate purposeRules): imports of new substance for
		// ordinary uses count; used material, feedstock, transit and non-Party exports do not.
		row.CountsInConsumption = s.dir != "transit" && s.cond != "used" && s.cond != "recycled" && s.cond != "reclaimed" &&
			s.purpose != "feedstock" && s.purpose != "destruction" && s.purpose != "process-agent" && !(s.dir != "import" && s.nonParty)
		rows = append(rows, row)
	}
	res, err := st.RecordShipments(context.Background(), rows)
	if err != nil {
		t.Fatal(err)
	}
	ids := map[string]int64{}
	for i, r := range res {
		if r.Status != store.RecordStored {
			t.Fatalf("shipment %s: %+v, want stored", ships[i].key, r)
		}
		ids[ships[i].key] = r.ShipmentID
	}
	return ids
}

// consEntry builds a national entry; the key is derived from the content.
func consEntry(year int, typ halovetv1.EntryType, substance string, tonnes float64) *halovetv1.NationalEntry {
	key := strings.Join([]string{strings.TrimPrefix(typ.String(), "ENTRY_TYPE_"), substance, time.Date(year, 1, 1, 0, 0, 0, 0, time.UTC).Format("2006")}, "/")
	return &halovetv1.NationalEntry{EntryKey: key, Year: int32(year), EntryType: typ, Substance: substance, MetricTonnes: exact.OfFloat(tonnes).String(), Note: "invented worked example"}
}

const (
	hImp = halovetv1.EntryType_ENTRY_TYPE_HISTORICAL_IMPORT
	hExp = halovetv1.EntryType_ENTRY_TYPE_HISTORICAL_EXPORT
	hNP  = halovetv1.EntryType_ENTRY_TYPE_HISTORICAL_EXPORT_NON_PARTY
	prod = halovetv1.EntryType_ENTRY_TYPE_PRODUCTION
	dest = halovetv1.EntryType_ENTRY_TYPE_DESTRUCTION
)

func consPutParty(t *testing.T, conn *grpc.ClientConn, p *halovetv1.Party) {
	t.Helper()
	if _, err := halovetv1.NewLicensingServiceClient(conn).PutParty(context.Background(), &halovetv1.PutPartyRequest{Party: p}); err != nil {
		t.Fatal(err)
	}
}

func consRecordEntries(t *testing.T, c halovetv1.ConsumptionServiceClient, es ...*halovetv1.NationalEntry) {
	t.Helper()
	resp, err := c.RecordNationalEntries(context.Background(), &halovetv1.RecordNationalEntriesRequest{Entries: es})
	if err != nil {
		t.Fatal(err)
	}
	if int(resp.GetStored()) != len(es) {
		t.Fatalf("stored %d entries, want %d", resp.GetStored(), len(es))
	}
}

func consGroup(resp *halovetv1.GetConsumptionResponse, g string) *halovetv1.GroupConsumption {
	for _, x := range resp.GetGroups() {
		if x.GetAnnexGroup() == g {
			return x
		}
	}
	return nil
}

func consSubstance(g *halovetv1.GroupConsumption, des string) *halovetv1.SubstanceConsumption {
	for _, x := range g.GetSubstances() {
		if x.GetSubstance() == des {
			return x
		}
	}
	return nil
}

func consYear(resp *halovetv1.AssessComplianceResponse, y int32) *halovetv1.ComplianceYear {
	for _, x := range resp.GetYears() {
		if x.GetYear() == y {
			return x
		}
	}
	return nil
}

func consCode(t *testing.T, err error, want codes.Code, contains string) {
	t.Helper()
	st, _ := status.FromError(err)
	if err == nil || st.Code() != want || !strings.Contains(st.Message(), contains) {
		t.Fatalf("error %v; want %v mentioning %q", err, want, contains)
	}
}

// TestConsumptionArticle5 is the worked example of an Article 5 Party (HFC Group 1):
// HCFC consumption, baseline, allowed level and headroom; the HFC baseline with its HCFC
// part recomputed in CO2-eq; a blend counted in two groups; feedstock imports excluded; a
// base year without data; the 2030-2039 running average; quota planning with drafts.
func TestConsumptionArticle5(t *testing.T) {
	conn, st := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	consPutParty(t, conn, &halovetv1.Party{CountryCode: "XA", Name: "Xandria (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, ReportingParty: true})

	// Historical totals (invented) for the HCFC base years 2009-2010 and HFC 2020-2021.
	consRecordEntries(t, c,
		consEntry(2009, hImp, "HCFC-22", 100), consEntry(2009, hImp, "HCFC-141b", 20), consEntry(2009, hExp, "HCFC-22", 10),
		consEntry(2010, hImp, "R-22", 120), // a synonym: stored as HCFC-22
		consEntry(2010, hImp, "HCFC-141b", 10), consEntry(2010, prod, "HCFC-142b", 5),
		consEntry(2020, hImp, "HFC-134a", 100), consEntry(2020, hImp, "HFC-32", 50),
		consEntry(2021, hImp, "HFC-134a", 120), consEntry(2021, hImp, "HFC-125", 20),
	)

	// HCFC baseline, A5: mean of 2009 and 2010 (Art. 5 para 8 ter (a)).
	//   2009: (100 − 10) t × 0.055 + 20 t × 0.11            = 4.95 + 2.2          = 7.15 ODP t
	//   2010: 120 t × 0.055 + 10 t × 0.11 + 5 t × 0.065     = 6.6 + 1.1 + 0.325   = 8.025 ODP t
	//   baseline = (7.15 + 8.025) / 2                                              = 7.5875 ODP t
	b, err := c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "C/I"})
	if err != nil {
		t.Fatal(err)
	}
	if !b.GetComplete() || b.GetUnit() != halovetv1.ControlUnit_CONTROL_UNIT_ODP_TONNES || b.GetAppliesTo() != halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5 {
		t.Fatalf("HCFC baseline %+v: want complete, in ODP t, for A5", b)
	}
	consNear(t, "HCFC baseline", b.GetBaselineAmount(), 7.5875)
	consNear(t, "HCFC 2009", b.GetYears()[0].GetAmount(), 7.15)
	consNear(t, "HCFC 2010", b.GetYears()[1].GetAmount(), 8.025)

	// HFC baseline, A5 Group 1: 2022 has no data yet, so it cannot be computed and says so,
	// naming the year and the substances the other base years hold.
	bf, err := c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "F"})
	if err != nil {
		t.Fatal(err)
	}
	if bf.GetComplete() || len(bf.GetMissing()) != 1 {
		t.Fatalf("HFC baseline without 2022: complete %v missing %q; want incomplete with one gap", bf.GetComplete(), bf.GetMissing())
	}
	for _, w := range []string{"2022", "HFC-125", "HFC-134a", "HFC-32"} {
		if !strings.Contains(bf.GetMissing()[0], w) {
			t.Errorf("missing %q does not name %s", bf.GetMissing()[0], w)
		}
	}
	consRecordEntries(t, c, consEntry(2022, hImp, "HFC-134a", 110), consEntry(2022, hImp, "HFC-23", 1))

	// HFC baseline, A5 Group 1 (Art. 5 para 8 qua (c)):
	//   2020: 100 × 1430 + 50 × 675      = 143000 + 33750  = 176750 CO2-eq t
	//   2021: 120 × 1430 + 20 × 3500     = 171600 + 70000  = 241600
	//   2022: 110 × 1430 + 1 × 14800     = 157300 + 14800  = 172100 (HFC-23 is F/II, counted with F)
	//   mean = 590450 / 3                                   = 196816.666667
	//   HCFC baseline recomputed in CO2-eq from the base-year tonnages:
	//   2009: 90 × 1810 + 20 × 725              = 162900 + 14500          = 177400
	//   2010: 120 × 1810 + 10 × 725 + 5 × 2310  = 217200 + 7250 + 11550   = 236000
	//   HCFC baseline = (177400 + 236000) / 2 = 206700; 65 % of it = 134355
	//   HFC baseline = 196816.666667 + 134355 = 331171.666667 CO2-eq t
	bf, err = c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "F"})
	if err != nil {
		t.Fatal(err)
	}
	if !bf.GetComplete() || bf.GetUnit() != halovetv1.ControlUnit_CONTROL_UNIT_CO2E_TONNES {
		t.Fatalf("HFC baseline: complete %v unit %q missing %q; want complete in CO2-eq t", bf.GetComplete(), bf.GetUnit(), bf.GetMissing())
	}
	consNear(t, "HFC mean 2020-2022", bf.GetMeanAmount(), 590450.0/3)
	consNear(t, "HCFC baseline in CO2-eq", bf.GetHcfcBaseline().GetBaselineAmount(), 206700)
	consNear(t, "HCFC share", bf.GetHcfcShareRatio(), 0.65)
	consNear(t, "HCFC component", bf.GetHcfcComponentAmount(), 134355)
	consNear(t, "HFC baseline", bf.GetBaselineAmount(), 590450.0/3+134355)

	// Recorded shipments of 2025 (invented):
	consRecord(t, st,
		consShip{"a1", "XA-1001", "import", "servicing", "virgin", false, 2025, "HCFC-22", 30},
		consShip{"a2", "XA-1002", "import", "servicing", "virgin", false, 2025, "R-408A", 10},   // both groups
		consShip{"a3", "XA-1003", "import", "feedstock", "virgin", false, 2025, "HCFC-141b", 5}, // excluded
		consShip{"a4", "XA-1001", "export", "servicing", "virgin", false, 2025, "HCFC-22", 2},   // deducted
		consShip{"a5", "XA-1001", "export", "servicing", "virgin", true, 2025, "HCFC-22", 1},    // non-Party: not deducted
		consShip{"a6", "XA-1004", "import", "servicing", "used", false, 2025, "HCFC-22", 4},     // used: not counted
		consShip{"a7", "XA-1001", "transit", "servicing", "virgin", false, 2025, "HCFC-22", 7},  // transit: not counted
		consShip{"a8", "XA-1001", "import", "servicing", "virgin", false, 2025, "HFC-134a", 50},
	)
	consRecordEntries(t, c, consEntry(2025, dest, "HCFC-22", 1))

	// Consumption 2025:
	//   HCFC-22: imports 30 + 4.7 (47 % of 10 t R-408A) = 34.7 t; exports 2 t; destroyed 1 t;
	//            34.7 − 2 − 1 = 31.7 t × 0.055 = 1.7435 ODP t
	//   HCFC-141b: 5 t imported for feedstock, 5 t deducted: 0
	//   C/I = 1.7435 ODP t
	//   F/I: HFC-125 0.7 t × 3500 + HFC-143a 4.6 t × 4470 + HFC-134a 50 t × 1430
	//        = 2450 + 20562 + 71500 = 94512 CO2-eq t
	cons, err := c.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2025})
	if err != nil {
		t.Fatal(err)
	}
	if cons.GetCountryCode() != "XA" {
		t.Errorf("country %q, want XA", cons.GetCountryCode())
	}
	ci, fi := consGroup(cons, "C/I"), consGroup(cons, "F/I")
	if ci == nil || fi == nil {
		t.Fatalf("groups %v: want C/I and F/I (the R-408A blend counts in both)", cons.GetGroups())
	}
	if len(cons.GetGroups()) != 2 {
		t.Errorf("%d groups; want only C/I and F/I (no other group had activity)", len(cons.GetGroups()))
	}
	consNear(t, "C/I 2025 ODP t", ci.GetConsumptionOdpTonnes(), 1.7435)
	consNear(t, "C/I 2025 t", ci.GetConsumptionTonnes(), 31.7)
	consNear(t, "F/I 2025 CO2-eq t", fi.GetConsumptionCo2ETonnes(), 94512)
	h22 := consSubstance(ci, "HCFC-22")
	consNear(t, "HCFC-22 imports", h22.GetImportTonnes(), 34.7)
	consNear(t, "HCFC-22 exports deducted", h22.GetExportTonnes(), 2)
	consNear(t, "HCFC-22 exports to non-Parties", h22.GetExportNonPartyTonnes(), 1)
	consNear(t, "HCFC-22 destroyed", h22.GetDestructionTonnes(), 1)
	consNear(t, "HCFC-22 not counted (used 4 t + transit 7 t)", h22.GetNotCountedTonnes(), 11)
	h141 := consSubstance(ci, "HCFC-141b")
	if h141 == nil {
		t.Fatal("HCFC-141b missing from the breakdown; the feedstock import must be shown")
	}
	consNear(t, "HCFC-141b feedstock", h141.GetFeedstockTonnes(), 5)
	consNear(t, "HCFC-141b consumption", h141.GetConsumptionOdpTonnes(), 0)
	if consSubstance(fi, "HFC-143a") == nil || consSubstance(fi, "HFC-125") == nil {
		t.Error("R-408A's HFC components missing from F/I")
	}
	only, err := c.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2025, AnnexGroup: "F"})
	if err != nil || len(only.GetGroups()) != 1 || only.GetGroups()[0].GetAnnexGroup() != "F/I" {
		t.Fatalf("filter F: %v %v; want F/I only", only.GetGroups(), err)
	}

	// Compliance 2025, HCFCs: A5 step 2025 32.5 % (Art. 5 para 8 ter).
	//   allowed = 7.5875 × 0.325 = 2.4659375 ODP t; headroom = 2.4659375 − 1.7435 = 0.7224375
	// HFCs: A5 Group 1 step 2024 100 % (Art. 5 para 8 qua; Annex F control summary).
	//   allowed = 331171.666667; headroom = 331171.666667 − 94512 = 236659.666667
	ac, err := c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: "C/I", FromYear: 2024, ToYear: 2025})
	if err != nil {
		t.Fatal(err)
	}
	consNear(t, "compliance baseline", ac.GetBaselineAmount(), 7.5875)
	y := consYear(ac, 2025)
	consNear(t, "allowed 2025", y.GetAllowedAmount(), 2.4659375)
	consNear(t, "allowed % 2025", y.GetAllowedPercent(), 32.5)
	consNear(t, "consumption 2025", y.GetConsumptionAmount(), 1.7435)
	consNear(t, "headroom 2025", y.GetHeadroomAmount(), 0.7224375)
	if y.GetOutcome() != halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN || !y.GetWithin() {
		t.Errorf("2025 outcome %v, want WITHIN", y.GetOutcome())
	}
	// 2024: no shipments and no entries, so no data: not assessed, not "within".
	if y := consYear(ac, 2024); y.GetOutcome() != halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED || y.GetWithin() || y.GetHasData() {
		t.Errorf("2024 %v within %v has_data %v; want NOT_ASSESSED without data", y.GetOutcome(), y.GetWithin(), y.GetHasData())
	}
	if !strings.Contains(ac.GetScheduleSource(), "Art. 5 para 8 ter") {
		t.Errorf("schedule source %q does not cite Art. 5 para 8 ter", ac.GetScheduleSource())
	}
	af, err := c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: "F", FromYear: 2025, ToYear: 2025})
	if err != nil {
		t.Fatal(err)
	}
	yf := consYear(af, 2025)
	consNear(t, "HFC allowed 2025", yf.GetAllowedAmount(), 590450.0/3+134355)
	consNear(t, "HFC headroom 2025", yf.GetHeadroomAmount(), 590450.0/3+134355-94512)

	// The A5 HCFC tail: 2030-2039 ten-year mean ≤ 2.5 % of baseline (Art. 5 para 8 ter (e):
	// the sum of the ten years divided by ten); a single year may exceed it.
	//   budget = 0.025 × 7.5875 × 10 = 1.896875 ODP t (0.18969 a year on average)
	//   2030: 5 t × 0.055 = 0.275 (above 0.18969 alone: allowed); room left 1.621875
	//   2031: 3 t × 0.055 = 0.165; sum 0.44; running mean 0.22 (2.8995 % of baseline);
	//         room left 1.896875 − 0.44 = 1.456875 for 8 years
	consRecord(t, st,
		consShip{"t30", "XA-1001", "import", "servicing", "virgin", false, 2030, "HCFC-22", 5},
		consShip{"t31", "XA-1001", "import", "servicing", "virgin", false, 2031, "HCFC-22", 3},
	)
	tail, err := c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: "C/I", FromYear: 2030, ToYear: 2031})
	if err != nil {
		t.Fatal(err)
	}
	y30, y31 := consYear(tail, 2030), consYear(tail, 2031)
	if y30.GetOutcome() != halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN || y31.GetPeriod() == nil {
		t.Fatalf("2030 %v period %v: want WITHIN with the period average reported", y30.GetOutcome(), y31.GetPeriod())
	}
	consNear(t, "room left 2030", y30.GetPeriod().GetRoomLeftAmount(), 1.621875)
	p := y31.GetPeriod()
	consNear(t, "running average 2031", p.GetRunningAverageAmount(), 0.22)
	consNear(t, "room left 2031", p.GetRoomLeftAmount(), 1.456875)
	consNear(t, "budget", p.GetBudgetAmount(), 1.896875)
	if p.GetYearsRemaining() != 8 || p.GetFromYear() != 2030 || p.GetToYear() != 2039 {
		t.Errorf("period %+v: want 2030-2039 with 8 years remaining", p)
	}

	// Quota plan for 2026 (A5 step 2025: 32.5 %): allowed 2.4659375 ODP t; 90 % distributed:
	// 2.21934375, in 0.001 units: 2219 whole units. Reference: 2025 imports that count:
	//   XA-1001: 30 t HCFC-22 = 1.65 ODP t; XA-1002: 4.7 t HCFC-22 in R-408A = 0.2585 ODP t
	//   (XA-1003's feedstock and XA-1004's used imports do not count); total 1.9085.
	//   exact units: XA-1001 2219.34375 × 1.65/1.9085 = 1918.741; XA-1002 × 0.2585/1.9085 = 300.603
	//   floors 1918 + 300 = 2218; the one unit left goes to the larger remainder (0.741):
	//   XA-1001 1.919, XA-1002 0.300 ODP t; total 2.219 ≤ 2.21934375.
	lic := halovetv1.NewLicensingServiceClient(conn)
	for _, id := range []string{"XA-1001", "XA-1002"} {
		if _, err := lic.RegisterCompany(ctx, &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: id, Name: "invented"}}); err != nil {
			t.Fatal(err)
		}
	}
	plan, err := c.PlanQuotas(ctx, &halovetv1.PlanQuotasRequest{Year: 2026, AnnexGroup: "C/I", ReferenceYears: []int32{2025},
		FractionRatio: "0.9", IssueDrafts: true})
	if err != nil {
		t.Fatal(err)
	}
	consNear(t, "plan allowed", plan.GetAllowedAmount(), 2.4659375)
	consNear(t, "plan distributed", plan.GetDistributedAmount(), 2.219)
	if len(plan.GetProposals()) != 2 {
		t.Fatalf("proposals %v; want XA-1001 and XA-1002", plan.GetProposals())
	}
	wantQ := map[string]float64{"XA-1001": 1.919, "XA-1002": 0.3}
	for _, q := range plan.GetProposals() {
		consNear(t, q.GetCompanyId()+" quota", q.GetQuotaAmount(), wantQ[q.GetCompanyId()])
		l, err := lic.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: q.GetDraftLicenceNumber()})
		if err != nil {
			t.Fatalf("draft %q of %s: %v", q.GetDraftLicenceNumber(), q.GetCompanyId(), err)
		}
		lq := l.GetLicence().GetQuotaLines()
		if l.GetLicence().GetStatus() != halovetv1.LicenceStatus_LICENCE_STATUS_DRAFT || len(lq) != 1 ||
			lq[0].GetAnnexGroup() != "C/I" || lq[0].GetUnit() != halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES {
			t.Errorf("draft %+v: want a DRAFT with one C/I line in ODP t", l.GetLicence())
		}
		consNear(t, "draft allocation", lq[0].GetAllocatedAmount(), wantQ[q.GetCompanyId()])
	}
	if n := plan.GetProposals()[0].GetDraftLicenceNumber(); n != "CI-DRAFT-2026-XA-1001" {
		t.Errorf("draft number %q, want CI-DRAFT-2026-XA-1001", n)
	}
	// Planning again amends the drafts instead of failing on their numbers.
	if _, err := c.PlanQuotas(ctx, &halovetv1.PlanQuotasRequest{Year: 2026, AnnexGroup: "C/I", ReferenceYears: []int32{2025},
		IssueDrafts: true}); err != nil {
		t.Fatalf("re-planning with drafts: %v", err)
	}
	l, _ := lic.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: "CI-DRAFT-2026-XA-1002"})
	// Fraction 1: 2465.9375 units; XA-1002 exact 2465.9375 × 0.2585/1.9085 = 334.0; XA-1001 2131.93
	// floors 2131 + 334 = 2465 = all whole units: XA-1002 keeps 0.334.
	consNear(t, "re-planned draft", l.GetLicence().GetQuotaLines()[0].GetAllocatedAmount(), 0.334)
}

// TestConsumptionNonArticle5 is the worked example of a non-Article 5 Party: the HCFC
// baseline with its 2.8 % CFC term, the 2020-2029 servicing cap, the HFC baseline with
// 15 % of the HCFC baseline recomputed in CO2-eq, and negative consumption.
func TestConsumptionNonArticle5(t *testing.T) {
	conn, st := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	consPutParty(t, conn, &halovetv1.Party{CountryCode: "XB", Name: "Borealia (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, ReportingParty: true})
	consRecordEntries(t, c,
		consEntry(1989, hImp, "HCFC-22", 1000), consEntry(1989, prod, "HCFC-22", 500), consEntry(1989, hExp, "HCFC-22", 300),
		consEntry(1989, hImp, "HCFC-141b", 100),
		consEntry(1989, hImp, "CFC-11", 2000), consEntry(1989, prod, "CFC-12", 3000), consEntry(1989, hNP, "CFC-12", 1000),
		consEntry(1989, hImp, "CFC-113", 500),
		consEntry(2011, hImp, "HFC-134a", 1000),
		consEntry(2012, hImp, "HFC-134a", 900), consEntry(2012, hImp, "HFC-143a", 100),
		consEntry(2013, hImp, "HFC-134a", 800), consEntry(2013, hImp, "HFC-152a", 500),
	)

	// HCFC baseline, non-A5: 1989 HCFC + 2.8 % of 1989 Annex A Group I (Art. 2F para 1),
	// ODP t:
	//   HCFC 1989: HCFC-22 (1000 + 500 − 300) × 0.055 = 66; HCFC-141b 100 × 0.11 = 11; = 77
	//   CFC 1989: CFC-11 2000 × 1.0 = 2000; CFC-12 (3000 − 1000) × 1.0 = 2000 (exports to
	//     non-Parties are deducted before 1993, Art. 3 para 1(c)); CFC-113 500 × 0.8 = 400;
	//     = 4400; 2.8 % = 123.2
	//   baseline = 77 + 123.2 = 200.2 ODP t
	b, err := c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "C/I"})
	if err != nil {
		t.Fatal(err)
	}
	if !b.GetComplete() || b.GetAppliesTo() != halovetv1.ControlSchedule_CONTROL_SCHEDULE_NON_ARTICLE_5 {
		t.Fatalf("baseline %+v: want complete, non-A5", b)
	}
	consNear(t, "HCFC mean", b.GetMeanAmount(), 77)
	consNear(t, "CFC term", b.GetCfcTermAmount(), 123.2)
	consNear(t, "HCFC baseline", b.GetBaselineAmount(), 200.2)

	// HFC baseline, non-A5: mean 2011-2013 + 15 % of the HCFC baseline in CO2-eq (Art. 2J
	// para 1):
	//   2011: 1000 × 1430 = 1430000; 2012: 900 × 1430 + 100 × 4470 = 1287000 + 447000 = 1734000;
	//   2013: 800 × 1430 + 500 × 124 = 1144000 + 62000 = 1206000; mean = 4370000/3 = 1456666.667
	//   HCFC part in CO2-eq: HCFC 1989: 1200 × 1810 + 100 × 725 = 2172000 + 72500 = 2244500;
	//     CFC 1989: 2000 × 4750 + 2000 × 10900 + 500 × 6130 = 9500000 + 21800000 + 3065000
	//     = 34365000; 2.8 % = 962220; HCFC baseline = 3206720; 15 % = 481008
	//   baseline = 1456666.667 + 481008 = 1937674.667 CO2-eq t
	bf, err := c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "F"})
	if err != nil {
		t.Fatal(err)
	}
	consNear(t, "HCFC baseline in CO2-eq", bf.GetHcfcBaseline().GetBaselineAmount(), 3206720)
	consNear(t, "its CFC term in CO2-eq", bf.GetHcfcBaseline().GetCfcTermAmount(), 962220)
	consNear(t, "HFC baseline", bf.GetBaselineAmount(), 4370000.0/3+481008)

	consRecord(t, st,
		consShip{"b1", "XB-1", "import", "servicing", "virgin", false, 2025, "HCFC-22", 15},
		consShip{"b2", "XB-1", "import", "servicing", "virgin", false, 2025, "HCFC-123", 3},
		consShip{"b3", "XB-1", "import", "servicing", "virgin", false, 2025, "HFC-134a", 500},
		consShip{"b4", "XB-1", "import", "servicing", "virgin", false, 2025, "HFC-32", 100},
		consShip{"b5", "XB-1", "export", "servicing", "virgin", false, 2025, "HFC-134a", 50},
		consShip{"b6", "XB-1", "import", "servicing", "virgin", false, 2026, "HCFC-22", 20},
		// Exports above production plus imports (re-export of stock): consumption negative.
		consShip{"b7", "XB-1", "import", "servicing", "virgin", false, 2027, "HCFC-22", 1},
		consShip{"b8", "XB-1", "re-export", "servicing", "virgin", false, 2027, "HCFC-22", 5},
	)

	// HCFC 2025: 15 × 0.055 + 3 × 0.02 = 0.825 + 0.06 = 0.885 ODP t. Allowed: the annual
	// servicing cap of 0.5 % for 2020-2029 (Art. 2F para 6):
	//   200.2 × 0.005 = 1.001; headroom 0.116.
	// 2026: 20 × 0.055 = 1.1 > 1.001: exceeded, headroom −0.099.
	// 2027: (1 − 5) × 0.055 = −0.22: negative, reported as such; headroom 1.221.
	ac, err := c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: "C/I", FromYear: 2024, ToYear: 2027})
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		year                  int32
		consumption, headroom float64
		outcome               halovetv1.ComplianceOutcome
	}{
		{2025, 0.885, 0.116, halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN},
		{2026, 1.1, -0.099, halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED},
		{2027, -0.22, 1.221, halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN},
	}
	for _, cs := range cases {
		y := consYear(ac, cs.year)
		consNear(t, "allowed", y.GetAllowedAmount(), 1.001)
		consNear(t, "allowed %", y.GetAllowedPercent(), 0.5)
		consNear(t, "consumption", y.GetConsumptionAmount(), cs.consumption)
		consNear(t, "headroom", y.GetHeadroomAmount(), cs.headroom)
		if y.GetOutcome() != cs.outcome {
			t.Errorf("%d: outcome %v, want %v", cs.year, y.GetOutcome(), cs.outcome)
		}
	}
	if y := consYear(ac, 2024); y.GetOutcome() != halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED {
		t.Errorf("2024 (no data): %v, want NOT_ASSESSED", y.GetOutcome())
	}
	neg, err := c.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2027})
	if err != nil {
		t.Fatal(err)
	}
	consNear(t, "2027 C/I t (negative)", consGroup(neg, "C/I").GetConsumptionTonnes(), -4)
	consNear(t, "2027 C/I ODP t (negative)", consGroup(neg, "C/I").GetConsumptionOdpTonnes(), -0.22)

	// HFC 2025: 500 × 1430 + 100 × 675 − 50 × 1430 = 715000 + 67500 − 71500 = 711000 CO2-eq t.
	// Allowed: non-A5 step 2024 60 % (Art. 2J para 1):
	//   1937674.667 × 0.6 = 1162604.8; headroom 451604.8.
	af, err := c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: "F", FromYear: 2025, ToYear: 2025})
	if err != nil {
		t.Fatal(err)
	}
	y := af.GetYears()[0]
	consNear(t, "HFC consumption 2025", y.GetConsumptionAmount(), 711000)
	consNear(t, "HFC allowed 2025", y.GetAllowedAmount(), 1162604.8)
	consNear(t, "HFC headroom 2025", y.GetHeadroomAmount(), 451604.8)
}
