package validate

import (
	"sync"
	"testing"
	"time"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// The real seed catalogue, built once per test binary.
var (
	catOnce sync.Once
	catVal  *substances.Catalogue
	catErr  error
)

func testCatalogue(t testing.TB) *substances.Catalogue {
	t.Helper()
	catOnce.Do(func() {
		subs, blends, err := substances.Seed()
		if err != nil {
			catErr = err
			return
		}
		catVal, catErr = substances.NewCatalogue(subs, blends)
	})
	if catErr != nil {
		t.Fatalf("seed catalogue: %v", catErr)
	}
	return catVal
}

func d(s string) time.Time {
	t, err := ParseDate(s)
	if err != nil {
		panic(err)
	}
	return t
}

// everyGroup binds a country to every Annex group from one date.
func everyGroup(from time.Time) map[substances.Group]time.Time {
	m := map[substances.Group]time.Time{}
	for _, g := range substances.AllGroups {
		m[g] = from
	}
	return m
}

// testParties: INVENTED party settings for user-assigned codes; no real country is meant.
//   - XA: the reporting Party (non-Article 5), bound for every group.
//   - XB: a Party bound for every group.
//   - XC: a Party bound for Annexes A-E but not for Annex F (not bound by the Kigali Amendment).
//   - XD: not a Party: known, bound for nothing.
func testParties() map[string]PartySettings {
	noF := everyGroup(d("1989-01-01"))
	delete(noF, substances.GroupFI)
	delete(noF, substances.GroupFII)
	return map[string]PartySettings{
		"XA": {Type: terms.PartyTypeNonArticle5, HFCGroup: terms.HFCGroupNonA5, BoundFrom: everyGroup(d("1989-01-01")), Known: true},
		"XB": {Type: terms.PartyTypeArticle5, HFCGroup: terms.HFCGroupA5Group1, BoundFrom: everyGroup(d("1989-01-01")), Known: true},
		"XC": {Type: terms.PartyTypeArticle5, BoundFrom: noF, Known: true},
		"XD": {Type: terms.PartyTypeNonParty, Known: true},
	}
}

// testLicences: INVENTED licences of INVENTED companies CO-1 and CO-2.
func testLicences() map[string]*Licence {
	year := func(y string) (time.Time, time.Time) { return d(y + "-01-01"), d(y + "-12-31") }
	from, to := year("2025")
	f24, t24 := year("2024")
	imp := []terms.Direction{terms.DirectionImport}
	return map[string]*Licence{
		"XA-IMP-2025-001": {Number: "XA-IMP-2025-001", CompanyID: "CO-1", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceActive,
			QuotaLines: []QuotaLine{
				{LineNumber: 1, Group: substances.GroupFI, Unit: terms.QuotaCO2eTonnes, Allocated: 10000},
				{LineNumber: 2, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 1, Drawn: 0.5},
				{LineNumber: 3, Substance: "HCFC-141b", Unit: terms.QuotaMetricTonnes, Allocated: 2},
			}},
		"XA-EXP-2025-002": {Number: "XA-EXP-2025-002", CompanyID: "CO-1", Directions: []terms.Direction{terms.DirectionExport}, ValidFrom: from, ValidTo: to, Status: terms.LicenceActive,
			QuotaLines: []QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 5}, {LineNumber: 2, Group: substances.GroupFI, Unit: terms.QuotaCO2eTonnes, Allocated: 1e6}, {LineNumber: 3, Group: substances.GroupAI, Unit: terms.QuotaODPTonnes, Allocated: 100}}},
		"XA-IMP-2025-003": {Number: "XA-IMP-2025-003", CompanyID: "CO-1", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceSuspended,
			QuotaLines: []QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 5}}},
		"XA-IMP-2025-004": {Number: "XA-IMP-2025-004", CompanyID: "CO-2", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceActive,
			QuotaLines: []QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 5}}},
		"XA-FEED-2025-005": {Number: "XA-FEED-2025-005", CompanyID: "CO-1", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceActive,
			SpecialPurposes: []terms.Purpose{terms.PurposeFeedstock, terms.PurposeDestruction},
			QuotaLines: []QuotaLine{
				{LineNumber: 1, Group: substances.GroupBII, Unit: terms.QuotaMetricTonnes, Allocated: 100},
				{LineNumber: 2, Group: substances.GroupAI, Unit: terms.QuotaMetricTonnes, Allocated: 100},
				{LineNumber: 3, Group: substances.GroupEI, Unit: terms.QuotaMetricTonnes, Allocated: 100},
				{LineNumber: 4, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 5},
			}},
		"XA-IMP-2025-006": {Number: "XA-IMP-2025-006", CompanyID: "CO-1", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceActive,
			QuotaLines: []QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaUnitUnspecified, Allocated: 5}}},
		"XA-IMP-2024-007": {Number: "XA-IMP-2024-007", CompanyID: "CO-1", Directions: imp, ValidFrom: f24, ValidTo: t24, Status: terms.LicenceActive,
			QuotaLines: []QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 5}}},
		// Suspended from 2025-04-15 (and still), then a line closed and replaced.
		"XA-IMP-2025-010": {Number: "XA-IMP-2025-010", CompanyID: "CO-1", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceSuspended,
			StatusHistory: []StatusPeriod{{From: from, Status: terms.LicenceActive}, {From: d("2025-04-15"), Status: terms.LicenceSuspended}},
			QuotaLines: []QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 5, Drawn: 5, Closed: true},
				{LineNumber: 2, Group: substances.GroupCI, Unit: terms.QuotaMetricTonnes, Allocated: 50}}},
		"XA-IMP-2025-008": {Number: "XA-IMP-2025-008", CompanyID: "CO-1", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceActive,
			QuotaLines: []QuotaLine{{LineNumber: 1, Group: substances.GroupFI, Unit: terms.QuotaCO2eTonnes, Allocated: 1e6}}},
		// authorises the exempted uses that need one (essential, critical, laboratory, process agent)
		"XA-EXM-2025-010": {Number: "XA-EXM-2025-010", CompanyID: "CO-1", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceActive,
			SpecialPurposes: []terms.Purpose{terms.PurposeEssentialUse, terms.PurposeCriticalUse, terms.PurposeLaboratory, terms.PurposeProcessAgent},
			QuotaLines: []QuotaLine{
				{LineNumber: 1, Group: substances.GroupAI, Unit: terms.QuotaODPTonnes, Allocated: 1},
				{LineNumber: 2, Group: substances.GroupEI, Unit: terms.QuotaMetricTonnes, Allocated: 10},
				{LineNumber: 3, Group: substances.GroupBII, Unit: terms.QuotaMetricTonnes, Allocated: 10},
			}},
		"XA-IMP-OPEN-009": {Number: "XA-IMP-OPEN-009", CompanyID: "CO-1", Directions: []terms.Direction{terms.DirectionImport, terms.DirectionTransit}, ValidFrom: d("1989-01-01"), Status: terms.LicenceActive,
			QuotaLines: []QuotaLine{{LineNumber: 1, Group: substances.GroupAI, Unit: terms.QuotaODPTonnes, Allocated: 1e6}, {LineNumber: 2, Group: substances.GroupFI, Unit: terms.QuotaCO2eTonnes, Allocated: 1e9}, {LineNumber: 3, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 1e6}}},
	}
}

// testAllowed is an INVENTED stand-in for the reporting Party's schedule (package controls owns
// the real ones). Its percentages follow the non-Article 5 steps of Arts. 2A-2J
// for the years the tests use: CFCs, halons, Annex B, HBFCs, bromochloromethane and methyl
// bromide at 0 from 2005; HCFCs 0.5 (servicing tail) in 2020-2029 and 0 from 2030; HFCs 60 in
// 2024-2028. Years before 1990 have no schedule.
func testAllowed(g substances.Group, year int) (float64, bool) {
	if year < 1990 {
		return 0, false
	}
	switch g {
	case substances.GroupCI:
		switch {
		case year >= 2030:
			return 0, true
		case year >= 2020:
			return 0.5, true
		}
		return 10, true
	case substances.GroupFI, substances.GroupFII:
		return 60, true
	}
	if year >= 2005 {
		return 0, true
	}
	return 100, true
}

// testToday is the fixed clock of the tests.
var testToday = time.Date(2025, 6, 15, 10, 30, 0, 0, time.UTC)

func testEnv(t testing.TB) *Env {
	t.Helper()
	lics := testLicences()
	env := NewEnv(testCatalogue(t), "XA", testParties(),
		func(n string) (*Licence, bool) { l, ok := lics[n]; return l, ok },
		testAllowed)
	env.Now = func() time.Time { return testToday }
	if err := env.Validate(); err != nil {
		t.Fatalf("test env: %v", err)
	}
	return env
}

// baseRecord is a clean import: 136 kg net of HCFC-22 in 10 cylinders for servicing, on an INVENTED
// licence. Identifiers: CAS 75-45-6 and formula CHClF2 (source: testdata/reference/halocarbons.csv),
// HS 2903.71 (source: WCO HS 2022 nomenclature).
func baseRecord() Record {
	return Record{
		Key: "K-1", Line: 2, Direction: terms.DirectionImport, CompanyID: "CO-1", LicenceNumber: "XA-IMP-2025-001",
		PartnerCountry: "XB", DeclarationDate: "2025-06-01", Substance: "HCFC-22", HSCode: "2903.71",
		CAS: "75-45-6", Formula: "CHClF2", TotalQuantity: "136", Unit: "kg", PackageCount: 10,
		Purpose: terms.PurposeServicing, Condition: terms.ConditionVirgin,
	}
}

func codesOf(v Verdict) map[string]Finding {
	m := map[string]Finding{}
	for _, f := range v.Findings {
		if _, ok := m[f.Code]; !ok {
			m[f.Code] = f
		}
	}
	return m
}
