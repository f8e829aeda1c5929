package substances

import (
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// referenceDir is the repository's reference data, testdata/reference at the module root
// (one level up from this package directory, where go test runs). Its README names the
// published source of every table. The comparison is the point of these tests, so a missing
// directory or file fails them; it never skips them.
func referenceDir(t testing.TB) string {
	t.Helper()
	dir := filepath.Join("..", "testdata", "reference")
	for _, name := range referenceFiles {
		if _, err := os.Stat(filepath.Join(dir, name)); err != nil {
			t.Fatalf("reference table %s missing (%v): the catalogue cannot be compared with its published sources", name, err)
		}
	}
	return dir
}

// referenceFiles are the tables of testdata/reference the tests of this package read.
var referenceFiles = []string{"halocarbons.csv", "blends.csv", "blend_components.csv", "montreal_protocol_annexes.csv"}

// readReference reads a CSV with a header into one map per row, with the 1-based line.
func readReference(t *testing.T, path string) ([]map[string]string, []int) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatalf("open %s: %v", path, err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comment = '#'
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatalf("read %s: %v", path, err)
	}
	var rows []map[string]string
	var lines []int
	for i, rec := range recs[1:] {
		m := map[string]string{}
		for j, h := range recs[0] {
			m[h] = strings.TrimSpace(rec[j])
		}
		rows = append(rows, m)
		lines = append(lines, i+2)
	}
	return rows, lines
}

// dehyphen replaces the Unicode hyphen and en dash of the Handbook text with ASCII '-'.
func dehyphen(s string) string {
	return strings.NewReplacer("\u2010", "-", "\u2013", "-", "\u2011", "-").Replace(s)
}

// sameNumber compares a reference cell with a catalogue value; an empty cell means "none".
func sameNumber(cell string, v float64, has bool) bool {
	if cell == "" {
		return !has
	}
	want, err := strconv.ParseFloat(cell, 64)
	return err == nil && has && math.Abs(v-want) <= 1e-9*math.Max(1, math.Abs(want))
}

// halocarbonDifferences are mismatches with reference/halocarbons.csv that are right for a
// documented reason: designation -> column -> reason and source.
var halocarbonDifferences = map[string]map[string]string{
	"HCFC-121": {
		"cas":        "catalogue entry is the treaty isomer group C2HFCl4 (2 isomers, MP Handbook 2019 Annex C); the reference attaches the CAS, AR6 GWP and lifetime of one isomer (CHCl2CCl2F, IPCC AR6 7.SM.7)",
		"gwp100_ar6": "as for cas", "lifetime_years": "as for cas",
	},
	"HCFC-122": {
		"cas":        "treaty isomer group C2HF2Cl3 (3 isomers, MP Handbook 2019); the reference gives the values of CHCl2CClF2 (IPCC AR5 8.A.1, AR6 7.SM.7)",
		"gwp100_ar5": "as for cas", "gwp100_ar6": "as for cas", "lifetime_years": "as for cas",
	},
	"HCFC-132": {
		"cas":        "treaty isomer group C2H2F2Cl2 (4 isomers, MP Handbook 2019); the reference gives the values of CHClFCHClF (IPCC AR6 7.SM.7)",
		"gwp100_ar6": "as for cas", "lifetime_years": "as for cas",
	},
	"HCFC-123":      {"odp_mp_range": "the 0.02-0.06 range belongs to the C2HF3Cl2 group row, seeded as 'HCFC-123 (isomer group)'; CHCl2CF3 is listed at 0.02 alone (MP Handbook 2019 Annex C)"},
	"HCFC-124":      {"odp_mp_range": "the 0.02-0.04 range belongs to the C2HF4Cl group row, seeded as 'HCFC-124 (isomer group)'; CHFClCF3 is listed at 0.022 alone (MP Handbook 2019 Annex C)"},
	"HBFC-21B2":     {"cas": "catalogue carries 1868-53-7 from memory; the reference leaves it empty because only the US EPA table lineage gives it (its notes name the same number)"},
	"HBFC-31B1":     {"cas": "catalogue carries 373-52-4 from memory; the reference leaves it empty because only the US EPA table lineage gives it (its notes name the same number)"},
	"HFO-1234yf":    {"gwp100_ar4": "catalogue AR4 column holds the EU 517/2014 Annex II value 4 (from memory), used by the EU blend method; AR4 itself lists no value"},
	"HFO-1234ze(E)": {"gwp100_ar4": "catalogue AR4 column holds the EU 517/2014 Annex II value 7 (from memory), used by the EU blend method; AR4 itself lists no value"},
}

func TestReferenceHalocarbons(t *testing.T) {
	dir := referenceDir(t)
	c := testCatalogue(t)
	rows, lines := readReference(t, filepath.Join(dir, "halocarbons.csv"))
	if len(rows) == 0 {
		t.Fatal("halocarbons.csv has no rows")
	}
	seenDiff := map[string]bool{}
	for i, row := range rows {
		name := row["designation"]
		s, ok := c.Substance(name)
		if !ok {
			t.Errorf("halocarbons.csv line %d: %s is not in the catalogue", lines[i], name)
			continue
		}
		check := func(field string, ok bool, got any) {
			reason, documented := halocarbonDifferences[name][field]
			switch {
			case !ok && !documented:
				t.Errorf("%s %s: reference %q, catalogue %v", name, field, row[field], got)
			case ok && documented:
				t.Errorf("%s %s: documented difference (%s) no longer occurs; remove it from the table", name, field, reason)
			case !ok:
				seenDiff[name+"/"+field] = true
			}
		}
		refF, err := ParseFormula(row["formula"])
		catF, err2 := ParseFormula(s.Formula)
		check("formula", err == nil && err2 == nil && refF.Equal(catF), s.Formula)
		check("cas", row["cas"] == s.CAS, s.CAS)
		check("mp_annex_group", Group(row["mp_annex_group"]) == s.Group, s.Group)
		check("odp", sameNumber(row["odp"], s.ODP, true), s.ODP)
		rng := ""
		if s.ODPHigh > 0 {
			rng = strconv.FormatFloat(s.ODPLow, 'f', -1, 64) + "-" + strconv.FormatFloat(s.ODPHigh, 'f', -1, 64)
		}
		check("odp_mp_range", sameRange(row["odp_mp_range"], rng), rng)
		for _, g := range []struct {
			field string
			set   GWPSet
		}{{"gwp100_ar4", SetAR4}, {"gwp100_ar5", SetAR5}, {"gwp100_ar6", SetAR6}} {
			v, has := s.GWP[g.set]
			check(g.field, sameNumber(row[g.field], v, has), v)
		}
		check("lifetime_years", sameNumber(row["lifetime_years"], s.Lifetime, s.Lifetime > 0), s.Lifetime)
		if mm, err := strconv.ParseFloat(row["molar_mass_g_mol"], 64); err == nil {
			// The reference rounds to 3 decimals and may use more digits of F; the catalogue uses the
			// IUPAC abridged standard atomic weights.
			check("molar_mass_g_mol", math.Abs(mm-s.MolarMass) < 0.01, s.MolarMass)
		}
	}
	for name, fields := range halocarbonDifferences {
		for field := range fields {
			if !seenDiff[name+"/"+field] {
				t.Errorf("documented difference %s/%s did not occur (is the row still in halocarbons.csv?)", name, field)
			}
		}
	}
}

// sameRange compares "0.02-0.06" ranges numerically.
func sameRange(ref, cat string) bool {
	if ref == "" || cat == "" {
		return ref == cat
	}
	a, b := strings.Split(ref, "-"), strings.Split(cat, "-")
	if len(a) != 2 || len(b) != 2 {
		return false
	}
	for i := range a {
		x, err1 := strconv.ParseFloat(a[i], 64)
		y, err2 := strconv.ParseFloat(b[i], 64)
		if err1 != nil || err2 != nil || x != y {
			return false
		}
	}
	return true
}

// parseTolerances reads "+2/+0.5/+1" or "-2/-1.5/-1" as magnitudes.
func parseTolerances(t *testing.T, s string, n int) []float64 {
	t.Helper()
	out := make([]float64, n)
	if s == "" {
		return out
	}
	parts := strings.Split(s, "/")
	if len(parts) != n {
		t.Fatalf("tolerances %q: %d values for %d components", s, len(parts), n)
	}
	for i, p := range parts {
		v, err := strconv.ParseFloat(strings.TrimLeft(p, "+-"), 64)
		if err != nil {
			t.Fatalf("tolerance %q: %v", p, err)
		}
		out[i] = v
	}
	return out
}

func TestReferenceBlends(t *testing.T) {
	dir := referenceDir(t)
	c := testCatalogue(t)
	rows, lines := readReference(t, filepath.Join(dir, "blends.csv"))
	covered := map[string]bool{}
	for i, row := range rows {
		name := row["blend"]
		t.Run(name, func(t *testing.T) {
			b, ok := c.Blend(name)
			if !ok {
				t.Fatalf("blends.csv line %d: %s is not in the catalogue", lines[i], name)
			}
			covered[b.Designation] = true
			comps := strings.Split(row["components"], "/")
			pcts := strings.Split(row["mass_pct"], "/")
			if len(comps) != len(b.Components) || len(pcts) != len(comps) {
				t.Fatalf("components %v, catalogue %+v", comps, b.Components)
			}
			plus := parseTolerances(t, row["tol_plus"], len(comps))
			minus := parseTolerances(t, row["tol_minus"], len(comps))
			for k, cname := range comps {
				s, ok := c.Substance(cname)
				got := b.Components[k]
				if !ok || s.Designation != got.Designation {
					t.Errorf("component %d: reference %s, catalogue %s", k, cname, got.Designation)
				}
				if !sameNumber(pcts[k], got.MassPct, true) {
					t.Errorf("%s: %s %% in the reference, %g in the catalogue", cname, pcts[k], got.MassPct)
				}
				if tolerancesFromMemory(row["tol_plus"], b) {
					// The reference (ASHRAE 34-2019 as transcribed) gives no tolerance for this
					// azeotrope; the catalogue's come from memory and its sources say so.
				} else if got.TolPlus != plus[k] || got.TolMinus != minus[k] {
					t.Errorf("%s tolerances +%g/-%g, reference +%g/-%g", cname, got.TolPlus, got.TolMinus, plus[k], minus[k])
				}
			}
			if want := BlendType(strings.Fields(row["blend_type"])[0]); b.Type != want {
				t.Errorf("type %q, reference %q", b.Type, want)
			}

			ev := mustEvaluate(t, c, name, 1)
			// HFC + PFC sum, the convention of the published national tables (UK government CO2e
			// table; testdata/reference/README.md). PFCs are not Annex F, so this is not the catalogue's annex-f-only figure:
			// computed here from the catalogue's component AR4 values.
			hfcPFC, hasPFC := 0.0, false
			for _, comp := range b.Components {
				s, _ := c.Substance(comp.Designation)
				isPFC := strings.HasPrefix(s.Designation, "PFC-")
				hasPFC = hasPFC || isPFC
				if annexF(s.Group) || isPFC {
					hfcPFC += comp.MassPct * s.GWP[SetAR4] / 100
				}
			}
			if pub := row["gwp_ar4_published"]; pub != "" {
				want, _ := strconv.ParseFloat(pub, 64)
				if roundHalfUp(hfcPFC) != want {
					t.Errorf("HFC+PFC AR4 GWP %.3f rounds to %g, published %s (%s)", hfcPFC, roundHalfUp(hfcPFC), pub, row["gwp_ar4_published_source"])
				}
			}
			if want, err := strconv.ParseFloat(row["gwp_ar4_calc_hfc_pfc_only"], 64); err != nil || math.Abs(hfcPFC-want) > 0.0005 {
				t.Errorf("HFC+PFC AR4 GWP %.3f, reference %s", hfcPFC, row["gwp_ar4_calc_hfc_pfc_only"])
			}
			if f := gwpOf(t, ev, SetAR4, ConventionAnnexFOnly); !hasPFC && !near(f.GWP, hfcPFC) {
				t.Errorf("annex-f-only AR4 %g differs from the HFC sum %g of a PFC-free blend", f.GWP, hfcPFC)
			}
			// All components. Rows flagged gwp_calc_uses_memory_values rest on the HFO values of EU
			// 517/2014 Annex II from memory, in the reference and in the catalogue alike: advisory.
			all := gwpOf(t, ev, SetAR4, ConventionAllComponents)
			if want, err := strconv.ParseFloat(row["gwp_ar4_calc_all_components"], 64); err != nil || math.Abs(all.GWP-want) > 0.0005 || !all.Complete {
				t.Errorf("all-components AR4 GWP %.3f (complete %v), reference %s (memory values: %q)", all.GWP, all.Complete, row["gwp_ar4_calc_all_components"], row["gwp_calc_uses_memory_values"])
			}
		})
	}
	for _, b := range c.Blends() {
		// blends.csv is the ASHRAE 34 table; the traded mixtures without an ASHRAE 34 number
		// (the methyl bromide/chloropicrin fumigants, composition by common practice) are
		// checked in hs_catalogue_test.go.
		if !covered[b.Designation] && b.Type != BlendMixture {
			t.Errorf("catalogue blend %s is not in blends.csv: add a check with its source", b.Designation)
		}
	}

	// The long format must agree with the catalogue too.
	long, llines := readReference(t, filepath.Join(dir, "blend_components.csv"))
	for i, row := range long {
		b, ok := c.Blend(row["blend"])
		if !ok {
			t.Errorf("blend_components.csv line %d: blend %s missing", llines[i], row["blend"])
			continue
		}
		s, _ := c.Substance(row["component"])
		found := false
		for _, comp := range b.Components {
			if s != nil && comp.Designation == s.Designation {
				found = true
				tp := parseTolerances(t, row["tol_plus"], 1)[0]
				tm := parseTolerances(t, row["tol_minus"], 1)[0]
				tolOK := (comp.TolPlus == tp && comp.TolMinus == tm) || tolerancesFromMemory(row["tol_plus"], b)
				if !sameNumber(row["mass_pct"], comp.MassPct, true) || !tolOK {
					t.Errorf("blend_components.csv line %d: %s in %s %s%% +%g/-%g, catalogue %g%% +%g/-%g", llines[i], row["component"], row["blend"], row["mass_pct"], tp, tm, comp.MassPct, comp.TolPlus, comp.TolMinus)
				}
			}
		}
		if !found {
			t.Errorf("blend_components.csv line %d: %s has no component %s", llines[i], row["blend"], row["component"])
		}
	}
}

// annexListDifferences are mismatches with the Handbook extraction in reference/raw that are
// right for a documented reason: treaty formula + "/" + field -> reason and source.
var annexListDifferences = map[string]string{
	"C3H2F5Br/odp": "the extraction reads 0.9-1.4; EU Regulation 1005/2009 Annex I gives the upper value 14 " +
		"(from memory; testdata/reference/README.md); the catalogue uses 0.9-14 and says so in its note",
	"C2HF3Cl2/name": "the Annex names the group row and the listed isomer CHCl2CF3 both HCFC-123; the catalogue " +
		"calls the group 'HCFC-123 (isomer group)' so that each name identifies one entry",
	"C2HF4Cl/name": "as for C2HF3Cl2: the group is 'HCFC-124 (isomer group)'",
	"CHCl2CF3/gwp": "the Annex prints the Kigali GWP 77 on the C2HF3Cl2 row; the catalogue gives it to the listed " +
		"isomer CHCl2CF3 too, whose IPCC AR4 value it is (AR4 WG1 Table 2.14)",
	"CHFClCF3/gwp": "as for CHCl2CF3: the Kigali GWP 609 is the AR4 value of CHFClCF3",
}

func TestReferenceAnnexList(t *testing.T) {
	dir := referenceDir(t)
	c := testCatalogue(t)
	rows, lines := readReference(t, filepath.Join(dir, "montreal_protocol_annexes.csv"))
	groupOf := map[string]string{"Group I": "I", "Group II": "II", "Group III": "III"}
	matched := map[string]int{} // catalogue designation -> row line
	seenDiff := map[string]bool{}
	perGroup := map[Group]int{}
	for i, row := range rows {
		treaty := row["Formula"]
		g := Group(strings.TrimPrefix(row["Annex"], "Annex ") + "/" + groupOf[row["Group"]])
		perGroup[g]++
		f, err := ParseFormula(treaty)
		if err != nil {
			t.Errorf("line %d: formula %q: %v", lines[i], treaty, err)
			continue
		}
		// Find the catalogue entry of this Annex row.
		var cands []*Substance
		for _, s := range c.Substances() {
			sf, _ := ParseFormula(s.Formula)
			if s.Group == g && sf.Equal(f) && s.Designation != "HCFC-133a" {
				cands = append(cands, s)
			}
		}
		var s *Substance
		for _, cand := range cands {
			isomerRow := isStructural(treaty) && len(cands) > 1
			switch {
			case len(cands) == 1:
				s = cand
			case isomerRow && hasName(cand, treaty):
				s = cand
			case !isomerRow && cand.IsomerCount > 1 && cand.Structure == "":
				s = cand
			}
		}
		if s == nil {
			t.Errorf("line %d: no catalogue entry for %s %s (%s)", lines[i], g, treaty, row["Substance"])
			continue
		}
		if prev, dup := matched[s.Designation]; dup {
			t.Errorf("line %d: %s already matched line %d", lines[i], s.Designation, prev)
		}
		matched[s.Designation] = lines[i]

		check := func(field string, ok bool, got any) {
			key := treaty + "/" + field
			reason, documented := annexListDifferences[key]
			switch {
			case !ok && !documented:
				t.Errorf("line %d %s (%s) %s: catalogue %v", lines[i], treaty, s.Designation, field, got)
			case ok && documented:
				t.Errorf("line %d %s %s: documented difference (%s) no longer occurs", lines[i], treaty, field, reason)
			case !ok:
				seenDiff[key] = true
			}
		}
		// ODP: single value, or range with the upper value used.
		odp := dehyphen(row["Ozone-Depleting Potential"])
		switch lo, hi, isRange := strings.Cut(odp, "-"); {
		case odp == "":
			check("odp", s.ODP == 0 && s.ODPHigh == 0, s.ODP)
		case isRange:
			check("odp", sameNumber(lo, s.ODPLow, true) && sameNumber(hi, s.ODPHigh, true) && s.ODP == s.ODPHigh,
				strconv.FormatFloat(s.ODPLow, 'f', -1, 64)+"-"+strconv.FormatFloat(s.ODPHigh, 'f', -1, 64))
		default:
			check("odp", sameNumber(odp, s.ODP, true) && s.ODPHigh == 0, s.ODP)
		}
		mp, hasMP := s.GWP[SetProtocol]
		check("gwp", sameNumber(row["100-Year Global Warming Potential"], mp, hasMP), mp)
		if n := row["Number of isomers"]; n != "" {
			check("isomers", n == strconv.Itoa(s.IsomerCount), s.IsomerCount)
		}
		if name := dehyphen(row["Substance"]); name != "" {
			ok := false
			for _, part := range strings.Split(name, "  ") {
				if got, found := c.Substance(part); found && got == s {
					ok = true
				}
			}
			check("name", ok, s.Designation)
		}
	}
	// source: counts of the entries of Montreal Protocol Annexes A-F (Ozone Secretariat Handbook 2019)
	for g, n := range map[Group]int{GroupAI: 5, GroupAII: 3, GroupBI: 10, GroupBII: 1, GroupBIII: 1, GroupCI: 40, GroupCII: 34, GroupCIII: 1, GroupEI: 1, GroupFI: 17, GroupFII: 1} {
		if perGroup[g] != n {
			t.Errorf("the Handbook list has %d %s rows, the Annex has %d entries", perGroup[g], g, n)
		}
	}
	for _, s := range c.Substances() {
		if s.Group.Controlled() && s.Designation != "HCFC-133a" && matched[s.Designation] == 0 {
			t.Errorf("catalogue entry %s (%s) matches no Annex row", s.Designation, s.Group)
		}
	}
	for key := range annexListDifferences {
		if !seenDiff[key] {
			t.Errorf("documented difference %s did not occur", key)
		}
	}
}

// hasName reports whether text is the structure or a synonym of s.
func hasName(s *Substance, text string) bool {
	if s.Structure == text {
		return true
	}
	for _, syn := range s.Synonyms {
		if syn == text {
			return true
		}
	}
	return false
}

// TestReferenceReadme checks that testdata/reference/README.md describes every table in the
// directory and names every source code the tables' source columns use, so that no value in
// them rests on an unexplained abbreviation.
func TestReferenceReadme(t *testing.T) {
	dir := referenceDir(t)
	raw, err := os.ReadFile(filepath.Join(dir, "README.md"))
	if err != nil {
		t.Fatalf("the reference tables need their README with the sources: %v", err)
	}
	readme := string(raw)
	tables, err := filepath.Glob(filepath.Join(dir, "*.csv"))
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range tables {
		if name := filepath.Base(p); !strings.Contains(readme, "`"+name+"`") {
			t.Errorf("README.md does not describe %s", name)
		}
	}
	codes := map[string]string{} // code -> where it was first seen
	addCodes := func(file, col string, line int, cell string) {
		if _, after, ok := strings.Cut(cell, "read in:"); ok {
			cell = after // "Montreal Protocol Annex C Group I; read in: MP-DE, ..."
		}
		for _, tok := range strings.FieldsFunc(cell, func(r rune) bool { return strings.ContainsRune("+,;[]", r) }) {
			tok = strings.TrimSpace(tok)
			if _, after, ok := strings.Cut(tok, ": "); ok {
				tok = after // "AR4: KIG-A"
			}
			tok, _, _ = strings.Cut(tok, "=") // "US-40CFR82A=0.7"
			tok = strings.TrimSuffix(tok, "(range)")
			if tok == "" || tok == "n/a" || strings.Contains(tok, " ") || strings.HasPrefix(tok, "memory") {
				continue // free text, not a code
			}
			if _, seen := codes[tok]; !seen {
				codes[tok] = fmt.Sprintf("%s line %d, %s", file, line, col)
			}
		}
	}
	for file, cols := range map[string][]string{
		"halocarbons.csv": {"source_odp", "source_gwp", "source_lifetime", "cas_sources"},
		"blends.csv":      {"gwp_ar4_published_source", "source_composition"},
	} {
		rows, lines := readReference(t, filepath.Join(dir, file))
		for i, row := range rows {
			for _, col := range cols {
				cell, ok := row[col]
				if !ok {
					t.Fatalf("%s has no column %s", file, col)
				}
				addCodes(file, col, lines[i], cell)
			}
		}
	}
	if len(codes) < 20 {
		t.Fatalf("found only %d source codes in the tables; the parsing above no longer matches them", len(codes))
	}
	for code, where := range codes {
		base, _, _ := strings.Cut(code, "(") // "US-EPA-CL2-2008(WMO2006)" is explained under its base code
		if !strings.Contains(readme, code) && !strings.Contains(readme, base) {
			t.Errorf("source code %q (%s) is not explained in README.md", code, where)
		}
	}
}

// tolerancesFromMemory reports whether a reference row without tolerances (refTol empty) meets
// a catalogue blend whose tolerances are recorded from memory: the only case where the two may
// differ. A blend with tolerances and no such source still fails the comparison.
func tolerancesFromMemory(refTol string, b *Blend) bool {
	return strings.TrimSpace(refTol) == "" && strings.Contains(b.Sources, "ANSI/ASHRAE Standard 34, composition tolerances of") && strings.Contains(b.Sources, "values from memory")
}
