package main

import (
	"encoding/csv"
	"io"
	"strings"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
)

// CSV of lookup and mix: the column names are the .proto field names of the values they
// hold (as in the JSON dialect), figures as the exact decimals the server sends (no
// rounding; an unknown figure is an empty cell), lists joined by ";".

// lookupGwpSets are the GWP columns of lookup's CSV, in this order: the Protocol's Annex
// values, then the IPCC assessment reports.
var lookupGwpSets = []halovetv1.GwpSet{halovetv1.GwpSet_GWP_SET_PROTOCOL_ANNEXES, halovetv1.GwpSet_GWP_SET_IPCC_AR4,
	halovetv1.GwpSet_GWP_SET_IPCC_AR5, halovetv1.GwpSet_GWP_SET_IPCC_AR6}

var lookupCSVHeader = []string{"identifier", "result", "designation", "kind", "annex_group", "chemical_name",
	"formula", "cas_number", "odp", "gwp_100yr_mp", "gwp_100yr_ar4", "gwp_100yr_ar5", "gwp_100yr_ar6", "lifetime_years", "molar_mass_g_per_mol",
	"safety_class", "hs2022_subheading", "components", "candidates", "suggestions"}

// lookupCSVRow is one identifier's row: result is resolved, ambiguous or unresolved; the
// entry's columns are empty unless it resolved to one entry.
func lookupCSVRow(r lookupResult) []string {
	row := make([]string, len(lookupCSVHeader))
	set := func(col, v string) {
		for i, h := range lookupCSVHeader {
			if h == col {
				row[i] = v
				return
			}
		}
		panic("lookup CSV has no column " + col)
	}
	set("identifier", r.identifier)
	cands := r.resolution.GetCandidates()
	switch {
	case r.entry != nil:
		set("result", "resolved")
	case len(cands) > 0:
		set("result", "ambiguous")
		names := make([]string, len(cands))
		for i, c := range cands {
			names[i] = c.GetDesignation()
		}
		set("candidates", strings.Join(names, ";"))
		return row
	default:
		set("result", "unresolved")
		set("suggestions", strings.Join(r.resolution.GetSuggestions(), ";"))
		return row
	}
	set("designation", cands[0].GetDesignation())
	set("kind", entryKindLabel(cands[0].GetKind()))
	ev := r.evaluation
	set("odp", ev.GetOdp())
	for _, g := range ev.GetGwps() {
		for _, want := range lookupGwpSets {
			if g.GetGwpSet() == want {
				set("gwp_100yr_"+strings.ToLower(wireterms.GWPSetWord(want)), g.GetGwp_100Yr())
			}
		}
	}
	set("safety_class", ev.GetSafetyClass())
	set("hs2022_subheading", ev.GetHs2022Subheading())
	if s := r.entry.GetSubstance(); s != nil {
		set("annex_group", s.GetAnnexGroup())
		set("chemical_name", s.GetChemicalName())
		set("formula", s.GetFormula())
		set("cas_number", s.GetCasNumber())
		set("lifetime_years", s.GetLifetimeYears())
		set("molar_mass_g_per_mol", s.GetMolarMassGPerMol())
	} else if b := r.entry.GetBlend(); b != nil {
		parts := make([]string, len(b.GetComponents()))
		for i, c := range b.GetComponents() {
			parts[i] = c.GetDesignation() + ":" + c.GetMassPercent()
		}
		set("components", strings.Join(parts, ";"))
	}
	return row
}

// writeMixCSV writes one row per component and a closing row for the whole mixture
// (component "total").
func writeMixCSV(w io.Writer, ev *halovetv1.EvaluateMixtureResponse) error {
	cw := csv.NewWriter(w)
	_ = cw.Write([]string{"designation", "component", "annex_group", "mass_percent", "mass_kg", "odp", "odp_tonnes",
		"gwp_100yr_protocol", "co2e_tonnes", "safety_class"})
	for _, c := range ev.GetComponents() {
		_ = cw.Write([]string{ev.GetDesignation(), c.GetDesignation(), c.GetAnnexGroup(), c.GetMassPercent(),
			c.GetMassKg(), c.GetOdp(), c.GetOdpTonnes(), c.GetGwp_100YrProtocol(), c.GetCo2ETonnes(), c.GetSafetyClass()})
	}
	gwp := ""
	for _, g := range ev.GetGwps() {
		if g.GetGwpSet() == halovetv1.GwpSet_GWP_SET_PROTOCOL_ANNEXES {
			gwp = g.GetGwp_100Yr()
		}
	}
	_ = cw.Write([]string{ev.GetDesignation(), "total", "", "", ev.GetNetMassKg(), ev.GetOdp(),
		ev.GetOdpTonnes(), gwp, ev.GetCo2ETonnes(), ev.GetSafetyClass()})
	cw.Flush()
	return cw.Error()
}
