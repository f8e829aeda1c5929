package console

import (
	"net/http"
	"net/url"
	"strings"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

type catalogueData struct {
	Query       string
	Searched    bool
	Candidates  []*halovetv1.Candidate
	Ambiguous   bool
	Suggestions []string
	Note        string
	CanOpen     bool
}

// catalogue searches the catalogue by any identifier (designation, synonym, CAS number,
// formula, chemical name, HS code); with no match it offers the nearest names.
func (c *Console) catalogue(w http.ResponseWriter, r *http.Request, rq *request) {
	q := strings.TrimSpace(r.URL.Query().Get("q"))
	d := catalogueData{Query: q, CanOpen: c.allowed(rq, rpcGetEntry)}
	if len(q) > 200 {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Search too long", "A search is at most 200 characters; give a designation, CAS number, formula, name or HS code.")
		return
	}
	if q != "" {
		resp, err := c.catalogueClient().ResolveIdentifier(c.ctx(r, rq, rpcResolve), &halovetv1.ResolveIdentifierRequest{Identifier: q})
		if err != nil {
			c.callFailed(w, r, rq, "searching the catalogue", err)
			return
		}
		d.Searched = true
		d.Candidates, d.Ambiguous, d.Suggestions, d.Note = resp.GetCandidates(), resp.GetAmbiguous(), resp.GetSuggestions(), resp.GetNote()
	}
	c.render(w, r, rq.s, http.StatusOK, "catalogue", "Catalogue", d)
}

type entryData struct {
	Substance  *halovetv1.Substance
	Blend      *halovetv1.Blend
	Evaluation *halovetv1.EvaluateMixtureResponse
	Controlled bool
}

// entry shows one substance or blend.
func (c *Console) entry(w http.ResponseWriter, r *http.Request, rq *request) {
	des := r.PathValue("designation")
	ctx := c.ctx(r, rq, rpcGetEntry)
	resp, err := c.catalogueClient().GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: des})
	if err != nil {
		c.callFailed(w, r, rq, "reading the catalogue entry "+des, err)
		return
	}
	d := entryData{Substance: resp.GetSubstance(), Blend: resp.GetBlend()}
	// The evaluation gives the safety cautions and a blend's GWPs; it is part of reading
	// the entry (EvaluateMixture reads the same catalogue and changes nothing).
	ev, err := c.catalogueClient().EvaluateMixture(ctx, &halovetv1.EvaluateMixtureRequest{Blend: des})
	if err != nil {
		c.callFailed(w, r, rq, "evaluating "+des, err)
		return
	}
	d.Evaluation = ev
	title := des
	if d.Substance != nil {
		title = d.Substance.GetDesignation()
		d.Controlled = d.Substance.GetAnnexGroup() != ""
	} else if d.Blend != nil {
		title = d.Blend.GetDesignation()
	}
	c.render(w, r, rq.s, http.StatusOK, "entry", title, d, func(v *view) { v.Cautions = ev.GetCautions() })
}

// entryPath is the console path of a catalogue entry.
func entryPath(designation string) string {
	return "/console/catalogue/entries/" + url.PathEscape(designation)
}

func kindWord(k halovetv1.EntryKind) string {
	if k == halovetv1.EntryKind_ENTRY_KIND_BLEND {
		return "blend"
	}
	return "substance"
}

func matchWord(m halovetv1.MatchKind) string {
	return strings.ToLower(strings.ReplaceAll(strings.TrimPrefix(m.String(), "MATCH_KIND_"), "_", " "))
}

// componentAt is the i-th component's figures, nil past the end.
func componentAt(cs []*halovetv1.ComponentFigures, i int) *halovetv1.ComponentFigures {
	if i < 0 || i >= len(cs) {
		return nil
	}
	return cs[i]
}
