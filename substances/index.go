package substances

import (
	"fmt"
	"sort"
	"strings"
)

// Building the catalogue's lookup indexes: exact names (designations, synonyms, chemical
// names), formulas and structures, CAS Registry Numbers and HS subheadings. NewCatalogue
// builds them once; Resolve reads them.

// addName records an exact name. A name may belong to one entry only.
func (c *Catalogue) addName(name string, t target, kind MatchKind) error {
	key := normalizeString(name)
	if key == "" {
		return nil
	}
	if i, ok := c.names[key]; ok {
		h := &c.hits[i]
		if h.t != t {
			return &CatalogueError{Entry: c.entryName(t), Field: "name", Reason: fmt.Sprintf("name %q is also a name of %q; every name must identify one entry", name, c.entryName(h.t))}
		}
		if matchRank(kind) < matchRank(h.res.Candidates[0].Match) {
			h.res.Candidates[0].Match = kind
			h.res.Candidates[0].Score = kind.score()
			h.res.Candidates[0].MatchedOn = name
		}
		return nil
	}
	c.names[key] = int32(len(c.hits))
	c.hits = append(c.hits, nameHit{t: t, res: Resolution{Candidates: []Candidate{c.candidate(t, kind, name)}}})
	c.suggest = append(c.suggest, suggestKey{key: key, display: name, t: t})
	return nil
}

// isFormulaSynonym reports whether a synonym is a way of writing the substance's formula.
func isFormulaSynonym(syn string, f Formula) bool {
	if f == nil {
		return false
	}
	g, err := ParseFormula(syn)
	return err == nil && g.Equal(f)
}

// indexNames records designations, synonyms and chemical names.
func (c *Catalogue) indexNames() error {
	for i := range c.subs {
		e := &c.subs[i]
		t := target{kind: KindSubstance, idx: int32(i)}
		if err := c.addName(e.s.Designation, t, MatchDesignation); err != nil {
			return err
		}
	}
	for i := range c.blends {
		t := target{kind: KindBlend, idx: int32(i)}
		if err := c.addName(c.blends[i].b.Designation, t, MatchDesignation); err != nil {
			return err
		}
	}
	for i := range c.subs {
		e := &c.subs[i]
		t := target{kind: KindSubstance, idx: int32(i)}
		for _, syn := range e.s.Synonyms {
			if isFormulaSynonym(syn, e.formula) {
				continue // indexed as a formula
			}
			if err := c.addName(syn, t, MatchSynonym); err != nil {
				return err
			}
		}
		if e.s.ChemicalName != "" {
			if err := c.addName(e.s.ChemicalName, t, MatchChemicalName); err != nil {
				return err
			}
		}
	}
	for i := range c.blends {
		t := target{kind: KindBlend, idx: int32(i)}
		for _, syn := range c.blends[i].b.Synonyms {
			if err := c.addName(syn, t, MatchSynonym); err != nil {
				return err
			}
		}
	}
	return nil
}

// indexFormulas records Hill formulas, structures and formula synonyms.
func (c *Catalogue) indexFormulas() {
	for i := range c.subs {
		e := &c.subs[i]
		if e.formula == nil {
			continue
		}
		h := e.formula.Hill()
		c.byHill[h] = append(c.byHill[h], int32(i))
	}
	// Molecular formulas: every substance with those atoms, equally.
	hills := make([]string, 0, len(c.byHill))
	for h := range c.byHill {
		hills = append(hills, h)
	}
	sort.Strings(hills)
	for _, h := range hills {
		c.hills[h] = c.addRes(c.formulaResolution(h, "", c.byHill[h]))
	}
	// Written forms: structures and formula synonyms, as written.
	type form struct {
		text string
		hill string
	}
	var forms []form
	seen := map[string]bool{}
	for i := range c.subs {
		e := &c.subs[i]
		if e.formula == nil {
			continue
		}
		h := e.formula.Hill()
		texts := []string{e.s.Formula, e.s.Structure}
		for _, syn := range e.s.Synonyms {
			if isFormulaSynonym(syn, e.formula) {
				texts = append(texts, syn)
			}
		}
		for _, t := range texts {
			t = compactFormula(t)
			if t == "" || seen[t] {
				continue
			}
			seen[t] = true
			forms = append(forms, form{t, h})
		}
	}
	for _, f := range forms {
		ids := c.byHill[f.hill]
		if isStructural(f.text) {
			c.formulas[f.text] = c.addRes(c.formulaResolution(f.hill, f.text, ids))
			if key, ok := structureKey(f.text); ok {
				c.structs[key] = c.formulas[f.text]
			}
		} else {
			c.formulas[f.text] = c.hills[f.hill]
		}
		// A formula that fits one substance is also accepted in any letter case ("co2").
		if len(ids) == 1 {
			key := normalizeString(f.text)
			if _, taken := c.names[key]; !taken {
				t := target{kind: KindSubstance, idx: ids[0]}
				c.names[key] = int32(len(c.hits))
				c.hits = append(c.hits, nameHit{t: t, res: c.res[c.formulas[f.text]]})
			}
		}
	}
}

// structureOf reports whether text is one of the written structures of substance e.
func structureOf(e *subEntry, text string) bool {
	if compactFormula(e.s.Structure) == text {
		return true
	}
	for _, syn := range e.s.Synonyms {
		if compactFormula(syn) == text && isFormulaSynonym(syn, e.formula) {
			return true
		}
	}
	return false
}

// formulaResolution ranks the substances with Hill formula h; when text is a structure,
// the substances written so rank above their isomers.
func (c *Catalogue) formulaResolution(h, text string, ids []int32) Resolution {
	var r Resolution
	for _, id := range ids {
		e := &c.subs[id]
		cand := c.candidate(target{kind: KindSubstance, idx: id}, MatchFormula, e.s.Formula)
		if text != "" && structureOf(e, text) {
			cand.Score = scoreStructure
			cand.MatchedOn = text
		}
		r.Candidates = append(r.Candidates, cand)
	}
	finishResolution(&r)
	if r.Ambiguous {
		r.Note = fmt.Sprintf("formula %s fits %d catalogue substances (isomers or isomer groups); give the designation or CAS number", h, countTop(r.Candidates))
	}
	return r
}

func (c *Catalogue) addRes(r Resolution) int32 {
	c.res = append(c.res, r)
	return int32(len(c.res) - 1)
}

// indexCAS records CAS Registry Numbers.
func (c *Catalogue) indexCAS() {
	for i := range c.subs {
		s := c.subs[i].s
		if s.CAS == "" {
			continue
		}
		r := Resolution{Candidates: []Candidate{c.candidate(target{kind: KindSubstance, idx: int32(i)}, MatchCAS, s.CAS)}}
		c.cas[s.CAS] = c.addRes(r)
	}
}

// indexHS records the HS subheadings of both editions.
func (c *Catalogue) indexHS() {
	type use struct {
		id       int32
		editions []HSEdition
	}
	codes := map[string][]use{}
	add := func(code string, id int32, ed HSEdition) {
		us := codes[code]
		for k := range us {
			if us[k].id == id {
				us[k].editions = append(us[k].editions, ed)
				return
			}
		}
		codes[code] = append(us, use{id: id, editions: []HSEdition{ed}})
	}
	for i := range c.subs {
		s := c.subs[i].s
		for _, code := range s.HS2017 {
			add(code, int32(i), HS2017)
		}
		for _, code := range s.HS2022 {
			add(code, int32(i), HS2022)
		}
	}
	keys := make([]string, 0, len(codes))
	for k := range codes {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, code := range keys {
		var r Resolution
		editions := map[HSEdition]bool{}
		for _, u := range codes[code] {
			var eds []string
			for _, ed := range u.editions {
				eds = append(eds, string(ed))
				editions[ed] = true
			}
			r.Candidates = append(r.Candidates, c.candidate(target{kind: KindSubstance, idx: u.id}, MatchHSCode, strings.Join(eds, "/")+" "+code))
		}
		finishResolution(&r)
		var notes []string
		shared := false
		for _, ed := range HSEditions() {
			if !editions[ed] {
				continue
			}
			sh, ok := LookupHS(ed, code)
			if !ok {
				shared = true
				notes = append(notes, fmt.Sprintf("%s %s", ed, code))
				continue
			}
			if sh.Shared {
				shared = true
			}
			notes = append(notes, fmt.Sprintf("%s %s %q", ed, code, sh.Text))
		}
		if shared {
			r.Ambiguous = true
		}
		note := strings.Join(notes, "; ") + ": an HS code classifies goods and does not identify a substance"
		if shared {
			note += "; this subheading also covers substances outside the catalogue"
		}
		r.Note = note + "; confirm with the designation or CAS number"
		c.hs[code] = c.addRes(r)
	}
}
