package store

import (
	"context"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/exact"
)

// Figures of the reporting year set outside the register's arithmetic: authorised
// exemptions and official baselines and limits (migration 9).

// Exemption is one authorised exemption of one Party, scope and year.
type Exemption struct {
	Key         string
	CountryCode string
	Year        int
	Scope       string // Annex group or "F"
	Use         string // essential, critical, laboratory, high-ambient-temperature
	Amount      exact.Decimal
	Unit        string // "ODP t" or "CO2-eq t"
	Source      string
	Note        string
}

// OfficialFigure is a baseline (Year 0) or a year's limit as officially set.
type OfficialFigure struct {
	Key         string
	CountryCode string
	Kind        string // "baseline" or "limit"
	Scope       string
	Year        int
	Value       exact.Decimal
	Unit        string
	Source      string
}

// PutExemptions stores exemptions in one transaction (replaced by key), each in the audit
// log; a value the schema refuses fails the whole call with ErrConflict.
func (s *Store) PutExemptions(ctx context.Context, es []Exemption) error {
	return putByKey(ctx, s, es, keyedWrite[Exemption]{
		table: "authorised_exemptions", keyCol: "exemption_key", what: "exemption", auditKind: "exemption",
		sql: `INSERT INTO authorised_exemptions (exemption_key, country_code, year, annex_scope, use_kind, amount, unit, source, note)
		    VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9)
		    ON CONFLICT (exemption_key) DO UPDATE SET country_code = EXCLUDED.country_code, year = EXCLUDED.year,
		      annex_scope = EXCLUDED.annex_scope, use_kind = EXCLUDED.use_kind, amount = EXCLUDED.amount, unit = EXCLUDED.unit,
		      source = EXCLUDED.source, note = EXCLUDED.note, updated_at = now()`,
		key: func(e Exemption) (string, int) { return e.Key, e.Year },
		args: func(e Exemption) []any {
			return []any{e.Key, e.CountryCode, e.Year, e.Scope, e.Use, e.Amount, e.Unit, e.Source, e.Note}
		},
	})
}

// ListExemptions returns the exemptions of one year (every year when year is 0) by Party,
// year, scope, use and key.
func (s *Store) ListExemptions(ctx context.Context, year int) ([]Exemption, error) {
	return s.reader().ListExemptionsPage(ctx, year, Page{})
}

// ListExemptionsPage returns one page of ListExemptions.
func (s *Store) ListExemptionsPage(ctx context.Context, year int, p Page) ([]Exemption, error) {
	return s.reader().ListExemptionsPage(ctx, year, p)
}

// ListExemptions is Store.ListExemptions within the reader's transaction, if any.
func (r Reader) ListExemptions(ctx context.Context, year int) ([]Exemption, error) {
	return r.ListExemptionsPage(ctx, year, Page{})
}

// ListExemptionsPage is Store.ListExemptionsPage within the reader's transaction, if any.
func (r Reader) ListExemptionsPage(ctx context.Context, year int, p Page) (_ []Exemption, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql([]any{year}, keyCol{name: "country_code"}, keyCol{"year", true}, keyCol{name: "annex_scope"},
		keyCol{name: "use_kind"}, keyCol{name: "exemption_key"})
	if err != nil {
		return nil, err
	}
	rows, err := r.q.Query(ctx, `SELECT exemption_key, country_code, year, annex_scope, use_kind, amount, unit, source, note
	    FROM authorised_exemptions WHERE ($1 = 0 OR year = $1) AND `+cond+`
	    ORDER BY country_code, year, annex_scope, use_kind, exemption_key`+limit, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []Exemption
	for rows.Next() {
		var e Exemption
		if err := rows.Scan(&e.Key, &e.CountryCode, &e.Year, &e.Scope, &e.Use, &e.Amount, &e.Unit, &e.Source, &e.Note); err != nil {
			return nil, err
		}
		out = append(out, e)
	}
	return out, rows.Err()
}

// PutOfficialFigures stores official figures in one transaction (replaced by key), each in
// the audit log. A second figure for the same Party, kind, scope and year under another key
// fails the whole call with ErrConflict.
func (s *Store) PutOfficialFigures(ctx context.Context, fs []OfficialFigure) error {
	return putByKey(ctx, s, fs, keyedWrite[OfficialFigure]{
		table: "official_figures", keyCol: "figure_key", what: "official figure", auditKind: "official_figure",
		sql: `INSERT INTO official_figures (figure_key, country_code, kind, annex_scope, year, value, unit, source)
		    VALUES ($1, $2, $3, $4, $5, $6, $7, $8)
		    ON CONFLICT (figure_key) DO UPDATE SET country_code = EXCLUDED.country_code, kind = EXCLUDED.kind,
		      annex_scope = EXCLUDED.annex_scope, year = EXCLUDED.year, value = EXCLUDED.value, unit = EXCLUDED.unit,
		      source = EXCLUDED.source, updated_at = now()`,
		key: func(f OfficialFigure) (string, int) { return f.Key, f.Year },
		args: func(f OfficialFigure) []any {
			return []any{f.Key, f.CountryCode, f.Kind, f.Scope, f.Year, f.Value, f.Unit, f.Source}
		},
	})
}

// ListOfficialFigures returns every official figure by Party, kind, scope and year.
func (s *Store) ListOfficialFigures(ctx context.Context) ([]OfficialFigure, error) {
	return s.reader().ListOfficialFiguresPage(ctx, Page{})
}

// ListOfficialFiguresPage returns one page of ListOfficialFigures.
func (s *Store) ListOfficialFiguresPage(ctx context.Context, p Page) ([]OfficialFigure, error) {
	return s.reader().ListOfficialFiguresPage(ctx, p)
}

// ListOfficialFigures is Store.ListOfficialFigures within the reader's transaction, if any.
func (r Reader) ListOfficialFigures(ctx context.Context) ([]OfficialFigure, error) {
	return r.ListOfficialFiguresPage(ctx, Page{})
}

// ListOfficialFiguresPage is Store.ListOfficialFiguresPage within the reader's
// transaction, if any.
func (r Reader) ListOfficialFiguresPage(ctx context.Context, p Page) (_ []OfficialFigure, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql(nil, keyCol{name: "country_code"}, keyCol{name: "kind"}, keyCol{name: "annex_scope"}, keyCol{"year", true})
	if err != nil {
		return nil, err
	}
	rows, err := r.q.Query(ctx, `SELECT figure_key, country_code, kind, annex_scope, year, value, unit, source
	    FROM official_figures WHERE `+cond+` ORDER BY country_code, kind, annex_scope, year`+limit, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []OfficialFigure
	for rows.Next() {
		var f OfficialFigure
		if err := rows.Scan(&f.Key, &f.CountryCode, &f.Kind, &f.Scope, &f.Year, &f.Value, &f.Unit, &f.Source); err != nil {
			return nil, err
		}
		out = append(out, f)
	}
	return out, rows.Err()
}

// HFC23Entry is one facility's HFC-23 by-product in one year, metric tonnes (Art. 2J
// paras 6-7; Art. 3 para 1(d); Art. 7 para 3 ter): reported beside Annex F consumption,
// never part of it.
type HFC23Entry struct {
	Key          string
	Facility     string
	Year         int
	Generated    exact.Decimal
	CapturedUsed exact.Decimal // captured for use or feedstock
	Destroyed    exact.Decimal
	Emitted      exact.Decimal
	Note         string
}

// PutHFC23Entries stores facility entries in one transaction (replaced by key), each in the
// audit log. A second entry for the same facility and year under another key fails the
// whole call with ErrConflict.
func (s *Store) PutHFC23Entries(ctx context.Context, es []HFC23Entry) error {
	return putByKey(ctx, s, es, keyedWrite[HFC23Entry]{
		table: "hfc23_facility_entries", keyCol: "entry_key", what: "HFC-23 facility entry", auditKind: "hfc23_facility_entry",
		sql: `INSERT INTO hfc23_facility_entries (entry_key, facility, year, generated_tonnes, captured_used_tonnes,
		      destroyed_tonnes, emitted_tonnes, note)
		    VALUES ($1, $2, $3, $4, $5, $6, $7, $8)
		    ON CONFLICT (entry_key) DO UPDATE SET facility = EXCLUDED.facility, year = EXCLUDED.year,
		      generated_tonnes = EXCLUDED.generated_tonnes, captured_used_tonnes = EXCLUDED.captured_used_tonnes,
		      destroyed_tonnes = EXCLUDED.destroyed_tonnes, emitted_tonnes = EXCLUDED.emitted_tonnes, note = EXCLUDED.note,
		      updated_at = now()`,
		key: func(e HFC23Entry) (string, int) { return e.Key, e.Year },
		args: func(e HFC23Entry) []any {
			return []any{e.Key, e.Facility, e.Year, e.Generated, e.CapturedUsed, e.Destroyed, e.Emitted, e.Note}
		},
	})
}

// ListHFC23Entries returns the facility entries of one year (every year when year is 0), by
// year, facility.
func (s *Store) ListHFC23Entries(ctx context.Context, year int) ([]HFC23Entry, error) {
	return s.reader().ListHFC23EntriesPage(ctx, year, Page{})
}

// ListHFC23EntriesPage returns one page of ListHFC23Entries.
func (s *Store) ListHFC23EntriesPage(ctx context.Context, year int, p Page) ([]HFC23Entry, error) {
	return s.reader().ListHFC23EntriesPage(ctx, year, p)
}

// ListHFC23Entries is Store.ListHFC23Entries within the reader's transaction, if any.
func (r Reader) ListHFC23Entries(ctx context.Context, year int) ([]HFC23Entry, error) {
	return r.ListHFC23EntriesPage(ctx, year, Page{})
}

// ListHFC23EntriesPage is Store.ListHFC23EntriesPage within the reader's transaction, if
// any.
func (r Reader) ListHFC23EntriesPage(ctx context.Context, year int, p Page) (_ []HFC23Entry, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql([]any{year}, keyCol{"year", true}, keyCol{name: "facility"})
	if err != nil {
		return nil, err
	}
	rows, err := r.q.Query(ctx, `SELECT entry_key, facility, year, generated_tonnes, captured_used_tonnes,
	        destroyed_tonnes, emitted_tonnes, note
	    FROM hfc23_facility_entries WHERE ($1 = 0 OR year = $1) AND `+cond+` ORDER BY year, facility`+limit, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []HFC23Entry
	for rows.Next() {
		var e HFC23Entry
		if err := rows.Scan(&e.Key, &e.Facility, &e.Year, &e.Generated, &e.CapturedUsed, &e.Destroyed, &e.Emitted, &e.Note); err != nil {
			return nil, err
		}
		out = append(out, e)
	}
	return out, rows.Err()
}

// PartnerExport is what a partner reports as exported to the reporting Party.
type PartnerExport struct {
	Key       string
	Year      int
	Partner   string
	Substance string
	Tonnes    exact.Decimal
	Source    string
}

// PutPartnerExports stores partner reports in one transaction (replaced by key), each in
// the audit log.
func (s *Store) PutPartnerExports(ctx context.Context, rs []PartnerExport) error {
	return putByKey(ctx, s, rs, keyedWrite[PartnerExport]{
		what: "partner export report", auditKind: "partner_export_report", // partners' figures: no closed-year check
		sql: `INSERT INTO partner_export_reports (report_key, year, partner, substance, metric_tonnes, source)
		    VALUES ($1, $2, $3, $4, $5, $6)
		    ON CONFLICT (report_key) DO UPDATE SET year = EXCLUDED.year, partner = EXCLUDED.partner,
		      substance = EXCLUDED.substance, metric_tonnes = EXCLUDED.metric_tonnes, source = EXCLUDED.source,
		      updated_at = now()`,
		key:  func(r PartnerExport) (string, int) { return r.Key, r.Year },
		args: func(r PartnerExport) []any { return []any{r.Key, r.Year, r.Partner, r.Substance, r.Tonnes, r.Source} },
	})
}

// ListPartnerExports returns the partner reports of one year by partner, substance, key.
func (s *Store) ListPartnerExports(ctx context.Context, year int) (_ []PartnerExport, err error) {
	return s.reader().ListPartnerExports(ctx, year)
}

// ListPartnerExports is Store.ListPartnerExports within the reader's transaction, if any.
func (r Reader) ListPartnerExports(ctx context.Context, year int) (_ []PartnerExport, err error) {
	defer classifyInto(&err)
	rows, err := r.q.Query(ctx, `SELECT report_key, year, partner, substance, metric_tonnes, source
	    FROM partner_export_reports WHERE year = $1 ORDER BY partner, substance, report_key`, year)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []PartnerExport
	for rows.Next() {
		var r PartnerExport
		if err := rows.Scan(&r.Key, &r.Year, &r.Partner, &r.Substance, &r.Tonnes, &r.Source); err != nil {
			return nil, err
		}
		out = append(out, r)
	}
	return out, rows.Err()
}

// refuseClosedYears takes the shared lock of each year written, and of each year the
// replaced rows (same keys in table) were in, and refuses the write with a
// *YearClosedError when one of them is closed: a closed year's figures do not change
// until it is reopened, so its report stays the same bytes.
func refuseClosedYears(ctx context.Context, tx pgx.Tx, table, keyCol string, keys []string, years []int) error {
	rows, err := tx.Query(ctx, `SELECT year FROM `+table+` WHERE `+keyCol+` = ANY($1) AND year <> 0`, keys)
	if err != nil {
		return err
	}
	for rows.Next() {
		var y int
		if err := rows.Scan(&y); err != nil {
			rows.Close()
			return err
		}
		years = append(years, y)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	var ys []int
	for _, y := range years {
		if y != 0 {
			ys = append(ys, y)
		}
	}
	closed, err := lockYears(ctx, tx, ys)
	if err != nil {
		return err
	}
	for _, y := range uniqueInts(ys) {
		if c, ok := closed[y]; ok {
			return &YearClosedError{c}
		}
	}
	return nil
}

// keyedWrite says how figures of one kind are stored: an upsert by the caller's key,
// refused for a closed year when table is set, audited one by one.
type keyedWrite[T any] struct {
	table, keyCol   string // for the closed-year check; "" skips it
	what, auditKind string // for error messages and the audit log
	sql             string
	key             func(T) (key string, year int)
	args            func(T) []any
}

// putByKey stores items in one transaction, each in the audit log; a value the schema
// refuses fails the whole call (classified: ErrConflict, ErrAlreadyExists, ...).
func putByKey[T any](ctx context.Context, s *Store, items []T, w keyedWrite[T]) error {
	if len(items) == 0 {
		return nil
	}
	// READ COMMITTED: upserts by key (ON CONFLICT), so two callers storing the same key at
	// once cannot both insert; the closed-year check locks the years it reads.
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		if w.table != "" {
			keys := make([]string, len(items))
			years := make([]int, len(items))
			for i, x := range items {
				keys[i], years[i] = w.key(x)
			}
			if err := refuseClosedYears(ctx, tx, w.table, w.keyCol, keys, years); err != nil {
				return err
			}
		}
		for _, x := range items {
			key, _ := w.key(x)
			if _, err := tx.Exec(ctx, w.sql, w.args(x)...); err != nil {
				return classify(err, w.what, key)
			}
			if err := audit(ctx, tx, "put", w.auditKind, key, "", x); err != nil {
				return err
			}
		}
		return nil
	})
}
