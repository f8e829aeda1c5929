package main

import (
	"fmt"
	"strings"
)

// The special lines of the demo batch: hand-written records that each make a finding code
// fire.

type special struct {
	item
	last bool // goes after every ordinary record (the quota lines)
}

// specialRecords are the hand-written lines, each making one finding code fire (or, for a
// few, showing a code that ordinary records fire anyway in a particular setting).
func specialRecords(ordinary []rec, key func(string) string) []special {
	var out []special
	// base returns a well-formed HCFC-22 import of Frostline with a fresh key.
	base := func() rec {
		return rec{key: key("XA-1001"), dir: "import", company: "XA-1001", licence: "XA-IMP-2026-001", partner: "XB",
			substance: "HCFC-22", qty: "150", unit: "kg", purpose: "servicing"}
	}
	add := func(exercise string, r rec) {
		out = append(out, special{item: item{r: r, special: true, exercise: exercise}})
	}
	// draws marks lines that are accepted and draw quota: the generator counts them.
	draws := func(exercise string, r rec) { add("draws: "+exercise, r) }
	raw := func(exercise, line string) {
		out = append(out, special{item: item{raw: line, special: true, exercise: exercise}})
	}

	// record
	r := base()
	r.key = ""
	add("KEY_MISSING: empty record_key", r)
	r = base()
	r.key = "FRL-26-" + strings.Repeat("LONGKEY", 19) // 7 + 133 bytes
	add("KEY_INVALID: a record_key of 140 bytes", r)
	r = base()
	r.dir = "sideways"
	add("FIELD_UNREADABLE: direction \"sideways\" (answered by the CLI, never sent)", r)
	r = base()
	r.purpose = "fumigation"
	add("FIELD_UNREADABLE: purpose \"fumigation\" (answered by the CLI, never sent)", r)
	r = base()
	r.dir = ""
	add("DIRECTION_MISSING: empty direction", r)
	r = base()
	r.company = ""
	add("COMPANY_MISSING: empty company_id", r)
	r = base()
	r.licence = "XA-IMP-\u202e100-6202" // a right-to-left override makes it read as XA-IMP-2026-001
	add("FIELD_TEXT_INVALID: a right-to-left override (U+202E) inside licence_number", r)
	r = base()
	r.formula = strings.Repeat("CHClF2", 30)
	add("FIELD_TOO_LONG: a declared_formula of 180 bytes", r)
	r = base()
	r.substance, r.qty, r.date = "", "", "2026-06-10"
	r.composition = strings.TrimSuffix(strings.Repeat("mystery gas=0;", 16), ";")
	add("FINDINGS_CAPPED: 16 unknown components at 0 % (more than 32 findings)", r)
	r = base()
	r.substance = ""
	r.composition = strings.TrimSuffix(strings.Repeat("HFC-32=5;", 17), ";")
	add("MIX_TOO_MANY: a composition of 17 components", r)
	r = base()
	r.qty = "0.0000000005"
	add("QTY_TOO_SMALL: 0.0000000005 kg, below the register's step of 0.000000001 kg", r)
	// Raw lines are written as they are; they carry a date of their own.
	r = base()
	r.date = "2026-06-10"
	raw("LINE_UNREADABLE: a stray quote inside an unquoted field", strings.Replace(r.line(), ",HCFC-22,", `,HCFC-"22,`, 1))
	r = base()
	r.date = "2026-06-10"
	raw("LINE_UNREADABLE: 17 fields where the header has 18", strings.TrimSuffix(r.line(), ","))
	r = base()
	r.date = "2026-06-10"
	raw("LINE_UNREADABLE: a quoted field not closed on its line", strings.Replace(r.line(), ",servicing,", `,"servicing,`, 1))

	// identity
	r = base()
	r.substance = ""
	add("SUBST_MISSING: no substance and no composition", r)
	r = base()
	r.substance = "unlabelled refrigerant"
	add("SUBST_UNKNOWN: a name no catalogue entry has", r)
	r = base()
	r.substance = "C2H2F4"
	add("SUBST_AMBIGUOUS: the formula of both HFC-134 and HFC-134a", r)
	r = base()
	r.substance = "CHClF2"
	draws("SUBST_LOOSE_MATCH: HCFC-22 declared by its formula", r)
	r = base()
	r.cas = "75-45"
	add("CAS_FORMAT: a CAS number with two parts", r)
	r = base()
	r.cas = "75-45-7"
	add("CAS_CHECK_DIGIT: HCFC-22's CAS number (75-45-6) with a wrong check digit", r)
	r = base()
	r.cas = "811-97-2"
	add("CAS_MISMATCH: the CAS number of HFC-134a declared for HCFC-22", r)
	r = base()
	r.substance, r.cas, r.qty, r.unit, r.containers = "R-404A", "811-97-2", "10.9", "kg", "8"
	draws("CAS_NOT_APPLICABLE: a CAS number declared for the blend R-404A", r)
	r = base()
	r.substance, r.cas, r.qty = "HCFC-121", "354-14-3", "40" // CAS of 1,1,2,2-tetrachloro-1-fluoroethane (from memory; check digit verified)
	draws("CAS_UNVERIFIED: a valid CAS number for the isomer group HCFC-121, which has no single number", r)
	r = base()
	r.hs = "29O3.71"
	add("HS_FORMAT: a letter O for a zero in the HS code", r)
	r = base()
	r.hs = "2903.41"
	add("HS_MISMATCH: HFC-23's subheading declared for HCFC-22", r)
	r = base()
	r.substance, r.hs, r.qty = "HCFC-21", "2903.79", "60"
	draws("HS_SHARED: HCFC-21 in 2903.79, a subheading shared with other goods", r)
	r = base()
	r.substance, r.hs, r.qty, r.unit, r.containers = "HFC-134a", "2903.39", "13.6", "kg", "20"
	draws("HS_EDITION: the HS 2017 subheading of HFC-134a in 2026 (also HS_SHARED: 2903.39 holds other goods)", r)
	r = base()
	r.substance, r.hs, r.qty, r.unit, r.containers = "R-413A", "3827.59", "11.3", "kg", "12"
	draws("HS_MIXTURE_UNKNOWN: R-413A (a PFC with HFC-134a) answers two HS 2022 groups of heading 38.27, so its subheading is not decided", r)
	r = base()
	r.formula = "C1h"
	draws("FORMULA_FORMAT: a formula that cannot be read (a warning; the record is accepted)", r)
	r = base()
	r.formula = "CH2F2"
	add("FORMULA_MISMATCH: HFC-32's formula declared for HCFC-22", r)
	r = base()
	r.substance, r.formula, r.qty, r.unit, r.containers = "R-410A", "CH2F2", "11.3", "kg", "10"
	draws("FORMULA_NOT_APPLICABLE: a formula declared for the blend R-410A (a warning; the record is accepted)", r)

	// quantity
	r = base()
	r.qty = ""
	add("QTY_MISSING: no total_net_quantity and no net_fill_per_package", r)
	r = base()
	r.qty = "1,500"
	add("QTY_FORMAT: a comma in total_net_quantity", r)
	r = base()
	r.qty = "0"
	add("QTY_NOT_POSITIVE: total_net_quantity 0", r)
	r = base()
	r.qty, r.unit = "2000000", "t"
	add("QTY_TOO_LARGE: 2,000,000 t in one record", r)
	r = base()
	r.unit = "ton"
	add("QTY_UNIT_UNKNOWN: the ambiguous unit \"ton\"", r)
	r = base()
	r.containers = "-4"
	add("QTY_PACKAGES_INVALID: a negative package count", r)
	r = base()
	r.qty, r.containers = "1200", "2"
	draws("QTY_FILL_LARGE: 2400 kg in 2 packages, 1200 kg per package (a notice; the record is accepted)", r)
	r = base()
	r.substance, r.qty, r.unit, r.containers = "R-134a", "50", "g", "10"
	draws("QTY_FILL_SMALL: 500 g in 10 packages, 50 g per package (a notice; the record is accepted)", r)
	r = base()
	r.asIs, r.total, r.containers, r.fill = true, "113", "10", "13.6"
	add("QTY_TOTAL_FILL_DISAGREE: a total of 113 kg, and 10 packages of 13.6 kg (136 kg)", r)
	r = base()
	r.asIs, r.total, r.containers, r.fill = true, "", "", "13.6"
	add("QTY_FILL_WITHOUT_PACKAGES: a fill of 13.6 kg per package and no package count", r)
	r = base()
	r.asIs, r.total, r.containers, r.fill = true, "113", "10", "11.3"
	draws("113 kg total and 10 packages of 11.3 kg agree within the last digit written", r)

	// measurement: what an analyser read in the cylinder (invented readings)
	r = base()
	r.measured = "HCFC-22=60;air=10"
	add("MEASURED_UNREADABLE: a reading summing to 70 %", r)
	r = base()
	r.substance, r.qty, r.unit, r.containers = "R-134a", "13.6", "kg", "10"
	r.measured = "CFC-12=100±1"
	add("MEASURED_CONTRADICTS and MEASURED_HIDDEN_CONTROLLED: a cylinder declared as R-134a that holds CFC-12", r)
	r = base()
	r.measured = "HCFC-22=95±0.5;air=5"
	draws("MEASURED_NON_CONDENSABLES: HCFC-22 with 5 % air (a warning), the rest confirming the declaration", r)
	r = base()
	r.substance, r.qty, r.unit, r.containers = "R-410A", "11.3", "kg", "10"
	r.measured = "HFC-32=50.2±0.5;HFC-125=49.8±0.5"
	draws("MEASURED_CONFIRMS: an R-410A reading within the ASHRAE 34 tolerances of R-410A", r)
	r = base()
	r.substance, r.composition, r.qty = "", "HFC-32=60;HFC-125=40", "100"
	r.measured = "HFC-32=60;HFC-125=40"
	draws("MEASURED_NOT_COMPARED: a reading on a record that declares only a composition", r)

	// party
	r = base()
	r.partner = ""
	add("PARTNER_MISSING: empty partner_country", r)
	r = base()
	r.partner = "X1"
	add("PARTNER_FORMAT: partner \"X1\"", r)
	r = base()
	r.partner = "XZ"
	draws("PARTNER_UNKNOWN: XZ has no party settings (a warning; the record is accepted)", r)
	r = base()
	r.partner = "XA"
	add("PARTNER_SELF: the reporting Party as partner", r)
	r = base()
	r.partner = "QM"
	add("PARTNER_NON_PARTY: HCFC-22 from QM, a non-Party; the Annex C/I ban is in force", r)
	r = rec{key: key("XA-1004"), dir: "export", company: "XA-1004", licence: "XA-TRD-2026-004", partner: "XD",
		substance: "R-134a", qty: "13.6", unit: "kg", containers: "20", purpose: "servicing"}
	draws("PARTNER_NOT_BOUND: R-134a to XD, not bound by the Kigali Amendment; the Annex F ban starts 2033", r)

	// dates
	r = base()
	r.date = ""
	add("DATE_MISSING: empty declaration_date", r)
	r = base()
	r.date = "2026-02-30"
	add("DATE_FORMAT: 30 February", r)
	r = base()
	r.date = "2026-12-20"
	add("DATE_FUTURE: 2026-12-20, after today (2026-12-01) plus 2 days", r)
	r = base()
	r.date = "2025-12-18"
	add("LICENCE_NOT_YET_VALID: declared before the 2026 licence starts", r)
	r = base()
	r.licence = "XA-IMP-2025-006"
	add("LICENCE_EXPIRED: the 2025 licence used in 2026", r)
	r = base()
	r.date = "2012-06-15"
	add("SCHEDULE_UNKNOWN: an Article 5 Party's HCFC schedule starts in 2013 (also LICENCE_NOT_YET_VALID)", r)

	// licence
	r = base()
	r.licence = ""
	add("LICENCE_MISSING: an import of HCFC-22 without a licence", r)
	r = base()
	r.licence = "XA-IMP-2026-099"
	add("LICENCE_UNKNOWN: a licence number never issued", r)
	r = base()
	r.key, r.company = key("XA-1002"), "XA-1002"
	add("LICENCE_COMPANY: Coldharbour declares Frostline's licence", r)
	r = base()
	r.dir = "export"
	add("LICENCE_DIRECTION: an export on an import licence", r)
	r = rec{key: key("XA-1005"), dir: "import", company: "XA-1005", licence: "XA-IMP-2026-005", partner: "XB",
		substance: "R-134a", qty: "13.6", unit: "kg", containers: "20", purpose: "servicing"}
	add("LICENCE_INACTIVE: Glacier's suspended licence", r)
	r = rec{key: key("XA-1002"), dir: "import", company: "XA-1002", licence: "XA-IMP-2026-002", partner: "XB",
		substance: "R-401A", qty: "13.6", unit: "kg", containers: "10", purpose: "servicing"}
	add("LICENCE_SCOPE: R-401A holds HCFC-124, which no line of XA-IMP-2026-002 (HCFC-22, Annex F) covers", r)

	// phase-out and purpose
	r = base()
	r.substance, r.qty = "CFC-12", "50"
	add("PHASED_OUT: virgin CFC-12 for servicing (also LICENCE_SCOPE)", r)
	r = base()
	r.substance, r.qty, r.purpose = "CFC-12", "20", "critical-use"
	add("EXEMPT_USE_WRONG_GROUP: CFC-12 declared for critical use, which exists only for methyl bromide (also LICENCE_SCOPE)", r)
	r = rec{key: key("XA-1003"), dir: "import", company: "XA-1003", licence: "XA-IMP-2026-003", partner: "XB",
		substance: "methyl bromide", qty: "2", unit: "t", purpose: "critical-use"}
	add("EXEMPT_USE_UNAUTHORISED: methyl bromide for critical use on a licence that does not list critical use", r)
	r = base()
	r.purpose = ""
	draws("PURPOSE_MISSING: no purpose declared (a notice; the record is accepted)", r)
	r = base()
	r.purpose = "qps"
	add("QPS_NOT_MB: quarantine and pre-shipment declared for HCFC-22", r)
	r = base()
	r.purpose = "feedstock"
	add("PURPOSE_NOT_LICENSED: feedstock on a licence that does not list it", r)

	// mixture
	r = base()
	r.substance, r.composition, r.qty = "", "HFC-32=60;HFC-125=40", "100"
	draws("MIX_AD_HOC: no substance, a declared composition of HFC-32 and HFC-125", r)
	r = base()
	r.substance, r.composition = "", "HFC-32=50;mystery gas=50"
	add("MIX_COMPONENT_UNKNOWN: a component no catalogue entry has", r)
	r = base()
	r.substance, r.composition = "", "HFC-32=120;HFC-125=40"
	add("MIX_SHARE_INVALID: a component at 120 %", r)
	r = base()
	r.substance, r.composition = "R-410A", "HFC-32=50;HFC-125=45"
	add("MIX_SUM: shares that sum to 95 %", r)
	r = base()
	r.substance, r.composition = "R-410A", "HFC-32=50;HFC-134a=50"
	add("MIX_COMPONENT_MISMATCH: HFC-134a declared in R-410A", r)
	r = base()
	r.substance, r.composition = "R-410A", "HFC-32=53;HFC-125=47"
	add("MIX_OUT_OF_TOLERANCE: R-410A outside its ASHRAE 34 tolerances", r)

	// duplicates: the same key again, with the same and with other content
	replay := ordinary[len(ordinary)/3]
	add(fmt.Sprintf("DUP_REPLAY: line of key %s sent again unchanged", replay.key), replay)
	conflict := ordinary[len(ordinary)/2]
	conflict.qty = conflict.qty + "1"
	add(fmt.Sprintf("DUP_KEY_CONFLICT: key %s again with another quantity", conflict.key), conflict)

	// quota, at the end: quantities are filled in by build
	for _, q := range []string{"near", "over", "small"} {
		r = rec{key: key("XA-1002"), dir: "import", company: "XA-1002", licence: "XA-IMP-2026-002", partner: "XC",
			substance: "HCFC-22", qty: q, unit: "t", purpose: "servicing"}
		out = append(out, special{item: item{r: r, special: true}, last: true})
	}
	r = base()
	r.substance, r.qty, r.unit = "R-404A", "70", "t"
	out = append(out, special{item: item{r: r, special: true,
		exercise: "QUOTA_EXCEEDED: 70 t of R-404A (274,540 CO2-eq t) against a line of 250,000 CO2-eq t"}, last: true})
	// placed last so that the lines above keep their numbers and keys
	r = base()
	r.substance, r.hs, r.qty = "R-410A", "2903.42", "100"
	out = append(out, special{item: item{r: r, special: true,
		exercise: "HS_KIND: HFC-32's single-substance subheading 2903.42 declared for the mixture R-410A"}, last: true})
	return out
}
