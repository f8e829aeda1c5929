package store

import (
	"fmt"
	"strconv"
	"strings"
	"time"
)

// Lists come a page at a time by keyset, never by offset: every list orders its rows by
// columns that end in a unique key, and a page asks for the rows after the last one of the
// page before (its page key). A row added or removed meanwhile therefore never makes a
// later page repeat or skip one of the rows that were there throughout.

// Page asks a list for the rows after the one whose page key is After (nil: from the
// first row), at most Limit of them (0: every row). A page key is what the row type's
// PageKey method gives: the row's values of the list's ordering columns, as text.
type Page struct {
	After []string
	Limit int
}

// keyCol is one ordering column of a list: its SQL name and whether it holds integers.
type keyCol struct {
	name  string
	isInt bool
}

// sql returns the condition selecting the rows after the page's key in the ascending order
// of cols (TRUE when the page starts at the first row) and the LIMIT clause (empty for
// every row), the key's values and the limit appended to args as parameters.
func (p Page) sql(args []any, cols ...keyCol) (cond, limit string, _ []any, _ error) {
	arg := func(v any) string {
		args = append(args, v)
		return "$" + strconv.Itoa(len(args))
	}
	cond = "TRUE"
	if p.After != nil {
		if len(p.After) != len(cols) {
			return "", "", nil, fmt.Errorf("page key %q has %d values; the list orders by %d columns", p.After, len(p.After), len(cols))
		}
		names := make([]string, len(cols))
		params := make([]string, len(cols))
		for i, c := range cols {
			names[i] = c.name
			if !c.isInt {
				params[i] = arg(p.After[i])
				continue
			}
			n, err := strconv.ParseInt(p.After[i], 10, 64)
			if err != nil {
				return "", "", nil, fmt.Errorf("page key %q: %s is not an integer", p.After, c.name)
			}
			params[i] = arg(n)
		}
		cond = "(" + strings.Join(names, ", ") + ") > (" + strings.Join(params, ", ") + ")"
	}
	if p.Limit > 0 {
		limit = " LIMIT " + arg(p.Limit)
	}
	return cond, limit, args, nil
}

// PageKey is the party's place in ListPartiesPage: its country code.
func (p Party) PageKey() []string { return []string{p.CountryCode} }

// PageKey is the company's place in ListCompaniesPage: its identifier.
func (c Company) PageKey() []string { return []string{c.CompanyID} }

// PageKey is the licence's place in ListLicencesPage: its number.
func (l Licence) PageKey() []string { return []string{l.Number} }

// PageKey is the entry's place in ListNationalEntriesPage: year, type, substance, key.
func (e NationalEntry) PageKey() []string {
	return []string{strconv.Itoa(e.Year), e.Type, e.Substance, e.Key}
}

// PageKey is the exemption's place in ListExemptionsPage: Party, year, scope, use, key.
func (e Exemption) PageKey() []string {
	return []string{e.CountryCode, strconv.Itoa(e.Year), e.Scope, e.Use, e.Key}
}

// PageKey is the figure's place in ListOfficialFiguresPage: Party, kind, scope, year
// (unique together).
func (f OfficialFigure) PageKey() []string {
	return []string{f.CountryCode, f.Kind, f.Scope, strconv.Itoa(f.Year)}
}

// PageKey is the entry's place in ListHFC23EntriesPage: year and facility (unique
// together).
func (e HFC23Entry) PageKey() []string { return []string{strconv.Itoa(e.Year), e.Facility} }

// PageKey is the closed year's place in ClosedYearsPage: the year.
func (c ClosedYear) PageKey() []string { return []string{strconv.Itoa(c.Year)} }

// PageKey is the event's place in LicenceHistoryPage: its id.
func (e LicenceEvent) PageKey() []string { return []string{strconv.FormatInt(e.ID, 10)} }

// PageKey is the credential's place in ListCredentialsPage (newest first): its creation
// time and its id.
func (c StoredCredential) PageKey() []string {
	return []string{c.CreatedAt.UTC().Format(time.RFC3339Nano), c.ID}
}
