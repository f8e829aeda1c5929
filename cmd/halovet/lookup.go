package main

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
)

func init() {
	addVerb("lookup", "identify substances and blends and show their catalogue entries", lookupUsage, defineLookup)
}

const lookupUsage = `lookup [flags] IDENTIFIER...

Identifies each IDENTIFIER as a shipping paper may write it: a designation (HCFC-22,
R-22, R22, "hcfc 22", 404a), a CAS Registry Number (75-45-6), a formula (CHClF2,
CHF2Cl), a chemical name, or an HS subheading (2903.45). For the entry it names, it
shows designation, synonyms, formula, CAS number, Montreal Protocol Annex/Group, ODP
(and the Annex's range), 100-year GWPs labelled by set (MP = the Protocol's annex
value, AR4, AR5, AR6), lifetime, molar mass, HS 2017 and HS 2022 subheadings (a
subheading that also holds other goods is marked: the code alone does not prove
identity), the ASHRAE 34 safety class and its cautions; for a blend, its components
with mass % and tolerances and the blend's GWP under each set and convention.

An identifier that fits several entries equally (a shared HS subheading, say) lists
every candidate with how it matched and what to give instead; one that fits nothing
gets "did you mean" suggestions.

--output text (default) prints a report for people. --output json prints JSON Lines:
one object per IDENTIFIER, in order, {"identifier": "...", "resolution": ...,
"entry": ..., "evaluation": ...}, where resolution is the ResolveIdentifierResponse,
entry the GetEntryResponse and evaluation the EvaluateMixtureResponse of the entry
(cautions, blend GWPs), each in halovet's JSON dialect ('halovet help json':
snake_case names, zeros kept, enums as words). entry and evaluation are present only
when the identifier resolved to one entry.

Exit code: 0 when every IDENTIFIER resolved to exactly one entry; 1 when one did not
(ambiguous or unknown); 2 for unusable command-line input; 3 when no server answers.

Examples:
  halovet lookup R-22
  halovet lookup 75-45-6 CHF2Cl "hcfc 22"
  halovet lookup R-404A 2903.45
  halovet lookup --output json R-410A`

// reportOutputFlag registers --output text|json, and csv too when withCSV is set.
func reportOutputFlag(fs *pflag.FlagSet, withCSV bool) *string {
	if withCSV {
		return fs.String("output", "text", "output format: text (a report for people), json (see 'halovet help json') or csv (one row per item)")
	}
	return fs.String("output", "text", "output format: text (a report for people) or json (see 'halovet help json')")
}

func checkReportOutput(v string, withCSV bool) error {
	switch {
	case v == "text" || v == "json":
		return nil
	case v == "csv" && withCSV:
		return nil
	case withCSV:
		return usageErr("--output %q: use text, json or csv", v)
	}
	return usageErr("--output %q: use text or json", v)
}

func defineLookup(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	output := reportOutputFlag(fs, true)
	return func(ctx context.Context, ids []string) error {
		if err := checkReportOutput(*output, true); err != nil {
			return err
		}
		if len(ids) == 0 {
			return usageErr("give at least one IDENTIFIER (see --help)")
		}
		for _, id := range ids {
			if strings.TrimSpace(id) == "" {
				return usageErr("an IDENTIFIER is empty")
			}
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		return lookupReport(ctx, conn, os.Stdout, ids, *output)
	}
}

// lookupResult is what the server says about one identifier.
type lookupResult struct {
	identifier string
	resolution *halovetv1.ResolveIdentifierResponse
	entry      *halovetv1.GetEntryResponse        // nil unless resolved to one entry
	evaluation *halovetv1.EvaluateMixtureResponse // nil unless resolved to one entry
	casOf      map[string]string                  // CAS numbers of ambiguous candidates
}

// lookupOne resolves an identifier and, when it names one entry, fetches the entry and
// its evaluation (cautions; a blend's GWPs).
func lookupOne(ctx context.Context, client halovetv1.CatalogueServiceClient, id string) (lookupResult, error) {
	r := lookupResult{identifier: id}
	var err error
	if r.resolution, err = client.ResolveIdentifier(ctx, &halovetv1.ResolveIdentifierRequest{Identifier: id}); err != nil {
		return r, rpcFailure("resolving "+strconv.Quote(id), err)
	}
	if len(r.resolution.GetCandidates()) == 0 {
		return r, nil
	}
	if r.resolution.GetAmbiguous() {
		// The CAS numbers of the candidates tell the user what to write instead.
		r.casOf = map[string]string{}
		for _, c := range r.resolution.GetCandidates() {
			e, err := client.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: c.GetDesignation()})
			if err != nil {
				return r, rpcFailure("reading the entry "+c.GetDesignation(), err)
			}
			r.casOf[c.GetDesignation()] = e.GetSubstance().GetCasNumber()
		}
		return r, nil
	}
	best := r.resolution.GetCandidates()[0].GetDesignation()
	if r.entry, err = client.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: best}); err != nil {
		return r, rpcFailure("reading the entry "+best, err)
	}
	if r.evaluation, err = client.EvaluateMixture(ctx, &halovetv1.EvaluateMixtureRequest{Blend: best}); err != nil {
		return r, rpcFailure("evaluating "+best, err)
	}
	return r, nil
}

// lookupReport looks up each identifier and writes the report; it returns an exit code 1
// error when an identifier did not resolve to exactly one entry.
func lookupReport(ctx context.Context, conn grpc.ClientConnInterface, w io.Writer, ids []string, output string) error {
	client := halovetv1.NewCatalogueServiceClient(conn)
	var cautions, unresolved []string
	var cw *csv.Writer
	if output == "csv" {
		cw = csv.NewWriter(w)
		_ = cw.Write(lookupCSVHeader)
	}
	for i, id := range ids {
		r, err := lookupOne(ctx, client, id)
		if err != nil {
			return err
		}
		if r.entry == nil {
			unresolved = append(unresolved, strconv.Quote(id))
		} else {
			cautions = append(cautions, r.evaluation.GetCautions()...)
		}
		switch output {
		case "json":
			err = writeLookupJSON(w, r)
		case "csv":
			err = cw.Write(lookupCSVRow(r))
		default:
			if i > 0 {
				fmt.Fprintln(w)
			}
			err = writeLookupText(w, r)
		}
		if err != nil {
			return err
		}
	}
	if cw != nil {
		cw.Flush()
		if err := cw.Error(); err != nil {
			return err
		}
	}
	if output == "text" {
		if _, err := fmt.Fprint(w, "\n"+reportFooter(cautions)); err != nil {
			return err
		}
	}
	if len(unresolved) > 0 {
		return rejectedErr("%d of %d identifiers did not resolve to one catalogue entry: %s",
			len(unresolved), len(ids), strings.Join(unresolved, ", "))
	}
	return nil
}

// writeLookupJSON writes one JSON Lines record.
func writeLookupJSON(w io.Writer, r lookupResult) error {
	rec := struct {
		Identifier string          `json:"identifier"`
		Resolution json.RawMessage `json:"resolution"`
		Entry      json.RawMessage `json:"entry,omitempty"`
		Evaluation json.RawMessage `json:"evaluation,omitempty"`
	}{Identifier: r.identifier}
	rec.Resolution = wirejson.Line(r.resolution)
	if r.entry != nil {
		rec.Entry = wirejson.Line(r.entry)
		rec.Evaluation = wirejson.Line(r.evaluation)
	}
	b, err := json.Marshal(rec) // one line
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

var matchKindLabel = map[halovetv1.MatchKind]string{
	halovetv1.MatchKind_MATCH_KIND_DESIGNATION:    "designation",
	halovetv1.MatchKind_MATCH_KIND_SYNONYM:        "synonym",
	halovetv1.MatchKind_MATCH_KIND_CAS_NUMBER:     "CAS number",
	halovetv1.MatchKind_MATCH_KIND_FORMULA:        "formula",
	halovetv1.MatchKind_MATCH_KIND_CHEMICAL_NAME:  "chemical name",
	halovetv1.MatchKind_MATCH_KIND_HS_CODE:        "HS code",
	halovetv1.MatchKind_MATCH_KIND_DECODED_NUMBER: "ASHRAE 34 number decoded to the formula",
}

func writeLookupText(w io.Writer, r lookupResult) error {
	res := r.resolution
	cands := res.GetCandidates()
	switch {
	case r.entry != nil:
		c := cands[0]
		how := matchKindLabel[c.GetMatchKind()]
		if c.GetMatchedOn() != "" && c.GetMatchedOn() != r.identifier {
			how += " " + c.GetMatchedOn()
		}
		fmt.Fprintf(w, "%s  (from %q, by %s)\n", c.GetDesignation(), r.identifier, how)
		kv := &lookupLines{w: w}
		if s := r.entry.GetSubstance(); s != nil {
			writeSubstanceText(kv, s)
		} else if b := r.entry.GetBlend(); b != nil {
			writeBlendText(kv, b, r.evaluation)
		}
		return kv.err
	case len(cands) > 0:
		fmt.Fprintf(w, "%q: ambiguous, %d candidates\n", r.identifier, len(cands))
		if res.GetNote() != "" {
			fmt.Fprint(w, wrapIndented(res.GetNote(), "  ", 88))
		}
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
		fmt.Fprintln(tw, "  candidate\tkind\tAnnex/Group\tmatched by\ton\tscore")
		names := make([]string, len(cands))
		for i, c := range cands {
			names[i] = c.GetDesignation()
			if cas := r.casOf[c.GetDesignation()]; cas != "" {
				names[i] += " (CAS " + cas + ")"
			}
			fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\t%s\t%s\n", c.GetDesignation(), entryKindLabel(c.GetKind()),
				textOrDash(c.GetAnnexGroup()), matchKindLabel[c.GetMatchKind()], c.GetMatchedOn(), wireDec(c.GetScore()).Fixed(2))
		}
		if err := tw.Flush(); err != nil {
			return err
		}
		_, err := fmt.Fprint(w, wrapIndented("Give the designation or CAS number of the one meant instead: "+
			strings.Join(names, ", ")+".", "  ", 88))
		return err
	default:
		fmt.Fprintf(w, "%q: no catalogue entry\n", r.identifier)
		if res.GetNote() != "" {
			fmt.Fprint(w, wrapIndented(res.GetNote(), "  ", 88))
		}
		var err error
		if len(res.GetSuggestions()) > 0 {
			_, err = fmt.Fprintf(w, "  Did you mean: %s?\n", strings.Join(res.GetSuggestions(), ", "))
		}
		return err
	}
}

// lookupLines writes "  key             value" lines and keeps the first write error.
type lookupLines struct {
	w   io.Writer
	err error
}

func (l *lookupLines) line(key, value string) {
	if l.err == nil {
		_, l.err = fmt.Fprintf(l.w, "  %-16s%s\n", key, value)
	}
}

func (l *lookupLines) raw(s string) {
	if l.err == nil {
		_, l.err = io.WriteString(l.w, s)
	}
}

func writeSubstanceText(kv *lookupLines, s *halovetv1.Substance) {
	kv.line("kind", "substance")
	kv.line("chemical name", textOrDash(s.GetChemicalName()))
	kv.line("synonyms", textOrDash(strings.Join(s.GetSynonyms(), ", ")))
	formula := textOrDash(s.GetFormula())
	if s.GetStructure() != "" && s.GetStructure() != s.GetFormula() {
		formula += "  (structure " + s.GetStructure() + ")"
	}
	kv.line("formula", formula)
	cas := s.GetCasNumber()
	if cas == "" {
		cas = "— (none recorded)"
		if s.GetIsomerCount() > 1 {
			cas = "— (none: the Annex entry is an isomer group)"
		}
	}
	kv.line("CAS number", cas)
	if s.GetIsomerCount() > 1 {
		kv.line("isomers", fmt.Sprintf("%d (the Annex entry covers every isomer of the formula)", s.GetIsomerCount()))
	}
	group := "not controlled by the Montreal Protocol"
	if g := s.GetAnnexGroup(); g != "" {
		group = g + " (Montreal Protocol Annex " + strings.Replace(g, "/", ", Group ", 1) + ")"
	}
	kv.line("Annex/Group", group)
	odp := shown(s.GetOdp(), exact.ODP)
	if s.GetOdpRangeHigh() != "" {
		odp += fmt.Sprintf(" (upper end of the Annex range %s–%s, used for the Protocol's calculations)",
			shown(s.GetOdpRangeLow(), exact.ODP), shown(s.GetOdpRangeHigh(), exact.ODP))
	}
	kv.line("ODP", odp)
	if len(s.GetGwps()) == 0 {
		kv.line("GWP (100-year)", "— (no value recorded)")
	}
	for i, g := range s.GetGwps() {
		key := ""
		if i == 0 {
			key = "GWP (100-year)"
		}
		v := fmt.Sprintf("%-4s %s", wireterms.GWPSetWord(g.GetGwpSet()), shown(g.GetGwp_100Yr(), exact.GWP))
		if g.GetGwpSet() == halovetv1.GwpSet_GWP_SET_PROTOCOL_ANNEXES {
			v += "  (Protocol annex value)"
		}
		if g.GetSource() != "" {
			v += "  " + g.GetSource()
		}
		kv.line(key, v)
	}
	life := "— (not known)"
	if s.GetLifetimeYears() != "" {
		life = shown(s.GetLifetimeYears(), exact.Years) + " years"
	}
	kv.line("lifetime", life)
	kv.line("molar mass", textOrDash(shown(s.GetMolarMassGPerMol(), exact.GPerMol))+" g/mol")
	for _, ed := range []struct {
		key     string
		edition halovetv1.HsEdition
	}{{"HS 2017", halovetv1.HsEdition_HS_EDITION_HS_2017}, {"HS 2022", halovetv1.HsEdition_HS_EDITION_HS_2022}} {
		var codes []string
		for _, h := range s.GetHsCodes() {
			if h.GetEdition() != ed.edition {
				continue
			}
			c := h.GetSubheading()
			if h.GetShared() {
				c += "  (shared subheading: code alone does not prove identity)"
			}
			codes = append(codes, c)
		}
		if len(codes) == 0 {
			codes = []string{"— (none recorded)"}
		}
		for i, c := range codes {
			key := ""
			if i == 0 {
				key = ed.key
			}
			kv.line(key, c)
		}
	}
	kv.line("safety class", safetyClassText(s.GetSafetyClass()))
	kv.raw(wrapIndented("sources: "+textOrDash(s.GetSources()), "  ", 88))
}

func writeBlendText(kv *lookupLines, b *halovetv1.Blend, ev *halovetv1.EvaluateMixtureResponse) {
	kv.line("kind", "blend ("+textOrDash(wireterms.BlendTypeWord(b.GetBlendType()))+")")
	kv.line("synonyms", textOrDash(strings.Join(b.GetSynonyms(), ", ")))
	kv.line("safety class", safetyClassText(b.GetSafetyClass()))
	groups := map[string]string{}
	for _, c := range ev.GetComponents() {
		groups[c.GetDesignation()] = c.GetAnnexGroup()
	}
	kv.raw("  components\n")
	var tb strings.Builder
	tw := tabwriter.NewWriter(&tb, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "    component\tmass %\ttolerance\tAnnex/Group")
	for _, c := range b.GetComponents() {
		fmt.Fprintf(tw, "    %s\t%s\t+%s/-%s\t%s\n", c.GetDesignation(), shown(c.GetMassPercent(), exact.Percent),
			textOrDash(shown(c.GetTolerancePlusPoints(), exact.Points)), textOrDash(shown(c.GetToleranceMinusPoints(), exact.Points)), textOrDash(groups[c.GetDesignation()]))
	}
	_ = tw.Flush()
	kv.raw(tb.String())
	kv.line("ODP", shown(ev.GetOdp(), exact.ODP)+"  (mass-weighted)")
	kv.raw(mixtureGWPTable(ev))
	kv.raw(mixtureHSText(ev))
	kv.raw(wrapIndented("sources: "+textOrDash(b.GetSources()), "  ", 88))
}

// safetyClassText explains an ASHRAE 34 safety class: the letter is the toxicity class,
// the digit the flammability class (ANSI/ASHRAE Standard 34, from memory).
func safetyClassText(class string) string {
	if class == "" {
		return "— (no ASHRAE 34 class recorded; see the cautions)"
	}
	tox := map[byte]string{'A': "lower toxicity", 'B': "higher toxicity"}[class[0]]
	flam := map[string]string{"1": "no flame propagation", "2L": "lower flammability", "2": "flammable", "3": "higher flammability"}[class[1:]]
	if tox == "" || flam == "" {
		return class
	}
	return fmt.Sprintf("%s (ASHRAE 34: %s, %s; cautions below)", class, tox, flam)
}

func entryKindLabel(k halovetv1.EntryKind) string {
	switch k {
	case halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE:
		return "substance"
	case halovetv1.EntryKind_ENTRY_KIND_BLEND:
		return "blend"
	}
	return "?"
}

func textOrDash(s string) string {
	if strings.TrimSpace(s) == "" {
		return "—"
	}
	return s
}

// wrapText wraps s into lines of at most width bytes, each starting with indent.
func wrapIndented(s, indent string, width int) string {
	var b strings.Builder
	line := indent
	for _, word := range strings.Fields(s) {
		if len(line) > len(indent) && len(line)+1+len(word) > width {
			b.WriteString(line + "\n")
			line = indent
		}
		if len(line) > len(indent) {
			line += " "
		}
		line += word
	}
	if len(line) > len(indent) {
		b.WriteString(line + "\n")
	}
	return b.String()
}

// rpcFailure turns a failed call into a one-line error (exit code 1) with the server's
// message and the fields it names.
func rpcFailure(what string, err error) error {
	// run gives the wrapped status its exit code and reads it as "the server answered ...".
	return fmt.Errorf("%s: %w", what, err)
}
