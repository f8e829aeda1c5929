package validate

import (
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// TestTradeBanStart checks the Article 4 table against Art. 4 of the Montreal Protocol and the
// amendments' entry-into-force dates (UN Treaty Collection). Marks: V read in the text, D derived
// (entry into force + 1 year), U unverified; see controls/data/README.md.
func TestTradeBanStart(t *testing.T) {
	cases := []struct {
		g        substances.Group
		dir      terms.Direction
		want     string
		provided bool
	}{
		{substances.GroupAI, terms.DirectionImport, "1990-01-01", true},    // [V] Art. 4 para 1
		{substances.GroupAI, terms.DirectionExport, "1993-01-01", true},    // [V] Art. 4 para 2
		{substances.GroupAII, terms.DirectionReExport, "1993-01-01", true}, // re-export is an export
		{substances.GroupBII, terms.DirectionImport, "1993-08-10", true},   // [D] London EIF 1992-08-10 + 1 year
		{substances.GroupCII, terms.DirectionExport, "1995-06-14", true},   // [D] Copenhagen EIF 1994-06-14 + 1 year
		{substances.GroupEI, terms.DirectionImport, "2000-11-10", true},    // [D] Montreal EIF 1999-11-10 + 1 year
		{substances.GroupCI, terms.DirectionImport, "2004-01-01", true},    // [V] paras 1 quin / 2 quin
		{substances.GroupCIII, terms.DirectionExport, "2003-02-25", true},  // [D] Beijing EIF 2002-02-25 + 1 year
		{substances.GroupFI, terms.DirectionImport, "2033-01-01", true},    // [V] para 1 sept in force 2033-01-01
		{substances.GroupFII, terms.DirectionExport, "2033-01-01", true},   // [U] para 2 sept assumed parallel
		{substances.GroupCI, terms.DirectionTransit, "", false},
		{substances.GroupNone, terms.DirectionImport, "", false},
	}
	for _, c := range cases {
		got, ok := TradeBanStart(c.g, c.dir)
		if ok != c.provided || (ok && isoDate(got) != c.want) {
			t.Errorf("TradeBanStart(%s, %s) = %s, %v; want %s, %v", c.g, c.dir, isoDate(got), ok, c.want, c.provided)
		}
	}
}

// TestNonPartyBanDates checks that the ban starts on its day, per direction (CFCs: imports
// from 1990-01-01, exports from 1993-01-01; Art. 4 paras 1 and 2).
func TestNonPartyBanDates(t *testing.T) {
	env := testEnv(t)
	cases := []struct {
		dir         terms.Direction
		date        string
		wantBan     bool
		wantNotBond bool
	}{
		{terms.DirectionImport, "1989-12-31", false, true},
		{terms.DirectionImport, "1990-01-01", true, false},
		{terms.DirectionExport, "1992-12-31", false, true},
		{terms.DirectionExport, "1993-01-01", true, false},
	}
	for _, c := range cases {
		r := baseRecord()
		cfc12(&r)
		r.PartnerCountry, r.Direction, r.DeclarationDate, r.LicenceNumber = "XD", c.dir, c.date, "XA-IMP-OPEN-009"
		v := Check(env, &r, nil)
		codes := codesOf(v)
		_, ban := codes[CodePartnerNonParty]
		_, nb := codes[CodePartnerNotBound]
		if ban != c.wantBan || nb != c.wantNotBond {
			t.Errorf("%s on %s: non-Party ban %v, not-bound notice %v; want %v, %v (%v)", c.dir, c.date, ban, nb, c.wantBan, c.wantNotBond, v.Findings)
		}
		if !v.Figures.PartnerNonParty {
			t.Errorf("%s on %s: PartnerNonParty should be set", c.dir, c.date)
		}
	}
}

func TestCountsInConsumption(t *testing.T) {
	env := testEnv(t)
	cases := []struct {
		name string
		edit func(*Record)
		want bool
	}{
		{"ordinary import", nil, true},
		{"ordinary export", func(r *Record) { r.Direction, r.LicenceNumber = terms.DirectionExport, "XA-EXP-2025-002" }, true},
		{"transit", func(r *Record) { r.Direction = terms.DirectionTransit }, false},
		{"used", func(r *Record) { r.Condition = terms.ConditionUsed }, false},
		{"reclaimed", func(r *Record) { r.Condition = terms.ConditionReclaimed }, false},
		{"feedstock", func(r *Record) { r.Purpose, r.LicenceNumber = terms.PurposeFeedstock, "XA-FEED-2025-005" }, false},
		{"destruction", func(r *Record) { r.Purpose, r.LicenceNumber = terms.PurposeDestruction, "XA-FEED-2025-005" }, false},
		{"process agent", func(r *Record) { r.Purpose = terms.PurposeProcessAgent }, false},
		{"laboratory", func(r *Record) { r.Purpose = terms.PurposeLaboratory }, true},
		{"QPS methyl bromide", func(r *Record) { methylBromide(r); r.Purpose, r.LicenceNumber = terms.PurposeQPS, "XA-FEED-2025-005" }, false},
		// An export to a Party is deducted whatever its purpose (Art. 3 para 1(c); Decision
		// VII/30 for feedstock exports): the flag agrees with the consumption totals.
		{"export for feedstock", func(r *Record) {
			r.Direction, r.LicenceNumber, r.Purpose = terms.DirectionExport, "XA-EXP-2025-002", terms.PurposeFeedstock
		}, true},
		{"export for destruction", func(r *Record) {
			r.Direction, r.LicenceNumber, r.Purpose = terms.DirectionExport, "XA-EXP-2025-002", terms.PurposeDestruction
		}, true},
		{"used material exported for destruction", func(r *Record) {
			r.Direction, r.LicenceNumber, r.Purpose, r.Condition = terms.DirectionExport, "XA-EXP-2025-002", terms.PurposeDestruction, terms.ConditionUsed
		}, false},
		// Art. 3 para 1(c): exports to non-Parties are not deducted from 1993.
		{"HFC export to a Party not bound by Kigali", func(r *Record) {
			hfc134a(r)
			r.Direction, r.LicenceNumber, r.PartnerCountry = terms.DirectionExport, "XA-EXP-2025-002", "XC"
		}, false},
		{"HFC import from a Party not bound by Kigali", func(r *Record) { hfc134a(r); r.PartnerCountry = "XC" }, true},
		{"uncontrolled", func(r *Record) {
			r.Substance, r.HSCode, r.CAS, r.Formula, r.LicenceNumber = "HFO-1234yf", "", "", "", ""
		}, false},
	}
	for _, c := range cases {
		r := baseRecord()
		if c.edit != nil {
			c.edit(&r)
		}
		v := Check(env, &r, nil)
		if !v.Resolved {
			t.Fatalf("%s: not resolved: %v", c.name, v.Findings)
		}
		if v.Figures.CountsInConsumption != c.want {
			t.Errorf("%s: CountsInConsumption = %v, want %v (%v)", c.name, v.Figures.CountsInConsumption, c.want, v.Findings)
		}
	}
}

func TestDrawAndPlanDraws(t *testing.T) {
	cat := testCatalogue(t)
	// R-402A = HFC-125 60 %, R-290 2 %, HCFC-22 38 % (source: reference/blend_components.csv).
	ev, err := cat.Evaluate("R-402A", 1000)
	if err != nil {
		t.Fatal(err)
	}
	fig := Figures{Components: ev.Components}
	lines := []QuotaLine{
		{LineNumber: 1, Group: substances.GroupFI, Unit: terms.QuotaCO2eTonnes},
		{LineNumber: 2, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes},
		{LineNumber: 3, Group: substances.GroupCI, Unit: terms.QuotaMetricTonnes},
		{LineNumber: 4, Group: substances.GroupCI, Unit: terms.QuotaCO2eTonnes},
		{LineNumber: 5, Substance: "HCFC-22", Unit: terms.QuotaMetricTonnes},
		{LineNumber: 6, Group: substances.GroupAI, Unit: terms.QuotaODPTonnes},
	}
	want := []float64{
		0.6 * 3500,   // HFC-125 only: 0.6 t × 3500 (source: Montreal Protocol Annex F GWP of HFC-125)
		0.38 * 0.055, // HCFC-22 only: 0.38 t × ODP 0.055 (source: Montreal Protocol Annex C Group I)
		0.38,         // metric tonnes of the C/I component
		0.38 * 1810,  // Kigali-listed GWP of HCFC-22 1810 (source: Annex C Group I GWP column)
		0.38,         // substance line
		0,            // nothing of Annex A/I in R-402A
	}
	for i, l := range lines {
		if got := Draw(l, fig); math.Abs(got-want[i]) > 1e-9 {
			t.Errorf("Draw(line %d %s %s) = %v, want %v", l.LineNumber, lineScope(l), l.Unit, got, want[i])
		}
	}
	lic := &Licence{Number: "L", QuotaLines: []QuotaLine{lines[1], lines[0], lines[4]}}
	draws, uncovered := PlanDraws(lic, fig, terms.PurposeUnspecified)
	if len(uncovered) != 0 || len(draws) != 2 {
		t.Fatalf("PlanDraws = %+v, uncovered %+v; want HFC-125 on line 1 and HCFC-22 on the substance line 5", draws, uncovered)
	}
	if draws[0].LineNumber != 1 || math.Abs(draws[0].Amount-2100) > 1e-9 || draws[1].LineNumber != 5 || math.Abs(draws[1].Amount-0.38) > 1e-12 {
		t.Errorf("PlanDraws = %+v; a substance line must win over the group line", draws)
	}
	lic = &Licence{Number: "L", QuotaLines: []QuotaLine{lines[0]}}
	if _, uncovered := PlanDraws(lic, fig, terms.PurposeUnspecified); len(uncovered) != 1 || uncovered[0].Designation != "HCFC-22" {
		t.Errorf("uncovered = %+v; want HCFC-22 (R-290 is not controlled and needs no line)", uncovered)
	}
}

func TestBatchLedgerAndDuplicates(t *testing.T) {
	env := testEnv(t)
	b := NewBatch(env)
	// Line 2 of XA-IMP-2025-001 has 0.5 ODP t left; 5 t HCFC-22 = 0.275 ODP t (ODP 0.055, Montreal Protocol Annex C Group I).
	first := baseRecord()
	first.Key, first.TotalQuantity, first.Unit, first.PackageCount = "B-1", "5", "t", 0
	v1 := b.Check(&first)
	if v1.Outcome == OutcomeRejected || len(v1.Draws) != 1 {
		t.Fatalf("first record: %v %v", v1.Outcome, v1.Findings)
	}
	if got := b.Ledger().Drawn("XA-IMP-2025-001", 2); math.Abs(got-0.275) > 1e-12 {
		t.Errorf("ledger after the first record = %v, want 0.275", got)
	}

	replay := first
	replay.Line = 40
	v2 := b.Check(&replay)
	if !v2.Replayed || v2.Outcome == OutcomeRejected || v2.Draws != nil {
		t.Errorf("replay: replayed %v, outcome %v, draws %v; want an accepted replay drawing nothing", v2.Replayed, v2.Outcome, v2.Draws)
	}
	if f, ok := codesOf(v2)[CodeDupReplay]; !ok || f.Severity != SeverityNotice {
		t.Errorf("replay should carry DUP_REPLAY: %v", v2.Findings)
	}
	if got := b.Ledger().Drawn("XA-IMP-2025-001", 2); math.Abs(got-0.275) > 1e-12 {
		t.Errorf("a replay must not draw again: ledger %v", got)
	}

	conflict := first
	conflict.TotalQuantity = "6"
	v3 := b.Check(&conflict)
	if _, ok := codesOf(v3)[CodeDupKeyConflict]; !ok || v3.Outcome != OutcomeRejected {
		t.Errorf("same key, other content: want DUP_KEY_CONFLICT and rejection; got %v %v", v3.Outcome, v3.Findings)
	}

	otherCompany := first
	otherCompany.CompanyID, otherCompany.LicenceNumber = "CO-2", "XA-IMP-2025-004"
	if _, dup := codesOf(b.Check(&otherCompany))[CodeDupKeyConflict]; dup {
		t.Error("keys are unique per company: the same key of another company is no duplicate")
	}

	second := first
	second.Key = "B-2"
	v4 := b.Check(&second)
	_, dupReplay := codesOf(v4)[CodeDupReplay]
	_, dupConflict := codesOf(v4)[CodeDupKeyConflict]
	if dupReplay || dupConflict {
		t.Errorf("a new key is no duplicate: %v", v4.Findings)
	}
	// 0.275 + 0.275 = 0.55 > 0.5 left: the second shipment exceeds what the first left.
	if _, ok := codesOf(v4)[CodeQuotaExceeded]; !ok {
		t.Errorf("second 5 t shipment should exceed the quota the first one left: %v", v4.Findings)
	}
	if got := b.Ledger().Drawn("XA-IMP-2025-001", 2); math.Abs(got-0.275) > 1e-12 {
		t.Errorf("a rejected record must not draw: ledger %v", got)
	}
}

func TestDuplicateFinding(t *testing.T) {
	if f := DuplicateFinding("abc", "abc", 7); f.Code != CodeDupReplay || f.Severity != SeverityNotice {
		t.Errorf("same fingerprint: %+v", f)
	}
	f := DuplicateFinding("abc", "abd", 0)
	if f.Code != CodeDupKeyConflict || f.Severity != SeverityError {
		t.Errorf("different fingerprint: %+v", f)
	}
}

func TestVerdictAdd(t *testing.T) {
	env := testEnv(t)
	r := baseRecord()
	v := Check(env, &r, nil)
	if v.Outcome != OutcomeAccepted || v.Draws == nil {
		t.Fatalf("base: %v", v.Findings)
	}
	v.Add(newFinding(CodeQuotaExceeded, "", "the store found the line short at commit"))
	if v.Outcome != OutcomeRejected || v.Draws != nil || v.Findings[0].Code != CodeQuotaExceeded {
		t.Errorf("after adding an error: outcome %v, draws %v, findings %v", v.Outcome, v.Draws, v.Findings)
	}
}

func TestEnvValidate(t *testing.T) {
	good := testEnv(t)
	cases := map[string]func(*Env){
		"no catalogue":    func(e *Env) { e.Catalogue = nil },
		"reporting party": func(e *Env) { e.ReportingParty = "X" },
		"no licences":     func(e *Env) { e.Licence = nil },
		"no schedule":     func(e *Env) { e.AllowedPercent = nil },
		"negative days":   func(e *Env) { e.FutureToleranceDays = -1 },
		"lower-case key":  func(e *Env) { e.Parties = map[string]PartySettings{"xb": {Known: true}} },
	}
	for name, edit := range cases {
		e := NewEnv(good.Catalogue, good.ReportingParty, good.Parties, good.Licence, good.AllowedPercent)
		edit(e)
		if err := e.Validate(); !errors.Is(err, ErrEnv) {
			t.Errorf("%s: Validate() = %v, want ErrEnv", name, err)
		}
	}
	var nilEnv *Env
	if err := nilEnv.Validate(); !errors.Is(err, ErrEnv) {
		t.Errorf("nil env: %v", err)
	}
}

func TestCheckOfflineWithoutClock(t *testing.T) {
	env := testEnv(t)
	env.Now = nil // falls back to the system clock
	r := baseRecord()
	r.DeclarationDate = "2999-01-01"
	if _, ok := codesOf(Check(env, &r, nil))[CodeDateFuture]; !ok {
		t.Error("a date in 2999 must be in the future for the system clock")
	}
}

// TestExemptUseAndTailAcceptance: CFC-12 declared for critical use is rejected (critical uses
// exist only for methyl bromide: Montreal Protocol Art. 2H para 5; Decision IX/6), and HCFC-22
// imported for manufacturing in 2026 by a non-Article 5 Party is rejected (the 2020-2029 tail of
// Art. 2F para 6 is for servicing), while the same import for servicing is accepted.
func TestExemptUseAndTailAcceptance(t *testing.T) {
	env := testEnv(t)
	env.Now = func() time.Time { return time.Date(2026, 6, 15, 0, 0, 0, 0, time.UTC) }
	r := baseRecord()
	cfc12(&r)
	r.LicenceNumber, r.Purpose, r.DeclarationDate = "XA-IMP-OPEN-009", terms.PurposeCriticalUse, "2026-03-02"
	if v := Check(env, &r, nil); v.Outcome != OutcomeRejected || codesOf(v)[CodeExemptUseWrongGroup].Code == "" {
		t.Errorf("CFC-12 for critical use: %v %v; want rejected with %s", v.Outcome, v.Findings, CodeExemptUseWrongGroup)
	}
	for _, c := range []struct {
		purpose terms.Purpose
		reject  bool
	}{{terms.PurposeManufacturing, true}, {terms.PurposeServicing, false}} {
		r := baseRecord()
		r.LicenceNumber, r.Purpose, r.DeclarationDate = "XA-IMP-OPEN-009", c.purpose, "2026-03-02"
		v := Check(env, &r, nil)
		_, tail := codesOf(v)[CodeHCFCTailUse]
		if (v.Outcome == OutcomeRejected) != c.reject || tail != c.reject {
			t.Errorf("HCFC-22 for %s in 2026 at a non-Article 5 Party: %v %v; want rejected %v", c.purpose, v.Outcome, v.Findings, c.reject)
		}
	}
}

// TestBlendPartyStatusPerGroup: Party status is per Annex group (Montreal Protocol Art. 4 para
// 9). R-402A (HFC-125/R-290/HCFC-22 60/2/38 %, ASHRAE 34) exported to XC, an INVENTED Party
// bound for every group but Annex F, keeps counting (its HCFC part is deducted) and names
// Annex F/I alone as not bound; exported to XD, a non-Party, the Annex C/I ban (Article 4
// para 2 quin, from 2004) rejects it while Annex F/I, whose ban starts in 2033 (Article 4 para
// 2 sept), only draws a notice.
func TestBlendPartyStatusPerGroup(t *testing.T) {
	env := testEnv(t)
	r := baseRecord()
	r.Substance, r.HSCode, r.CAS, r.Formula = "R-402A", "", "", ""
	r.Direction, r.LicenceNumber, r.PartnerCountry = terms.DirectionExport, "XA-EXP-2025-002", "XC"
	v := Check(env, &r, nil)
	if v.Outcome == OutcomeRejected || !v.Figures.CountsInConsumption || !v.Figures.PartnerNonParty ||
		len(v.Figures.PartnerNotBoundGroups) != 1 || v.Figures.PartnerNotBoundGroups[0] != substances.GroupFI ||
		!v.Figures.PartnerBoundFor(substances.GroupCI) || v.Figures.PartnerBoundFor(substances.GroupFI) {
		t.Errorf("R-402A to XC: %v, figures %+v; want accepted, counted, only F/I not bound", v.Findings, v.Figures)
	}
	if f, ok := codesOf(v)[CodePartnerNotBound]; !ok || !strings.Contains(f.Message, "Annex F/I (HFCs) part of an export to it is not deducted") {
		t.Errorf("R-402A to XC: findings %v; want PARTNER_NOT_BOUND naming the Annex F/I part", v.Findings)
	}
	r.PartnerCountry = "XD"
	v = Check(env, &r, nil)
	codes := codesOf(v)
	if v.Outcome != OutcomeRejected || !strings.Contains(codes[CodePartnerNonParty].Message, "Annex C/I") ||
		!strings.Contains(codes[CodePartnerNotBound].Message, "Annex F/I") || v.Figures.CountsInConsumption {
		t.Errorf("R-402A to XD: %v; want rejected for Annex C/I, a notice for Annex F/I, not counted", v.Findings)
	}
}
