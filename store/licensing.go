package store

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
)

// Party is one country's settings.
type Party struct {
	CountryCode    string
	Name           string
	PartyType      string // "article-5", "non-article-5", "non-party"
	HFCGroup       string // "a5-group-1", "a5-group-2", "non-a5", "non-a5-variant", ""
	ReportingParty bool
	BoundFrom      map[string]string // Annex group -> ISO date
}

// Company is a registered trader.
type Company struct {
	CompanyID   string
	Name        string
	CountryCode string
}

// QuotaLine is one quota of a licence; amounts in the line's unit.
type QuotaLine struct {
	LineNumber int
	AnnexGroup string
	Substance  string
	Unit       string   // "metric-t", "odp-t", "co2e-t"
	Purposes   []string // the declared purposes the line serves (wire names); empty: every purpose
	Allocated  float64
	Drawn      float64
}

// Licence is an import/export licence with its quota lines.
type Licence struct {
	Number          string
	CompanyID       string
	Directions      []string
	ValidFrom       time.Time
	ValidTo         time.Time
	Status          string // "draft", "active", "suspended", "revoked"
	SpecialPurposes []string
	QuotaLines      []QuotaLine
}

// PutParty creates or replaces a country's settings.
func (s *Store) PutParty(ctx context.Context, p Party) error {
	bound, err := json.Marshal(nonNilMap(p.BoundFrom))
	if err != nil {
		return err
	}
	// SERIALIZABLE: two calls naming different reporting Parties at once would each clear
	// the flag of rows the other had not written yet, and one would then fail on the
	// one-reporting-Party index as if its own party existed; serialised, the loser is
	// retried and takes the role from the winner.
	return s.inTx(ctx, serializable, func(tx pgx.Tx) error {
		if p.ReportingParty {
			// Only one reporting Party: the new one takes the role.
			if _, err := tx.Exec(ctx, `UPDATE parties SET reporting_party = false
			    WHERE reporting_party AND country_code <> $1`, p.CountryCode); err != nil {
				return err
			}
		}
		_, err := tx.Exec(ctx, `INSERT INTO parties (country_code, name, party_type, hfc_group, reporting_party, bound_from, updated_at)
		    VALUES ($1, $2, $3, $4, $5, $6, now())
		    ON CONFLICT (country_code) DO UPDATE SET name = EXCLUDED.name, party_type = EXCLUDED.party_type,
		      hfc_group = EXCLUDED.hfc_group, reporting_party = EXCLUDED.reporting_party,
		      bound_from = EXCLUDED.bound_from, updated_at = now()`,
			p.CountryCode, p.Name, p.PartyType, p.HFCGroup, p.ReportingParty, bound)
		if err != nil {
			return classify(err, "party", p.CountryCode)
		}
		return audit(ctx, tx, "put", "party", p.CountryCode, "", p)
	})
}

func nonNilMap(m map[string]string) map[string]string {
	if m == nil {
		return map[string]string{}
	}
	return m
}

const partyCols = `country_code, name, party_type, hfc_group, reporting_party, bound_from`

func scanParty(row pgx.Row) (Party, error) {
	var p Party
	var bound []byte
	if err := row.Scan(&p.CountryCode, &p.Name, &p.PartyType, &p.HFCGroup, &p.ReportingParty, &bound); err != nil {
		return p, err
	}
	if err := json.Unmarshal(bound, &p.BoundFrom); err != nil {
		return p, fmt.Errorf("party %s bound_from: %w", p.CountryCode, err)
	}
	return p, nil
}

// GetParty returns one country's settings.
func (s *Store) GetParty(ctx context.Context, code string) (_ Party, err error) {
	defer classifyInto(&err)
	p, err := scanParty(s.pool.QueryRow(ctx, `SELECT `+partyCols+` FROM parties WHERE country_code = $1`, code))
	if errors.Is(err, pgx.ErrNoRows) {
		return p, notFound("party", code)
	}
	return p, err
}

// ListParties returns every country's settings in code order.
func (s *Store) ListParties(ctx context.Context) (_ []Party, err error) {
	defer classifyInto(&err)
	rows, err := s.pool.Query(ctx, `SELECT `+partyCols+` FROM parties ORDER BY country_code`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []Party
	for rows.Next() {
		p, err := scanParty(rows)
		if err != nil {
			return nil, err
		}
		out = append(out, p)
	}
	return out, rows.Err()
}

// PutCompany creates or updates a company.
func (s *Store) PutCompany(ctx context.Context, c Company) error {
	// READ COMMITTED: one upsert, which reads the row as it stands when it runs.
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		_, err := tx.Exec(ctx, `INSERT INTO companies (company_id, name, country_code, updated_at)
		    VALUES ($1, $2, $3, now())
		    ON CONFLICT (company_id) DO UPDATE SET name = EXCLUDED.name,
		      country_code = EXCLUDED.country_code, updated_at = now()`, c.CompanyID, c.Name, c.CountryCode)
		if err != nil {
			return classify(err, "company", c.CompanyID)
		}
		return audit(ctx, tx, "put", "company", c.CompanyID, "", c)
	})
}

// ListCompanies returns the companies in identifier order.
func (s *Store) ListCompanies(ctx context.Context) (_ []Company, err error) {
	defer classifyInto(&err)
	rows, err := s.pool.Query(ctx, `SELECT company_id, name, country_code FROM companies ORDER BY company_id`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []Company
	for rows.Next() {
		var c Company
		if err := rows.Scan(&c.CompanyID, &c.Name, &c.CountryCode); err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

// IssueLicence stores a new licence with its quota lines (drawn starts at 0).
func (s *Store) IssueLicence(ctx context.Context, l Licence, reason string) error {
	// READ COMMITTED: plain inserts; a licence number issued concurrently fails on the
	// primary key (ErrAlreadyExists), whichever commits first.
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		_, err := tx.Exec(ctx, `INSERT INTO licences (licence_number, company_id, directions, valid_from,
		    valid_to, status, special_purposes) VALUES ($1, $2, $3, $4, $5, $6, $7)`,
			l.Number, l.CompanyID, l.Directions, l.ValidFrom, l.ValidTo, l.Status, nonNil(l.SpecialPurposes))
		if err != nil {
			return classify(err, "licence", l.Number)
		}
		for _, q := range l.QuotaLines {
			if _, err := tx.Exec(ctx, `INSERT INTO quota_lines (licence_number, line_number, annex_group,
			    substance, unit, allocated, purposes) VALUES ($1, $2, $3, $4, $5, $6, $7)`,
				l.Number, q.LineNumber, q.AnnexGroup, q.Substance, q.Unit, q.Allocated, nonNil(q.Purposes)); err != nil {
				return classify(err, "quota line of licence", l.Number)
			}
		}
		return audit(ctx, tx, "issue", "licence", l.Number, reason, l)
	})
}

// AmendLicence changes validity, directions, purposes and quota lines. The licence row is
// locked first, then its quota lines in line order (the order the recorder uses too), so
// an amendment and a recording batch cannot deadlock. A line cannot go below what is
// drawn, and a line with draws cannot be removed.
func (s *Store) AmendLicence(ctx context.Context, l Licence, reason string) error {
	// READ COMMITTED: the licence and its lines are read FOR UPDATE, so what is checked
	// (status, drawn) is the latest committed value and cannot change before commit.
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		var status string
		err := tx.QueryRow(ctx, `SELECT status FROM licences WHERE licence_number = $1 FOR UPDATE`, l.Number).Scan(&status)
		if errors.Is(err, pgx.ErrNoRows) {
			return notFound("licence", l.Number)
		}
		if err != nil {
			return err
		}
		if status == "revoked" {
			return fmt.Errorf("licence %q is revoked and cannot be amended: %w", l.Number, ErrConflict)
		}
		old := map[int]QuotaLine{}
		rows, err := tx.Query(ctx, `SELECT line_number, drawn::float8 FROM quota_lines
		    WHERE licence_number = $1 ORDER BY line_number FOR UPDATE`, l.Number)
		if err != nil {
			return err
		}
		for rows.Next() {
			var q QuotaLine
			if err := rows.Scan(&q.LineNumber, &q.Drawn); err != nil {
				rows.Close()
				return err
			}
			old[q.LineNumber] = q
		}
		if err := rows.Err(); err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, `UPDATE licences SET company_id = $2, directions = $3, valid_from = $4,
		    valid_to = $5, special_purposes = $6, updated_at = now() WHERE licence_number = $1`,
			l.Number, l.CompanyID, l.Directions, l.ValidFrom, l.ValidTo, nonNil(l.SpecialPurposes)); err != nil {
			return classify(err, "licence", l.Number)
		}
		keep := map[int]bool{}
		for _, q := range l.QuotaLines {
			keep[q.LineNumber] = true
			if o, ok := old[q.LineNumber]; ok && q.Allocated < o.Drawn {
				return fmt.Errorf("licence %q line %d: allocation %g is below the %g already drawn: %w",
					l.Number, q.LineNumber, q.Allocated, o.Drawn, ErrConflict)
			}
			if _, err := tx.Exec(ctx, `INSERT INTO quota_lines (licence_number, line_number, annex_group, substance, unit, allocated, purposes)
			    VALUES ($1, $2, $3, $4, $5, $6, $7)
			    ON CONFLICT (licence_number, line_number) DO UPDATE SET annex_group = EXCLUDED.annex_group,
			      substance = EXCLUDED.substance, unit = EXCLUDED.unit, allocated = EXCLUDED.allocated,
			      purposes = EXCLUDED.purposes`,
				l.Number, q.LineNumber, q.AnnexGroup, q.Substance, q.Unit, q.Allocated, nonNil(q.Purposes)); err != nil {
				return classify(err, "quota line of licence", l.Number)
			}
		}
		for n, o := range old {
			if keep[n] {
				continue
			}
			if o.Drawn > 0 {
				return fmt.Errorf("licence %q line %d has %g drawn and cannot be removed: %w", l.Number, n, o.Drawn, ErrConflict)
			}
			if _, err := tx.Exec(ctx, `DELETE FROM quota_lines WHERE licence_number = $1 AND line_number = $2`, l.Number, n); err != nil {
				return err
			}
		}
		return audit(ctx, tx, "amend", "licence", l.Number, reason, l)
	})
}

// SetLicenceStatus changes a licence's status; a revoked licence stays revoked.
func (s *Store) SetLicenceStatus(ctx context.Context, number, status, reason string) error {
	// READ COMMITTED: the licence row is read FOR UPDATE before its status is checked.
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		var cur string
		err := tx.QueryRow(ctx, `SELECT status FROM licences WHERE licence_number = $1 FOR UPDATE`, number).Scan(&cur)
		if errors.Is(err, pgx.ErrNoRows) {
			return notFound("licence", number)
		}
		if err != nil {
			return err
		}
		if cur == "revoked" && status != "revoked" {
			return fmt.Errorf("licence %q is revoked and cannot be reinstated: %w", number, ErrConflict)
		}
		if _, err := tx.Exec(ctx, `UPDATE licences SET status = $2, updated_at = now() WHERE licence_number = $1`, number, status); err != nil {
			return classify(err, "licence", number)
		}
		return audit(ctx, tx, "status:"+status, "licence", number, reason, map[string]string{"from": cur, "to": status})
	})
}

const licenceCols = `licence_number, company_id, directions, valid_from, valid_to, status, special_purposes`

// GetLicence returns a licence with its quota lines and balances.
func (s *Store) GetLicence(ctx context.Context, number string) (Licence, error) {
	ls, err := s.queryLicences(ctx, `SELECT `+licenceCols+` FROM licences WHERE licence_number = $1`, number)
	if err != nil {
		return Licence{}, err
	}
	if len(ls) == 0 {
		return Licence{}, notFound("licence", number)
	}
	return ls[0], nil
}

// ListLicences returns licences, of one company and/or valid in one year when given.
func (s *Store) ListLicences(ctx context.Context, companyID string, year int) ([]Licence, error) {
	return s.queryLicences(ctx, `SELECT `+licenceCols+` FROM licences
	    WHERE ($1 = '' OR company_id = $1)
	      AND ($2 = 0 OR (valid_from <= make_date($2, 12, 31) AND valid_to >= make_date($2, 1, 1)))
	    ORDER BY licence_number`, companyID, year)
}

func (s *Store) queryLicences(ctx context.Context, sql string, args ...any) (_ []Licence, err error) {
	defer classifyInto(&err)
	rows, err := s.pool.Query(ctx, sql, args...)
	if err != nil {
		return nil, err
	}
	var out []Licence
	idx := map[string]int{}
	for rows.Next() {
		var l Licence
		if err := rows.Scan(&l.Number, &l.CompanyID, &l.Directions, &l.ValidFrom, &l.ValidTo, &l.Status, &l.SpecialPurposes); err != nil {
			rows.Close()
			return nil, err
		}
		idx[l.Number] = len(out)
		out = append(out, l)
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	if len(out) == 0 {
		return out, nil
	}
	nums := make([]string, len(out))
	for i, l := range out {
		nums[i] = l.Number
	}
	rows, err = s.pool.Query(ctx, `SELECT licence_number, line_number, annex_group, substance, unit,
	    purposes, allocated::float8, drawn::float8 FROM quota_lines WHERE licence_number = ANY($1)
	    ORDER BY licence_number, line_number`, nums)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var n string
		var q QuotaLine
		if err := rows.Scan(&n, &q.LineNumber, &q.AnnexGroup, &q.Substance, &q.Unit, &q.Purposes, &q.Allocated, &q.Drawn); err != nil {
			return nil, err
		}
		out[idx[n]].QuotaLines = append(out[idx[n]].QuotaLines, q)
	}
	return out, rows.Err()
}
