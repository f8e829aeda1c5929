package controls_test

import (
	"fmt"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// A non-Article 5 Party's HCFC figures (worked example, invented data; ODPs from
// MP Annexes A and C): baseline 1989 HCFC-22 900 t × 0.055 = 49.5 ODP t + 2.8 % of 1989
// CFC-11 1000 ODP t = 28 → 77.5 ODP t; 2025 servicing cap 0.5 % = 0.3875 ODP t against
// 2025 HCFC-22 5 t × 0.055 = 0.275 ODP t.
func ExampleRulebook_Assess() {
	rb, err := controls.DefaultRulebook()
	if err != nil {
		panic(err)
	}
	hcfc22 := controls.Substance{Designation: "HCFC-22", Group: substances.GroupCI, ODP: exact.MustParse("0.055"), GWP: exact.MustParse("1810")}
	cfc11 := controls.Substance{Designation: "CFC-11", Group: substances.GroupAI, ODP: exact.MustParse("1"), GWP: exact.MustParse("4750")}
	records := []controls.Record{
		{Year: 1989, Substance: hcfc22, Flows: controls.Flows{Imports: exact.MustParse("900")}},
		{Year: 1989, Substance: cfc11, Flows: controls.Flows{Imports: exact.MustParse("1000")}},
		{Year: 2025, Substance: hcfc22, Flows: controls.Flows{Imports: exact.MustParse("5")}},
	}
	party := controls.Party{Type: terms.PartyTypeNonArticle5, HFC: terms.HFCGroupNonA5}
	a, err := rb.Assess(records, party, controls.ScopeCI, 2025, 2025)
	if err != nil {
		panic(err)
	}
	y := a.Years[0]
	fmt.Printf("baseline %s %s (%s)\n", a.Baseline.Value, a.Unit, a.Baseline.RuleText())
	fmt.Printf("%d: consumption %s, allowed %s (%s %%), headroom %s: %s\n",
		y.Year, y.Consumption, y.Allowed, y.AllowedPercent, y.Headroom, y.Outcome)
	// Output:
	// baseline 77.5 ODP t (Art. 2F para 1 [V])
	// 2025: consumption 0.275, allowed 0.3875 (0.5 %), headroom 0.1125: within
}

// Largest-remainder quotas (invented companies): 90 % of 10 ODP t = 9000 units of 0.001.
// References 2023+2024: exact.MustParse("9"), 3, 2 (sum 14). Exact shares 5785.714, 1928.571, 1285.714 units;
// whole units 5785 + 1928 + 1285 = 8998; the 2 units left go to the largest remainders
// (0.714 for importers 1 and 3, ahead of 0.571): 5786, 1928, 1286. Rounding each share
// to the nearest unit instead would give 5786 + 1929 + 1286 = 9001, above the total.
func ExamplePlanQuotas() {
	plan, err := controls.PlanQuotas(controls.QuotaRequest{
		Total: exact.MustParse("10"), Fraction: exact.MustParse("0.9"), Granularity: exact.MustParse("0.001"), ReferenceYears: []int{2023, 2024},
		Companies: []controls.CompanyReference{
			{CompanyID: "QM-importer-1", Amounts: map[int]exact.Decimal{2023: exact.MustParse("4"), 2024: exact.MustParse("5")}},
			{CompanyID: "QM-importer-2", Amounts: map[int]exact.Decimal{2023: exact.MustParse("3"), 2024: exact.MustParse("0")}},
			{CompanyID: "QM-importer-3", Amounts: map[int]exact.Decimal{2024: exact.MustParse("2")}},
		},
	})
	if err != nil {
		panic(err)
	}
	for _, q := range plan.Quotas {
		fmt.Printf("%s %s\n", q.CompanyID, q.Amount)
	}
	fmt.Printf("distributed %s of %s\n", plan.Distributed, plan.Distributable)
	// Output:
	// QM-importer-1 5.786
	// QM-importer-2 1.928
	// QM-importer-3 1.286
	// distributed 9 of 9
}
