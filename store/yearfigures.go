package store

import (
	"context"

	"github.com/jackc/pgx/v5"
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
	Amount      float64
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
	Value       float64
	Unit        string
	Source      string
}

// PutExemptions stores exemptions in one transaction (replaced by key), each in the audit
// log; a value the schema refuses fails the whole call with ErrConflict.
func (s *Store) PutExemptions(ctx context.Context, es []Exemption) error {
	if len(es) == 0 {
		return nil
	}
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		keys := make([]string, len(es))
		years := make([]int, len(es))
		for i, x := range es {
			keys[i], years[i] = x.Key, x.Year
		}
		if err := refuseClosedYears(ctx, tx, "authorised_exemptions", "exemption_key", keys, years); err != nil {
			return err
		}
		for _, e := range es {
			_, err := tx.Exec(ctx, `INSERT INTO authorised_exemptions (exemption_key, country_code, year, annex_scope, use_kind, amount, unit, source, note)
			    VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9)
			    ON CONFLICT (exemption_key) DO UPDATE SET country_code = EXCLUDED.country_code, year = EXCLUDED.year,
			      annex_scope = EXCLUDED.annex_scope, use_kind = EXCLUDED.use_kind, amount = EXCLUDED.amount, unit = EXCLUDED.unit,
			      source = EXCLUDED.source, note = EXCLUDED.note, updated_at = now()`,
				e.Key, e.CountryCode, e.Year, e.Scope, e.Use, e.Amount, e.Unit, e.Source, e.Note)
			if err != nil {
				return classify(err, "exemption", e.Key)
			}
			if err := audit(ctx, tx, "put", "exemption", e.Key, "", e); err != nil {
				return err
			}
		}
		return nil
	})
}

// ListExemptions returns the exemptions of one year (every year when year is 0) by Party,
// year, scope, use and key.
func (s *Store) ListExemptions(ctx context.Context, year int) ([]Exemption, error) {
	return s.ListExemptionsPage(ctx, year, Page{})
}

// ListExemptionsPage returns one page of ListExemptions.
func (s *Store) ListExemptionsPage(ctx context.Context, year int, p Page) (_ []Exemption, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql([]any{year}, keyCol{name: "country_code"}, keyCol{"year", true}, keyCol{name: "annex_scope"},
		keyCol{name: "use_kind"}, keyCol{name: "exemption_key"})
	if err != nil {
		return nil, err
	}
	rows, err := s.pool.Query(ctx, `SELECT exemption_key, country_code, year, annex_scope, use_kind, amount::float8, unit, source, note
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
	if len(fs) == 0 {
		return nil
	}
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		keys := make([]string, len(fs))
		years := make([]int, len(fs))
		for i, x := range fs {
			keys[i], years[i] = x.Key, x.Year
		}
		if err := refuseClosedYears(ctx, tx, "official_figures", "figure_key", keys, years); err != nil {
			return err
		}
		for _, f := range fs {
			_, err := tx.Exec(ctx, `INSERT INTO official_figures (figure_key, country_code, kind, annex_scope, year, value, unit, source)
			    VALUES ($1, $2, $3, $4, $5, $6, $7, $8)
			    ON CONFLICT (figure_key) DO UPDATE SET country_code = EXCLUDED.country_code, kind = EXCLUDED.kind,
			      annex_scope = EXCLUDED.annex_scope, year = EXCLUDED.year, value = EXCLUDED.value, unit = EXCLUDED.unit,
			      source = EXCLUDED.source, updated_at = now()`,
				f.Key, f.CountryCode, f.Kind, f.Scope, f.Year, f.Value, f.Unit, f.Source)
			if err != nil {
				return classify(err, "official figure", f.Key)
			}
			if err := audit(ctx, tx, "put", "official_figure", f.Key, "", f); err != nil {
				return err
			}
		}
		return nil
	})
}

// ListOfficialFigures returns every official figure by Party, kind, scope and year.
func (s *Store) ListOfficialFigures(ctx context.Context) ([]OfficialFigure, error) {
	return s.ListOfficialFiguresPage(ctx, Page{})
}

// ListOfficialFiguresPage returns one page of ListOfficialFigures.
func (s *Store) ListOfficialFiguresPage(ctx context.Context, p Page) (_ []OfficialFigure, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql(nil, keyCol{name: "country_code"}, keyCol{name: "kind"}, keyCol{name: "annex_scope"}, keyCol{"year", true})
	if err != nil {
		return nil, err
	}
	rows, err := s.pool.Query(ctx, `SELECT figure_key, country_code, kind, annex_scope, year, value::float8, unit, source
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
	Generated    float64
	CapturedUsed float64 // captured for use or feedstock
	Destroyed    float64
	Emitted      float64
	Note         string
}

// PutHFC23Entries stores facility entries in one transaction (replaced by key), each in the
// audit log. A second entry for the same facility and year under another key fails the
// whole call with ErrConflict.
func (s *Store) PutHFC23Entries(ctx context.Context, es []HFC23Entry) error {
	if len(es) == 0 {
		return nil
	}
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		keys := make([]string, len(es))
		years := make([]int, len(es))
		for i, x := range es {
			keys[i], years[i] = x.Key, x.Year
		}
		if err := refuseClosedYears(ctx, tx, "hfc23_facility_entries", "entry_key", keys, years); err != nil {
			return err
		}
		for _, e := range es {
			_, err := tx.Exec(ctx, `INSERT INTO hfc23_facility_entries (entry_key, facility, year, generated_tonnes, captured_used_tonnes,
			      destroyed_tonnes, emitted_tonnes, note)
			    VALUES ($1, $2, $3, $4, $5, $6, $7, $8)
			    ON CONFLICT (entry_key) DO UPDATE SET facility = EXCLUDED.facility, year = EXCLUDED.year,
			      generated_tonnes = EXCLUDED.generated_tonnes, captured_used_tonnes = EXCLUDED.captured_used_tonnes,
			      destroyed_tonnes = EXCLUDED.destroyed_tonnes, emitted_tonnes = EXCLUDED.emitted_tonnes, note = EXCLUDED.note,
			      updated_at = now()`,
				e.Key, e.Facility, e.Year, e.Generated, e.CapturedUsed, e.Destroyed, e.Emitted, e.Note)
			if err != nil {
				return classify(err, "HFC-23 facility entry", e.Key)
			}
			if err := audit(ctx, tx, "put", "hfc23_facility_entry", e.Key, "", e); err != nil {
				return err
			}
		}
		return nil
	})
}

// ListHFC23Entries returns the facility entries of one year (every year when year is 0), by
// year, facility.
func (s *Store) ListHFC23Entries(ctx context.Context, year int) ([]HFC23Entry, error) {
	return s.ListHFC23EntriesPage(ctx, year, Page{})
}

// ListHFC23EntriesPage returns one page of ListHFC23Entries.
func (s *Store) ListHFC23EntriesPage(ctx context.Context, year int, p Page) (_ []HFC23Entry, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql([]any{year}, keyCol{"year", true}, keyCol{name: "facility"})
	if err != nil {
		return nil, err
	}
	rows, err := s.pool.Query(ctx, `SELECT entry_key, facility, year, generated_tonnes::float8, captured_used_tonnes::float8,
	        destroyed_tonnes::float8, emitted_tonnes::float8, note
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
	Tonnes    float64
	Source    string
}

// PutPartnerExports stores partner reports in one transaction (replaced by key), each in
// the audit log.
func (s *Store) PutPartnerExports(ctx context.Context, rs []PartnerExport) error {
	if len(rs) == 0 {
		return nil
	}
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		for _, r := range rs {
			_, err := tx.Exec(ctx, `INSERT INTO partner_export_reports (report_key, year, partner, substance, metric_tonnes, source)
			    VALUES ($1, $2, $3, $4, $5, $6)
			    ON CONFLICT (report_key) DO UPDATE SET year = EXCLUDED.year, partner = EXCLUDED.partner,
			      substance = EXCLUDED.substance, metric_tonnes = EXCLUDED.metric_tonnes, source = EXCLUDED.source,
			      updated_at = now()`, r.Key, r.Year, r.Partner, r.Substance, r.Tonnes, r.Source)
			if err != nil {
				return classify(err, "partner export report", r.Key)
			}
			if err := audit(ctx, tx, "put", "partner_export_report", r.Key, "", r); err != nil {
				return err
			}
		}
		return nil
	})
}

// ListPartnerExports returns the partner reports of one year by partner, substance, key.
func (s *Store) ListPartnerExports(ctx context.Context, year int) (_ []PartnerExport, err error) {
	defer classifyInto(&err)
	rows, err := s.pool.Query(ctx, `SELECT report_key, year, partner, substance, metric_tonnes::float8, source
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
