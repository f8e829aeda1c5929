package main

import (
	"encoding/csv"
	"io"
	"strings"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// CSV of lookup and mix: the column names are the .proto field names of the values they
// hold (as in the JSON dialect), numbers in full (no rounding), lists joined by ";".

// lookupGwpSets are the GWP columns of lookup's CSV, in this order: the Protocol's Annex
// values, then the IPCC assessment reports.
var lookupGwpSets = []string{"MP", "AR4", "AR5", "AR6"}

var lookupCSVHeader = []string{"identifier", "result", "designation", "kind", "annex_group", "chemical_name",
	"formula", "cas_number", "odp", "gwp100_mp", "gwp100_ar4", "gwp100_ar5", "gwp100_ar6", "lifetime_years",
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
	set("odp", fmtFull(ev.GetOdp()))
	for _, g := range ev.GetGwps() {
		for _, want := range lookupGwpSets {
			if g.GetGwpSet() == want {
				set("gwp100_"+strings.ToLower(want), fmtFull(g.GetGwp100()))
			}
		}
	}
	set("safety_class", ev.GetSafetyClass())
	set("hs2022_subheading", ev.GetHs2022Subheading())
	if s := r.entry.GetEntry().GetSubstance(); s != nil {
		set("annex_group", s.GetAnnexGroup())
		set("chemical_name", s.GetChemicalName())
		set("formula", s.GetFormula())
		set("cas_number", s.GetCasNumber())
		if s.GetLifetimeYears() > 0 {
			set("lifetime_years", fmtFull(s.GetLifetimeYears()))
		}
	} else if b := r.entry.GetEntry().GetBlend(); b != nil {
		parts := make([]string, len(b.GetComponents()))
		for i, c := range b.GetComponents() {
			parts[i] = c.GetDesignation() + ":" + fmtFull(c.GetMassPercent())
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
		"gwp_protocol", "co2e_tonnes", "safety_class"})
	for _, c := range ev.GetComponents() {
		_ = cw.Write([]string{ev.GetDesignation(), c.GetDesignation(), c.GetAnnexGroup(), fmtFull(c.GetMassPercent()),
			fmtFull(c.GetMassKg()), fmtFull(c.GetOdp()), fmtFull(c.GetOdpTonnes()), fmtFull(c.GetGwpProtocol()),
			fmtFull(c.GetCo2ETonnes()), c.GetSafetyClass()})
	}
	gwp := ""
	for _, g := range ev.GetGwps() {
		if g.GetGwpSet() == "MP" {
			gwp = fmtFull(g.GetGwp100())
		}
	}
	_ = cw.Write([]string{ev.GetDesignation(), "total", "", "", fmtFull(ev.GetNetMassKg()), fmtFull(ev.GetOdp()),
		fmtFull(ev.GetOdpTonnes()), gwp, fmtFull(ev.GetCo2ETonnes()), ev.GetSafetyClass()})
	cw.Flush()
	return cw.Error()
}
