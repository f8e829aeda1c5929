package controls

import (
	"bytes"
	"cmp"
	"embed"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"
)

// Status says how well a rulebook value is backed (V verified in the treaty text, D derived, P partly verified, U unverified).
type Status string

// Statuses.
const (
	Verified   Status = "V" // the value appears in the source given
	Derived    Status = "D" // computed from verified provisions
	Partial    Status = "P" // partly sourced; the row's note says which part is not
	Unverified Status = "U" // from memory, no source found: check before relying on it
)

// Meaning spells the status out for reports.
func (s Status) Meaning() string {
	switch s {
	case Verified:
		return "verified"
	case Derived:
		return "derived from verified provisions"
	case Partial:
		return "partially verified"
	case Unverified:
		return "unverified (from memory)"
	}
	return "unknown status"
}

// RuleKind is the kind of a schedule row.
type RuleKind string

// Schedule row kinds.
const (
	// KindStep: the percent holds from FromYear until the next step.
	KindStep RuleKind = "step"
	// KindServicingCap: each year FromYear..ToYear may reach the percent, for servicing
	// only; it overrides the step in force (non-A5 HCFC 2020–2029, Art. 2F).
	KindServicingCap RuleKind = "annual-cap-servicing"
	// KindPeriodAverage: the mean over FromYear..ToYear may reach the percent; a single year
	// may exceed it (A5 HCFC 2030–2039, Art. 5 para 8 ter).
	KindPeriodAverage RuleKind = "period-average"
)

// Rule is one row of the control schedules.
type Rule struct {
	Version   string
	AsOf      string // YYYY-MM-DD
	AppliesTo string // "non-A5", "A5", "non-A5-variant", "A5-group1", "A5-group2"
	Scope     Scope
	Kind      RuleKind
	FromYear  int
	ToYear    int // 0 for a step
	Percent   float64
	Source    string // "Art. 2J para 1"
	Status    Status
	Note      string
	Line      int // line in the data file
}

// Text is the rule's source with its status, e.g. "Art. 2J para 1 [V]".
func (r Rule) Text() string { return fmt.Sprintf("%s [%s]", r.Source, r.Status) }

// Term is the kind of the term added to a baseline.
type Term string

// Baseline terms.
const (
	TermNone Term = ""
	// TermCFC adds a share of the mean Annex A Group I consumption over the same base years
	// (non-A5 HCFC baseline: 2.8 % of 1989 CFCs, Art. 2F para 1).
	TermCFC Term = "cfc"
	// TermHCFCCO2e adds a share of the Party type's HCFC baseline recomputed in CO2-eq
	// (HFC baselines, Art. 2J paras 1–2, Art. 5 para 8 qua).
	TermHCFCCO2e Term = "hcfc-co2e"
)

// BaselineRule is one row of the baseline definitions.
type BaselineRule struct {
	Version         string
	AsOf            string
	AppliesTo       string
	Scope           Scope
	FromYear        int
	ToYear          int
	CountUsed       bool   // used/recycled trade counts in the base years (A5 exception)
	CountUsedStatus Status // how well CountUsed is backed
	Term            Term
	TermPercent     float64
	Source          string
	Status          Status
	Note            string
	Line            int
}

// Text is the rule's source with its status, e.g. "Art. 2F para 1 [V]".
func (r BaselineRule) Text() string { return fmt.Sprintf("%s [%s]", r.Source, r.Status) }

// Description says the formula in words, e.g. "mean F consumption 2011–2013 + 15 % of the
// HCFC baseline recomputed in CO2-eq" (CountUsed is reported separately).
func (r BaselineRule) Description() string {
	var b strings.Builder
	if r.FromYear == r.ToYear {
		fmt.Fprintf(&b, "%s consumption %d", r.Scope, r.FromYear)
	} else {
		fmt.Fprintf(&b, "mean %s consumption %d–%d", r.Scope, r.FromYear, r.ToYear)
	}
	switch r.Term {
	case TermCFC:
		fmt.Fprintf(&b, " + %s %% of A/I (CFC) consumption over the same years", fmtPercent(r.TermPercent))
	case TermHCFCCO2e:
		fmt.Fprintf(&b, " + %s %% of the HCFC baseline recomputed in CO2-eq", fmtPercent(r.TermPercent))
	}
	return b.String()
}

func fmtPercent(p float64) string { return strconv.FormatFloat(p, 'f', -1, 64) }

// Rulebook holds the control schedules and baseline definitions of one data version.
type Rulebook struct {
	Version   string
	AsOf      string
	Rules     []Rule         // by applies_to, scope, kind, from_year
	Baselines []BaselineRule // by applies_to, scope
}

//go:embed data/schedules.csv data/baselines.csv
var dataFS embed.FS

var defaultRulebook = sync.OnceValues(func() (*Rulebook, error) {
	s, err := dataFS.ReadFile("data/schedules.csv")
	if err != nil {
		return nil, fmt.Errorf("controls: embedded schedules: %w", err)
	}
	b, err := dataFS.ReadFile("data/baselines.csv")
	if err != nil {
		return nil, fmt.Errorf("controls: embedded baselines: %w", err)
	}
	return ParseRulebook(bytes.NewReader(s), bytes.NewReader(b))
})

// DefaultRulebook returns the rulebook embedded in the binary (data/schedules.csv and
// data/baselines.csv), parsed once; each call returns a fresh copy.
func DefaultRulebook() (*Rulebook, error) {
	rb, err := defaultRulebook()
	if err != nil {
		return nil, err
	}
	cp := *rb
	cp.Rules = slices.Clone(rb.Rules)
	cp.Baselines = slices.Clone(rb.Baselines)
	return &cp, nil
}

// Columns of the data files, in order.
var (
	scheduleColumns = []string{"version", "as_of", "applies_to", "scope", "rule", "from_year", "to_year", "percent", "source", "status", "note"}
	baselineColumns = []string{"version", "as_of", "applies_to", "scope", "from_year", "to_year", "count_used", "count_used_status", "term", "term_percent", "source", "status", "note"}
)

const (
	scheduleFile = "schedules.csv"
	baselineFile = "baselines.csv"
)

// ParseRulebook reads schedule rows and baseline rows (the formats of data/schedules.csv and
// data/baselines.csv: CSV with a header row; lines starting with '#' are comments). Both
// files must carry one and the same version and as_of.
func ParseRulebook(schedules, baselines io.Reader) (*Rulebook, error) {
	rules, err := ParseSchedules(schedules)
	if err != nil {
		return nil, err
	}
	bases, err := ParseBaselines(baselines)
	if err != nil {
		return nil, err
	}
	rb := &Rulebook{Version: rules[0].Version, AsOf: rules[0].AsOf, Rules: rules, Baselines: bases}
	if bases[0].Version != rb.Version || bases[0].AsOf != rb.AsOf {
		return nil, &DataError{File: baselineFile, Line: bases[0].Line, Column: "version",
			Problem: fmt.Sprintf("version %q as of %s differs from the schedules' %q as of %s",
				bases[0].Version, bases[0].AsOf, rb.Version, rb.AsOf)}
	}
	return rb, nil
}

// table reads a CSV data file: header check, then rows with their line numbers.
func table(r io.Reader, file string, columns []string) ([][]string, []int, error) {
	cr := csv.NewReader(r)
	cr.Comment = '#'
	cr.FieldsPerRecord = -1
	var rows [][]string
	var lines []int
	header := true
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			line := 0
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				line = pe.Line
			}
			return nil, nil, &DataError{File: file, Line: line, Problem: "not valid CSV: " + err.Error()}
		}
		line, _ := cr.FieldPos(0)
		for i := range rec {
			rec[i] = strings.TrimSpace(rec[i])
		}
		if header {
			if !slices.Equal(rec, columns) {
				return nil, nil, &DataError{File: file, Line: line,
					Problem: fmt.Sprintf("header is %q; expected %q", strings.Join(rec, ","), strings.Join(columns, ","))}
			}
			header = false
			continue
		}
		if len(rec) != len(columns) {
			return nil, nil, &DataError{File: file, Line: line,
				Problem: fmt.Sprintf("has %d fields; expected %d (%s)", len(rec), len(columns), strings.Join(columns, ","))}
		}
		rows = append(rows, rec)
		lines = append(lines, line)
	}
	if header {
		return nil, nil, &DataError{File: file, Problem: "no header row"}
	}
	if len(rows) == 0 {
		return nil, nil, &DataError{File: file, Problem: "no data rows"}
	}
	return rows, lines, nil
}

// rowReader reads typed fields of one row and remembers the first problem.
type rowReader struct {
	file string
	line int
	cols []string
	row  []string
	err  error
}

func (rr *rowReader) fail(col, format string, args ...any) {
	if rr.err == nil {
		rr.err = &DataError{File: rr.file, Line: rr.line, Column: col, Problem: fmt.Sprintf(format, args...)}
	}
}

func (rr *rowReader) str(col string) string { return rr.row[slices.Index(rr.cols, col)] }

func (rr *rowReader) required(col string) string {
	v := rr.str(col)
	if v == "" {
		rr.fail(col, "is empty")
	}
	return v
}

func (rr *rowReader) year(col string, optional bool) int {
	v := rr.str(col)
	if v == "" && optional {
		return 0
	}
	y, err := strconv.Atoi(v)
	if err != nil || y < MinYear || y > MaxYear {
		rr.fail(col, "%q is not %s", v, yearAccepted)
		return 0
	}
	return y
}

func (rr *rowReader) percent(col string) float64 {
	v := rr.str(col)
	p, err := strconv.ParseFloat(v, 64)
	if err != nil || math.IsNaN(p) || p < 0 || p > 100 {
		rr.fail(col, "%q is not a percent from 0 to 100", v)
		return 0
	}
	return p
}

func (rr *rowReader) status(col string) Status {
	v := Status(rr.str(col))
	switch v {
	case Verified, Derived, Partial, Unverified:
		return v
	}
	rr.fail(col, "%q is not one of V, D, P, U", string(v))
	return ""
}

func (rr *rowReader) date(col string) string {
	v := rr.str(col)
	if _, err := time.Parse("2006-01-02", v); err != nil {
		rr.fail(col, "%q is not a date YYYY-MM-DD", v)
	}
	return v
}

func (rr *rowReader) scopeAndKey() (Scope, string) {
	sc := Scope(rr.str("scope"))
	if !sc.valid() {
		rr.fail("scope", "%q is not one of %s", string(sc), scopeAccepted)
		return "", ""
	}
	key := rr.str("applies_to")
	allowed := []string{keyNonA5, keyA5}
	if sc == ScopeF {
		allowed = []string{keyNonA5, keyNonA5Variant, keyA5Group1, keyA5Group2}
	}
	if !slices.Contains(allowed, key) {
		rr.fail("applies_to", "%q is not one of %s for scope %s", key, strings.Join(allowed, ", "), sc)
	}
	return sc, key
}

// sameVersion checks that every row carries the first row's version and as_of.
func sameVersion(file string, versions, asOfs []string, lines []int) error {
	for i := range versions {
		if versions[i] != versions[0] || asOfs[i] != asOfs[0] {
			return &DataError{File: file, Line: lines[i], Column: "version",
				Problem: fmt.Sprintf("version %q as of %s differs from the first row's %q as of %s",
					versions[i], asOfs[i], versions[0], asOfs[0])}
		}
	}
	return nil
}

// ParseSchedules reads schedule rows in the format of data/schedules.csv.
func ParseSchedules(r io.Reader) ([]Rule, error) {
	rows, lines, err := table(r, scheduleFile, scheduleColumns)
	if err != nil {
		return nil, err
	}
	var out []Rule
	var versions, asOfs []string
	for i, row := range rows {
		rr := &rowReader{file: scheduleFile, line: lines[i], cols: scheduleColumns, row: row}
		var ru Rule
		ru.Line = lines[i]
		ru.Version = rr.required("version")
		ru.AsOf = rr.date("as_of")
		ru.Scope, ru.AppliesTo = rr.scopeAndKey()
		ru.Kind = RuleKind(rr.str("rule"))
		switch ru.Kind {
		case KindStep, KindServicingCap, KindPeriodAverage:
		default:
			rr.fail("rule", "%q is not one of step, annual-cap-servicing, period-average", string(ru.Kind))
		}
		ru.FromYear = rr.year("from_year", false)
		ru.ToYear = rr.year("to_year", true)
		if rr.err == nil {
			switch {
			case ru.Kind == KindStep && ru.ToYear != 0:
				rr.fail("to_year", "must be empty for a step (a step holds until the next one)")
			case ru.Kind != KindStep && ru.ToYear == 0:
				rr.fail("to_year", "is required for %s", ru.Kind)
			case ru.Kind != KindStep && ru.ToYear < ru.FromYear:
				rr.fail("to_year", "%d is before from_year %d", ru.ToYear, ru.FromYear)
			}
		}
		ru.Percent = rr.percent("percent")
		ru.Source = rr.required("source")
		ru.Status = rr.status("status")
		ru.Note = rr.str("note")
		if rr.err != nil {
			return nil, rr.err
		}
		out = append(out, ru)
		versions = append(versions, ru.Version)
		asOfs = append(asOfs, ru.AsOf)
	}
	if err := sameVersion(scheduleFile, versions, asOfs, lines); err != nil {
		return nil, err
	}
	slices.SortStableFunc(out, func(a, b Rule) int {
		return cmp.Or(cmp.Compare(a.AppliesTo, b.AppliesTo), cmp.Compare(a.Scope, b.Scope),
			cmp.Compare(a.Kind, b.Kind), cmp.Compare(a.FromYear, b.FromYear))
	})
	// A step per (applies_to, scope, from_year) at most; tail rules of one kind must not
	// overlap for the same applies_to and scope.
	for i := 1; i < len(out); i++ {
		a, b := out[i-1], out[i]
		if a.AppliesTo != b.AppliesTo || a.Scope != b.Scope || a.Kind != b.Kind {
			continue
		}
		if b.Kind == KindStep && a.FromYear == b.FromYear {
			return nil, &DataError{File: scheduleFile, Line: b.Line, Column: "from_year",
				Problem: fmt.Sprintf("second step for %s %s from %d (first on line %d)", b.AppliesTo, b.Scope, b.FromYear, a.Line)}
		}
		if b.Kind != KindStep && b.FromYear <= a.ToYear {
			return nil, &DataError{File: scheduleFile, Line: b.Line, Column: "from_year",
				Problem: fmt.Sprintf("%s %s %s %d–%d overlaps the row on line %d", b.AppliesTo, b.Scope, b.Kind, b.FromYear, b.ToYear, a.Line)}
		}
	}
	return out, nil
}

// ParseBaselines reads baseline rows in the format of data/baselines.csv.
func ParseBaselines(r io.Reader) ([]BaselineRule, error) {
	rows, lines, err := table(r, baselineFile, baselineColumns)
	if err != nil {
		return nil, err
	}
	var out []BaselineRule
	var versions, asOfs []string
	for i, row := range rows {
		rr := &rowReader{file: baselineFile, line: lines[i], cols: baselineColumns, row: row}
		var br BaselineRule
		br.Line = lines[i]
		br.Version = rr.required("version")
		br.AsOf = rr.date("as_of")
		br.Scope, br.AppliesTo = rr.scopeAndKey()
		br.FromYear = rr.year("from_year", false)
		br.ToYear = rr.year("to_year", false)
		if rr.err == nil && br.ToYear < br.FromYear {
			rr.fail("to_year", "%d is before from_year %d", br.ToYear, br.FromYear)
		}
		switch v := rr.str("count_used"); v {
		case "yes":
			br.CountUsed = true
		case "no":
		default:
			rr.fail("count_used", "%q is not yes or no", v)
		}
		br.CountUsedStatus = rr.status("count_used_status")
		br.Term = Term(rr.str("term"))
		switch br.Term {
		case TermNone:
			if v := rr.str("term_percent"); v != "" {
				rr.fail("term_percent", "must be empty when term is empty (is %q)", v)
			}
		case TermCFC, TermHCFCCO2e:
			want := ScopeCI
			if br.Term == TermHCFCCO2e {
				want = ScopeF
			}
			if br.Scope != want && rr.err == nil {
				rr.fail("term", "%s applies to scope %s only, not %s", br.Term, want, br.Scope)
			}
			br.TermPercent = rr.percent("term_percent")
			if br.TermPercent == 0 {
				rr.fail("term_percent", "must be above 0 when a term is named")
			}
		default:
			rr.fail("term", "%q is not empty, cfc or hcfc-co2e", string(br.Term))
		}
		br.Source = rr.required("source")
		br.Status = rr.status("status")
		br.Note = rr.str("note")
		if rr.err != nil {
			return nil, rr.err
		}
		out = append(out, br)
		versions = append(versions, br.Version)
		asOfs = append(asOfs, br.AsOf)
	}
	if err := sameVersion(baselineFile, versions, asOfs, lines); err != nil {
		return nil, err
	}
	slices.SortStableFunc(out, func(a, b BaselineRule) int {
		return cmp.Or(cmp.Compare(a.AppliesTo, b.AppliesTo), cmp.Compare(a.Scope, b.Scope))
	})
	for i := 1; i < len(out); i++ {
		if out[i].AppliesTo == out[i-1].AppliesTo && out[i].Scope == out[i-1].Scope {
			return nil, &DataError{File: baselineFile, Line: out[i].Line, Column: "scope",
				Problem: fmt.Sprintf("second baseline for %s %s (first on line %d)", out[i].AppliesTo, out[i].Scope, out[i-1].Line)}
		}
	}
	return out, nil
}

// Allowance is what the schedules say for one Party, scope and year.
type Allowance struct {
	Year      int
	Step      Rule  // the step in force
	Servicing *Rule // an annual servicing cap covering the year, if any
	Average   *Rule // a period-average rule covering the year, if any
}

// Percent is the percent of baseline a single year is measured against: the servicing cap
// when one applies, else the period average when one applies, else the step.
func (a Allowance) Percent() float64 {
	switch {
	case a.Servicing != nil:
		return a.Servicing.Percent
	case a.Average != nil:
		return a.Average.Percent
	}
	return a.Step.Percent
}

// Allowance looks up the rules in force for a Party, scope and year. It returns an error
// wrapping ErrNoRule when no step is in force yet (e.g. before the first control measure).
func (rb *Rulebook) Allowance(party Party, scope Scope, year int) (Allowance, error) {
	if err := scope.check("scope"); err != nil {
		return Allowance{}, err
	}
	if err := checkYear("year", year); err != nil {
		return Allowance{}, err
	}
	key, err := party.key(scope)
	if err != nil {
		return Allowance{}, err
	}
	a := Allowance{Year: year}
	found := false
	for i := range rb.Rules {
		r := &rb.Rules[i]
		if r.AppliesTo != key || r.Scope != scope || r.FromYear > year {
			continue
		}
		switch r.Kind {
		case KindStep:
			if !found || r.FromYear > a.Step.FromYear {
				a.Step, found = *r, true
			}
		case KindServicingCap:
			if year <= r.ToYear {
				c := *r
				a.Servicing = &c
			}
		case KindPeriodAverage:
			if year <= r.ToYear {
				c := *r
				a.Average = &c
			}
		}
	}
	if !found {
		return Allowance{}, fmt.Errorf("%w: rulebook %s has no control step for %s %s in %d",
			ErrNoRule, rb.Version, key, scope.label(), year)
	}
	return a, nil
}

// BaselineRule returns the baseline definition for a Party and scope; the error wraps
// ErrNoRule when there is none (C/II and C/III need none: their limit is 0 from the start).
func (rb *Rulebook) BaselineRule(party Party, scope Scope) (BaselineRule, error) {
	if err := scope.check("scope"); err != nil {
		return BaselineRule{}, err
	}
	key, err := party.key(scope)
	if err != nil {
		return BaselineRule{}, err
	}
	return rb.baselineRule(key, scope)
}

func (rb *Rulebook) baselineRule(key string, scope Scope) (BaselineRule, error) {
	for _, b := range rb.Baselines {
		if b.AppliesTo == key && b.Scope == scope {
			return b, nil
		}
	}
	return BaselineRule{}, fmt.Errorf("%w: rulebook %s has no baseline for %s %s", ErrNoRule, rb.Version, key, scope.label())
}
