package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"text/tabwriter"

	"google.golang.org/grpc"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/encoding/protojson"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

func init() {
	register("lookup", "identify substances and blends and show their catalogue entries", runLookup)
	register("mix", "evaluate a blend or an ad-hoc composition: ODP, GWP, CO2-eq, HS code", runMix)
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
(cautions, blend GWPs), each in protobuf JSON (protojson: lowerCamelCase names,
fields at their zero value left out). entry and evaluation are present only when the
identifier resolved to one entry.

Exit code: 0 when every IDENTIFIER resolved to exactly one entry; 1 when one did not
(ambiguous or unknown) or the server failed; 2 for unusable command-line input.

Examples:
  halovet lookup R-22
  halovet lookup 75-45-6 CHF2Cl "hcfc 22"
  halovet lookup R-404A 2903.45
  halovet lookup --output json R-410A`

const mixUsage = `mix [flags] SPEC

Evaluates a mixture. SPEC is a blend designation (R-410A; any identifier that names one
catalogue entry, a single substance too) or an ad-hoc composition written
IDENTIFIER:MASS_PERCENT,IDENTIFIER:MASS_PERCENT,... (R-32:50,R-125:50), whose shares
must sum to 100 % within 0.01 and whose identifiers must each name one substance.

Prints the mixture's ODP; its 100-year GWP under each set (MP = the Protocol's annex
values, AR4, AR5, AR6) in both conventions, "all components" (every component with a
GWP, as the EU F-gas rules weigh a blend) and "Annex F only (as the Protocol counts)";
per component the mass %, mass kg, Annex/Group, ODP tonnes and CO2-eq tonnes (mass
columns need --mass-kg); the HS 2022 subheading of the mixture or why none is decided;
the safety class and cautions. Whole GWPs are rounded half-up, the unrounded
mass-weighted sum beside them.

--output text (default) prints a report for people; --output json prints the
EvaluateMixtureResponse in protobuf JSON (protojson).

Exit code: 0 on success; 1 when the server rejects the request (an unknown or
ambiguous identifier; shares that do not sum to 100 %, with the sum named) or fails;
2 for unusable command-line input (a SPEC that is not IDENTIFIER:PERCENT pairs, a
negative --mass-kg). Flags may come before or after SPEC.

Examples:
  halovet mix R-410A
  halovet mix R-404A --mass-kg 12.5
  halovet mix R-32:50,R-125:50 --mass-kg 1000
  halovet mix --output json HCFC-22:53,HFC-152a:13,HCFC-124:34`

// parseFlagsInterleaved parses flags given before, between or after the positional
// arguments, and returns the positional ones in order ("--" ends the flags).
func parseFlagsInterleaved(fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		if err := parseFlags(fs, args); err != nil {
			return nil, err
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return pos, nil
		}
		if i := len(args) - len(rest); i > 0 && args[i-1] == "--" {
			return append(pos, rest...), nil
		}
		pos = append(pos, rest[0])
		args = rest[1:]
	}
}

// outputFlag registers --output text|json.
func reportOutputFlag(fs *flag.FlagSet) *string {
	return fs.String("output", "text", "output format: text (a report for people) or json (protobuf JSON; see above)")
}

func checkReportOutput(v string) error {
	if v != "text" && v != "json" {
		return usageErr("--output %q: use text or json", v)
	}
	return nil
}

func runLookup(ctx context.Context, args []string) error {
	fs := newFlagSet("lookup", lookupUsage)
	var cf clientFlags
	cf.register(fs)
	output := reportOutputFlag(fs)
	ids, err := parseFlagsInterleaved(fs, args)
	if err != nil {
		return err
	}
	if err := checkReportOutput(*output); err != nil {
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
			r.casOf[c.GetDesignation()] = e.GetEntry().GetSubstance().GetCasNumber()
		}
		return r, nil
	}
	best := r.resolution.GetCandidates()[0].GetDesignation()
	if r.entry, err = client.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: best}); err != nil {
		return r, rpcFailure("reading the entry "+best, err)
	}
	if r.evaluation, err = client.EvaluateMixture(ctx, &halovetv1.EvaluateMixtureRequest{
		Mixture: &halovetv1.EvaluateMixtureRequest_Blend{Blend: best}}); err != nil {
		return r, rpcFailure("evaluating "+best, err)
	}
	return r, nil
}

// lookupReport looks up each identifier and writes the report; it returns an exit code 1
// error when an identifier did not resolve to exactly one entry.
func lookupReport(ctx context.Context, conn grpc.ClientConnInterface, w io.Writer, ids []string, output string) error {
	client := halovetv1.NewCatalogueServiceClient(conn)
	var cautions, unresolved []string
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
		if output == "json" {
			err = writeLookupJSON(w, r)
		} else {
			if i > 0 {
				fmt.Fprintln(w)
			}
			err = writeLookupText(w, r)
		}
		if err != nil {
			return err
		}
	}
	if output == "text" {
		if _, err := fmt.Fprint(w, "\n"+reportFooter(cautions)); err != nil {
			return err
		}
	}
	if len(unresolved) > 0 {
		return &exitError{code: 1, err: fmt.Errorf("%d of %d identifiers did not resolve to one catalogue entry: %s",
			len(unresolved), len(ids), strings.Join(unresolved, ", "))}
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
	var err error
	if rec.Resolution, err = protojson.Marshal(r.resolution); err != nil {
		return err
	}
	if r.entry != nil {
		if rec.Entry, err = protojson.Marshal(r.entry); err != nil {
			return err
		}
		if rec.Evaluation, err = protojson.Marshal(r.evaluation); err != nil {
			return err
		}
	}
	b, err := json.Marshal(rec) // compacts the protojson text
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
		if s := r.entry.GetEntry().GetSubstance(); s != nil {
			writeSubstanceText(kv, s)
		} else if b := r.entry.GetEntry().GetBlend(); b != nil {
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
			fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\t%s\t%.2f\n", c.GetDesignation(), entryKindLabel(c.GetKind()),
				textOrDash(c.GetAnnexGroup()), matchKindLabel[c.GetMatchKind()], c.GetMatchedOn(), c.GetScore())
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
	odp := lookupNum(s.GetOdp())
	if s.GetOdpRangeHigh() > 0 {
		odp += fmt.Sprintf(" (upper end of the Annex range %s–%s, used for the Protocol's calculations)",
			lookupNum(s.GetOdpRangeLow()), lookupNum(s.GetOdpRangeHigh()))
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
		v := fmt.Sprintf("%-4s %s", g.GetGwpSet(), lookupNum(g.GetGwp100()))
		if g.GetGwpSet() == "MP" {
			v += "  (Protocol annex value)"
		}
		if g.GetSource() != "" {
			v += "  " + g.GetSource()
		}
		kv.line(key, v)
	}
	life := "— (not known)"
	if s.GetLifetimeYears() > 0 {
		life = lookupNum(s.GetLifetimeYears()) + " years"
	}
	kv.line("lifetime", life)
	kv.line("molar mass", strconv.FormatFloat(s.GetMolarMassGPerMol(), 'f', 3, 64)+" g/mol")
	for _, ed := range []struct{ key, edition string }{{"HS 2017", "HS2017"}, {"HS 2022", "HS2022"}} {
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
	kv.line("kind", "blend ("+textOrDash(b.GetBlendType())+")")
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
		fmt.Fprintf(tw, "    %s\t%s\t+%s/-%s\t%s\n", c.GetDesignation(), lookupNum(c.GetMassPercent()),
			lookupNum(c.GetTolerancePlus()), lookupNum(c.GetToleranceMinus()), textOrDash(groups[c.GetDesignation()]))
	}
	_ = tw.Flush()
	kv.raw(tb.String())
	kv.line("ODP", lookupNum(ev.GetOdp())+"  (mass-weighted)")
	kv.raw(mixtureGWPTable(ev))
	kv.raw(mixtureHSText(ev))
	kv.raw(wrapIndented("sources: "+textOrDash(b.GetSources()), "  ", 88))
}

// gwpTable writes a mixture's GWPs, one row per set, one column per convention.
func mixtureGWPTable(ev *halovetv1.EvaluateMixtureResponse) string {
	type cell struct{ all, annexF string }
	rows := map[string]*cell{}
	var order []string
	partial := false
	for _, g := range ev.GetGwps() {
		c, ok := rows[g.GetGwpSet()]
		if !ok {
			c = &cell{all: "—", annexF: "—"}
			rows[g.GetGwpSet()] = c
			order = append(order, g.GetGwpSet())
		}
		v := mixtureGWPText(g.GetGwp100())
		if !g.GetComplete() {
			v += " *"
			partial = true
		}
		switch g.GetConvention() {
		case "all-components":
			c.all = v
		case "annex-f-only":
			c.annexF = v
		}
	}
	var b strings.Builder
	b.WriteString("  GWP (100-year)\n")
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "    set\tall components\tAnnex F only (as the Protocol counts)")
	for _, set := range order {
		label := set
		if set == "MP" {
			label = "MP (Protocol annex values)"
		}
		fmt.Fprintf(tw, "    %s\t%s\t%s\n", label, rows[set].all, rows[set].annexF)
	}
	_ = tw.Flush()
	if partial {
		b.WriteString("    * partial: a component counted by this convention has no value in this set\n")
	}
	return b.String()
}

func mixtureHSText(ev *halovetv1.EvaluateMixtureResponse) string {
	code := ev.GetHs2022Subheading()
	if code == "" {
		code = "not decided (see below)"
	}
	s := fmt.Sprintf("  %-16s%s\n", "HS 2022", code)
	if ev.GetHsNote() != "" {
		s += wrapIndented(ev.GetHsNote(), "                  ", 88)
	}
	return s
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

// lookupNum writes a figure without binary floating-point noise (57.375, not
// 57.37500000000001): at most 6 decimals, trailing zeros dropped.
func lookupNum(v float64) string {
	return strconv.FormatFloat(math.Round(v*1e6)/1e6, 'f', -1, 64)
}

// gwpText writes a mixture GWP as the published tables do, rounded half-up to a whole
// number (SOURCES.md §3: R-410A 2087.5 -> 2088), with the unrounded sum beside it when
// they differ.
func mixtureGWPText(v float64) string {
	exact := math.Round(v*1000) / 1000
	whole := math.Floor(exact + 0.5)
	if exact == whole {
		return strconv.FormatFloat(whole, 'f', 0, 64)
	}
	return fmt.Sprintf("%s (%s)", strconv.FormatFloat(whole, 'f', 0, 64), strconv.FormatFloat(exact, 'f', -1, 64))
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
	st, ok := status.FromError(err)
	if !ok {
		return fmt.Errorf("%s: %w", what, err)
	}
	return fmt.Errorf("%s: the server answered %s: %s", what, st.Code(), st.Message())
}

func runMix(ctx context.Context, args []string) error {
	fs := newFlagSet("mix", mixUsage)
	var cf clientFlags
	cf.register(fs)
	output := reportOutputFlag(fs)
	massKg := fs.Float64("mass-kg", 0, "net mass of the mixture in kg; 0 gives figures per kg only")
	pos, err := parseFlagsInterleaved(fs, args)
	if err != nil {
		return err
	}
	if err := checkReportOutput(*output); err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageErr("give exactly one SPEC, e.g. R-410A or R-32:50,R-125:50 (see --help); got %d arguments", len(pos))
	}
	req, err := mixRequest(pos[0], *massKg)
	if err != nil {
		return err
	}
	conn, err := cf.dial()
	if err != nil {
		return err
	}
	defer conn.Close()
	return mixReport(ctx, conn, os.Stdout, req, *output)
}

// mixRequest builds the EvaluateMixture request of a SPEC; input it cannot use is a usage
// error (exit code 2). Whether the shares sum to 100 % is the server's to judge.
func mixRequest(spec string, massKg float64) (*halovetv1.EvaluateMixtureRequest, error) {
	if math.IsNaN(massKg) || math.IsInf(massKg, 0) || massKg < 0 {
		return nil, usageErr("--mass-kg %v: give the net mass in kg, 0 or more", massKg)
	}
	spec = strings.TrimSpace(spec)
	if spec == "" {
		return nil, usageErr("SPEC is empty: give a blend (R-410A) or shares (R-32:50,R-125:50)")
	}
	req := &halovetv1.EvaluateMixtureRequest{NetMassKg: massKg}
	if !strings.Contains(spec, ":") {
		req.Mixture = &halovetv1.EvaluateMixtureRequest_Blend{Blend: spec}
		return req, nil
	}
	// Chemical names hold commas ("1,1,1,2-tetrafluoroethane:52"), so a comma separates
	// shares only after a part that has its ":PERCENT".
	var parts []string
	pending := ""
	for _, p := range strings.Split(spec, ",") {
		if pending != "" {
			p = pending + "," + p
		}
		if strings.Contains(p, ":") {
			parts, pending = append(parts, p), ""
		} else {
			pending = p
		}
	}
	if strings.TrimSpace(pending) != "" {
		return nil, usageErr("SPEC share %q has no :MASS_PERCENT; write IDENTIFIER:PERCENT pairs such as R-32:50,R-125:50", pending)
	}
	comp := &halovetv1.Composition{}
	for i, p := range parts {
		at := strings.LastIndex(p, ":")
		id := strings.TrimSpace(p[:at])
		num := strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(p[at+1:]), "%"))
		if id == "" {
			return nil, usageErr("SPEC share %d (%q) has no identifier before the colon", i+1, p)
		}
		pct, err := strconv.ParseFloat(num, 64)
		if err != nil || math.IsNaN(pct) || math.IsInf(pct, 0) {
			return nil, usageErr("SPEC share %d (%q): %q is not a mass percentage; write a number such as 50 or 23.5", i+1, p, num)
		}
		comp.Shares = append(comp.Shares, &halovetv1.MixtureShare{Identifier: id, MassPercent: pct})
	}
	req.Mixture = &halovetv1.EvaluateMixtureRequest_Composition{Composition: comp}
	return req, nil
}

// mixReport evaluates the mixture and writes the report.
func mixReport(ctx context.Context, conn grpc.ClientConnInterface, w io.Writer, req *halovetv1.EvaluateMixtureRequest, output string) error {
	what := "the composition"
	if b, ok := req.GetMixture().(*halovetv1.EvaluateMixtureRequest_Blend); ok {
		what = b.Blend
	}
	ev, err := halovetv1.NewCatalogueServiceClient(conn).EvaluateMixture(ctx, req)
	if err != nil {
		return rpcFailure("evaluating "+what, err)
	}
	if output == "json" {
		b, err := protojson.MarshalOptions{Multiline: true}.Marshal(ev)
		if err != nil {
			return err
		}
		_, err = w.Write(append(b, '\n'))
		return err
	}
	return writeMixText(w, ev)
}

func writeMixText(w io.Writer, ev *halovetv1.EvaluateMixtureResponse) error {
	kv := &lookupLines{w: w}
	perKg := ev.GetNetMassKg() == 0
	amount := lookupNum(ev.GetNetMassKg()) + " kg"
	if perKg {
		amount = "per kg (no --mass-kg given)"
	}
	name := ev.GetDesignation()
	if name == "custom" {
		name = "(ad-hoc composition)"
	}
	kv.raw(fmt.Sprintf("Mixture %s, %s\n", name, amount))
	kv.line("safety class", safetyClassText(ev.GetSafetyClass()))
	kv.line("ODP", lookupNum(ev.GetOdp())+"  (mass-weighted)")
	if !perKg {
		kv.line("ODP tonnes", lookupNum(ev.GetOdpTonnes())+"  (each component in its own Annex group)")
		kv.line("CO2-eq tonnes", lookupNum(ev.GetCo2ETonnes())+"  (Annex F components x Annex GWP, as the Protocol counts)")
	}
	kv.raw(mixtureGWPTable(ev))
	kv.raw("  components\n")
	var tb strings.Builder
	tw := tabwriter.NewWriter(&tb, 0, 0, 2, ' ', 0)
	if perKg {
		fmt.Fprintln(tw, "    component\tmass %\tAnnex/Group\tODP\tGWP (MP)\tsafety class")
	} else {
		fmt.Fprintln(tw, "    component\tmass %\tmass kg\tAnnex/Group\tODP\tODP t\tGWP (MP)\tCO2-eq t\tsafety class")
	}
	for _, c := range ev.GetComponents() {
		if perKg {
			fmt.Fprintf(tw, "    %s\t%s\t%s\t%s\t%s\t%s\n", c.GetDesignation(), lookupNum(c.GetMassPercent()), textOrDash(c.GetAnnexGroup()),
				lookupNum(c.GetOdp()), lookupNum(c.GetGwpProtocol()), textOrDash(c.GetSafetyClass()))
		} else {
			fmt.Fprintf(tw, "    %s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", c.GetDesignation(), lookupNum(c.GetMassPercent()),
				lookupNum(c.GetMassKg()), textOrDash(c.GetAnnexGroup()), lookupNum(c.GetOdp()), lookupNum(c.GetOdpTonnes()),
				lookupNum(c.GetGwpProtocol()), lookupNum(c.GetCo2ETonnes()), textOrDash(c.GetSafetyClass()))
		}
	}
	_ = tw.Flush()
	kv.raw(tb.String())
	kv.raw(mixtureHSText(ev))
	kv.raw("\n" + reportFooter(ev.GetCautions()))
	return kv.err
}
