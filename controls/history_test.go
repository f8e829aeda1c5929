package controls

import "github.com/halovet/halovet/terms"

// Worked example histories, invented data. The quantities are metric tonnes; the hand
// computations beside them use the ODPs and GWPs of fixtures_test.go (MP Annexes A-F, Kigali GWP columns).

// nonA5History is a non-Article 5 Party's data.
//
// 1989 (HCFC and HFC base year):
//
//	HCFC-22   imports 1000 − exports 100 = 900 t → 900 × 0.055 = 49.5 ODP t;  900 × 1810 = 1 629 000 CO2-eq t
//	HCFC-141b imports 200               = 200 t → 200 × 0.11  = 22   ODP t;  200 × 725  =   145 000 CO2-eq t
//	          C/I 1989: 71.5 ODP t; 1 774 000 CO2-eq t
//	CFC-11    imports 3000              = 3000 t → 3000 ODP t; 3000 × 4750  = 14 250 000 CO2-eq t
//	CFC-12    production 2000 − exports 500 = 1500 t → 1500 ODP t; 1500 × 10900 = 16 350 000 CO2-eq t
//	          A/I 1989: 4500 ODP t; 30 600 000 CO2-eq t
//
// HCFC baseline (Art. 2F para 1): 71.5 + 2.8 % × 4500 = 71.5 + 126 = 197.5 ODP t.
// HCFC baseline in CO2-eq: 1 774 000 + 2.8 % × 30 600 000 = 1 774 000 + 856 800 = 2 630 800.
//
// HFCs (Art. 2J para 1):
//
//	2011  HFC-134a 1000 × 1430 = 1 430 000; HFC-125 200 × 3500 = 700 000  → 2 130 000
//	2012  HFC-134a 1100 × 1430 = 1 573 000; HFC-32 300 × 675 = 202 500    → 1 775 500
//	2013  HFC-134a 1200 × 1430 = 1 716 000; HFC-23 10 × 14800 = 148 000   → 1 864 000
//	mean 2011–2013 = 5 769 500 / 3 = 1 923 166.667
//	non-A5:  + 15 % × 2 630 800 = 394 620  → baseline 2 317 786.667 CO2-eq t
//	variant: + 25 % × 2 630 800 = 657 700  → baseline 2 580 866.667 CO2-eq t
//
// Control years:
//
//	2015  HCFC-22 imports 300 − destroyed 20 = 280 t → 15.4 ODP t;
//	      HCFC-141b imports 30 − feedstock 10 = 20 t → 2.2 ODP t;  C/I 17.6 ODP t
//	2024  HFC-134a imports 800 − exports 100 = 700 t → 1 001 000; HFC-32 200 t → 135 000;
//	      F 1 136 000 CO2-eq t
//	2025  HCFC-22 imports 20 t (exports 5 t to a non-Party, not deducted) → 1.1 ODP t;
//	      HFC-134a imports 1000 t → 1 430 000 CO2-eq t
//	2030  HCFC-22 no flows (a zero record: reported zero, not missing) → 0 ODP t
func nonA5History() []Record {
	return []Record{
		rec(1989, hcfc22, Flows{Imports: num("1000"), Exports: num("100")}),
		rec(1989, hcfc141b, Flows{Imports: num("200")}),
		rec(1989, cfc11, Flows{Imports: num("3000")}),
		rec(1989, cfc12, Flows{Production: num("2000"), Exports: num("500")}),
		rec(2011, hfc134a, Flows{Imports: num("1000")}),
		rec(2011, hfc125, Flows{Imports: num("200")}),
		rec(2012, hfc134a, Flows{Imports: num("1100")}),
		rec(2012, hfc32, Flows{Imports: num("300")}),
		rec(2013, hfc134a, Flows{Imports: num("1200")}),
		rec(2013, hfc23, Flows{Imports: num("10")}),
		rec(2015, hcfc22, Flows{Imports: num("300"), Destruction: num("20")}),
		rec(2015, hcfc141b, Flows{Imports: num("30"), Feedstock: num("10")}),
		rec(2024, hfc134a, Flows{Imports: num("800"), Exports: num("100")}),
		rec(2024, hfc32, Flows{Imports: num("200")}),
		rec(2025, hcfc22, Flows{Imports: num("20"), ExportsNonParty: num("5")}),
		rec(2025, hfc134a, Flows{Imports: num("1000")}),
		rec(2030, hcfc22, Flows{}),
	}
}

// a5History is an Article 5 (HFC Group 1) Party's data.
//
// HCFC base years (Art. 5 para 8 ter (a)); used imports count in base years (Decision IV/24
// para 2 exception):
//
//	2009  HCFC-22 imports 2000 t → 110 ODP t, 3 620 000 CO2-eq t
//	      HCFC-141b imports 500 t → 55 ODP t, 362 500 CO2-eq t
//	      C/I 2009: 165 ODP t; 3 982 500 CO2-eq t
//	2010  HCFC-22 imports 2200 − exports 200 + used imports 100 = 2100 t → 115.5 ODP t, 3 801 000 CO2-eq t
//	      HCFC-141b imports 400 t → 44 ODP t, 290 000 CO2-eq t
//	      HCFC-142b imports 40 t → 2.6 ODP t, 92 400 CO2-eq t
//	      C/I 2010: 162.1 ODP t; 4 183 400 CO2-eq t
//
// HCFC baseline: (165 + 162.1) / 2 = 163.55 ODP t (without the used imports it would be
// (165 + 156.6) / 2 = 160.8). In CO2-eq: (3 982 500 + 4 183 400) / 2 = 4 082 950.
//
// HFC baseline (Group 1: mean 2020–2022 + 65 % of the HCFC baseline in CO2-eq):
//
//	2020  HFC-134a 3000 × 1430 = 4 290 000; HFC-32 1000 × 675 = 675 000    → 4 965 000
//	2021  HFC-134a 3200 × 1430 = 4 576 000; HFC-32 1200 × 675 = 810 000    → 5 386 000
//	2022  HFC-134a 3400 × 1430 = 4 862 000; HFC-125 500 × 3500 = 1 750 000 → 6 612 000
//	mean = 16 963 000 / 3 = 5 654 333.333; + 65 % × 4 082 950 = 2 653 917.5
//	baseline 8 308 250.833 CO2-eq t
//
// Control years:
//
//	2025  HCFC-22 imports 900 t (+ 50 t used imports, not counted outside base years) → 49.5 ODP t
//	2029  HFC-134a 3500 × 1430 = 5 005 000; HFC-32 1500 × 675 = 1 012 500 → 6 017 500 CO2-eq t
//	2030  HCFC-22 imports 100 t → 5.5 ODP t
//	2031  HCFC-22 imports 60 t → 3.3 ODP t
//	(2032 and later: no data)
func a5History() []Record {
	return []Record{
		rec(2009, hcfc22, Flows{Imports: num("2000")}),
		rec(2009, hcfc141b, Flows{Imports: num("500")}),
		rec(2010, hcfc22, Flows{Imports: num("2200"), Exports: num("200"), UsedImports: num("100")}),
		rec(2010, hcfc141b, Flows{Imports: num("400")}),
		rec(2010, hcfc142b, Flows{Imports: num("40")}),
		rec(2020, hfc134a, Flows{Imports: num("3000")}),
		rec(2020, hfc32, Flows{Imports: num("1000")}),
		rec(2021, hfc134a, Flows{Imports: num("3200")}),
		rec(2021, hfc32, Flows{Imports: num("1200")}),
		rec(2022, hfc134a, Flows{Imports: num("3400")}),
		rec(2022, hfc125, Flows{Imports: num("500")}),
		rec(2025, hcfc22, Flows{Imports: num("900"), UsedImports: num("50")}),
		rec(2029, hfc134a, Flows{Imports: num("3500")}),
		rec(2029, hfc32, Flows{Imports: num("1500")}),
		rec(2030, hcfc22, Flows{Imports: num("100")}),
		rec(2031, hcfc22, Flows{Imports: num("60")}),
	}
}

var (
	partyNonA5        = Party{Type: terms.PartyTypeNonArticle5, HFC: terms.HFCGroupNonA5}
	partyNonA5Variant = Party{Type: terms.PartyTypeNonArticle5, HFC: terms.HFCGroupNonA5Variant}
	partyA5G1         = Party{Type: terms.PartyTypeArticle5, HFC: terms.HFCGroupA5Group1}
	partyA5G2         = Party{Type: terms.PartyTypeArticle5, HFC: terms.HFCGroupA5Group2}
)

// without returns records minus those of the given year and group scope.
func without(records []Record, year int, scope Scope) []Record {
	var out []Record
	for _, r := range records {
		if r.Year == year && ScopeOf(r.Substance.Group) == scope {
			continue
		}
		out = append(out, r)
	}
	return out
}
