package store

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"slices"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/callctx"
	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/terms"
)

// Party is one country's settings.
type Party struct {
	CountryCode    string
	Name           string
	PartyType      terms.PartyType // stored as its text form: "article-5", "non-article-5", "non-party"
	HFCGroup       terms.HFCGroup  // stored as its text form: "a5-group-1", ..., "" when unspecified
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
	Unit       terms.QuotaUnit // stored as "metric-t", "odp-t", "co2e-t"
	Purposes   []terms.Purpose // the declared purposes the line serves; empty: every purpose
	Allocated  exact.Decimal   // exact, in billionths of the unit at most (numeric(30, 9))
	Drawn      exact.Decimal
	ClosedOn   time.Time // the day the line stopped taking draws; zero while it is open
}

// Licence is an import/export licence with its quota lines.
type Licence struct {
	Number          string
	CompanyID       string
	Directions      []terms.Direction
	ValidFrom       time.Time
	ValidTo         time.Time
	Status          terms.LicenceStatus // as it stands after its last status change
	SpecialPurposes []terms.Purpose
	QuotaLines      []QuotaLine
	// Version counts the changes of the licence's terms and status (1 when issued).
	Version int
	// StatusHistory is the licence's status from each day on, in date order (read only).
	StatusHistory []StatusPeriod
}

// StatusOn returns the licence's status on day d.
func (l Licence) StatusOn(d time.Time) terms.LicenceStatus {
	return StatusOn(l.StatusHistory, l.Status, d)
}

// PutParty creates or replaces a country's settings. It never changes which country is
// the reporting Party: a request that marks another country as reporting, or unmarks the
// reporting Party, is refused (ErrConflict, with the reason; SetReportingParty changes it).
// On a register without a reporting Party and with neither shipments nor national
// entries, the first country marked so becomes it (the first setup).
func (s *Store) PutParty(ctx context.Context, p Party) error {
	bound, err := json.Marshal(nonNilMap(p.BoundFrom))
	if err != nil {
		return err
	}
	// SERIALIZABLE: two first setups naming different countries at once would each find
	// no reporting Party; serialised, the second finds the first's and is refused.
	return s.inTx(ctx, serializable, func(tx pgx.Tx) error {
		_, err := putPartyTx(ctx, tx, p, bound)
		return err
	})
}

// putPartyTx writes p in tx and reports whether anything changed.
func putPartyTx(ctx context.Context, tx pgx.Tx, p Party, bound []byte) (changed bool, err error) {
	cur, err := reportingPartyTx(ctx, tx)
	if err != nil {
		return false, err
	}
	switch {
	case p.ReportingParty && cur != "" && cur != p.CountryCode:
		return false, fmt.Errorf("party %s: reporting_party is set, but the reporting Party is %s; PutParty does not change it (SetReportingParty does, or 'halovet reporting-party'): %w",
			p.CountryCode, cur, ErrConflict)
	case !p.ReportingParty && cur == p.CountryCode:
		return false, fmt.Errorf("party %s is the reporting Party and reporting_party must stay set; PutParty does not change it (name another with SetReportingParty): %w",
			p.CountryCode, ErrConflict)
	case p.ReportingParty && cur == "":
		n, err := recordedCounts(ctx, tx)
		if err != nil {
			return false, err
		}
		if n.shipments+n.entries > 0 {
			return false, fmt.Errorf("party %s: no reporting Party is set and %d shipments and %d national entries are recorded; name it with SetReportingParty (force, with a reason): %w",
				p.CountryCode, n.shipments, n.entries, ErrConflict)
		}
	}
	var same bool
	err = tx.QueryRow(ctx, `SELECT name = $2 AND party_type = $3 AND hfc_group = $4 AND reporting_party = $5 AND bound_from = $6::jsonb
	    FROM parties WHERE country_code = $1`, p.CountryCode, p.Name, p.PartyType, p.HFCGroup, p.ReportingParty, bound).Scan(&same)
	if err != nil && !errors.Is(err, pgx.ErrNoRows) {
		return false, classify(err, "party", p.CountryCode)
	}
	if same {
		return false, nil
	}
	_, err = tx.Exec(ctx, `INSERT INTO parties (country_code, name, party_type, hfc_group, reporting_party, bound_from, updated_at)
	    VALUES ($1, $2, $3, $4, $5, $6, now())
	    ON CONFLICT (country_code) DO UPDATE SET name = EXCLUDED.name, party_type = EXCLUDED.party_type,
	      hfc_group = EXCLUDED.hfc_group, reporting_party = EXCLUDED.reporting_party,
	      bound_from = EXCLUDED.bound_from, updated_at = now()`,
		p.CountryCode, p.Name, p.PartyType, p.HFCGroup, p.ReportingParty, bound)
	if err != nil {
		return false, classify(err, "party", p.CountryCode)
	}
	return true, audit(ctx, tx, "put", "party", p.CountryCode, "", p)
}

// reportingPartyTx returns the code of the reporting Party, or "".
func reportingPartyTx(ctx context.Context, tx pgx.Tx) (string, error) {
	var code string
	err := tx.QueryRow(ctx, `SELECT country_code FROM parties WHERE reporting_party`).Scan(&code)
	if errors.Is(err, pgx.ErrNoRows) {
		return "", nil
	}
	return code, err
}

type counts struct{ shipments, entries int64 }

// recordedCounts counts the shipments and national entries recorded: what the reporting
// Party's consumption is made of.
func recordedCounts(ctx context.Context, tx pgx.Tx) (counts, error) {
	var n counts
	err := tx.QueryRow(ctx, `SELECT (SELECT count(*) FROM shipments), (SELECT count(*) FROM national_entries)`).Scan(&n.shipments, &n.entries)
	return n, err
}

// ReportingPartyChange names the reporting Party.
type ReportingPartyChange struct {
	CountryCode string
	// Force allows the change while shipments or national entries are recorded.
	Force  bool
	Reason string
}

// SetReportingParty makes a country (whose settings exist) the reporting Party and
// reports whether that changed anything. Once shipments or national entries are recorded
// it is refused (ErrConflict) unless forced; every change is audited with the counts.
func (s *Store) SetReportingParty(ctx context.Context, c ReportingPartyChange) (changed bool, err error) {
	// SERIALIZABLE: the counts read and the flags written must not interleave with a
	// shipment recorded or another reporting Party named meanwhile.
	err = s.inTx(ctx, serializable, func(tx pgx.Tx) error {
		var e error
		changed, e = setReportingTx(ctx, tx, c)
		return e
	})
	return changed, err
}

func setReportingTx(ctx context.Context, tx pgx.Tx, c ReportingPartyChange) (bool, error) {
	var exists bool
	if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM parties WHERE country_code = $1)`, c.CountryCode).Scan(&exists); err != nil {
		return false, err
	}
	if !exists {
		return false, fmt.Errorf("%w (store its settings with PutParty first)", notFound("party", c.CountryCode))
	}
	cur, err := reportingPartyTx(ctx, tx)
	if err != nil {
		return false, err
	}
	if cur == c.CountryCode {
		return false, nil
	}
	n, err := recordedCounts(ctx, tx)
	if err != nil {
		return false, err
	}
	if n.shipments+n.entries > 0 && !c.Force {
		from := cur
		if from == "" {
			from = "(none)"
		}
		return false, fmt.Errorf("the reporting Party is %s and %d shipments and %d national entries are recorded; naming %s changes whose consumption they count in: repeat with force and a reason: %w",
			from, n.shipments, n.entries, c.CountryCode, ErrConflict)
	}
	// Two statements: the one-reporting-Party index is checked row by row.
	if _, err := tx.Exec(ctx, `UPDATE parties SET reporting_party = false, updated_at = now() WHERE reporting_party`); err != nil {
		return false, err
	}
	if _, err := tx.Exec(ctx, `UPDATE parties SET reporting_party = true, updated_at = now() WHERE country_code = $1`, c.CountryCode); err != nil {
		return false, classify(err, "party", c.CountryCode)
	}
	return true, audit(ctx, tx, "set-reporting-party", "party", c.CountryCode, c.Reason, map[string]any{
		"from": cur, "to": c.CountryCode, "forced": c.Force, "shipments": n.shipments, "national_entries": n.entries})
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
func (s *Store) ListParties(ctx context.Context) ([]Party, error) {
	return s.ListPartiesPage(ctx, Page{})
}

// ListPartiesPage returns one page of the countries' settings in code order.
func (s *Store) ListPartiesPage(ctx context.Context, p Page) (_ []Party, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql(nil, keyCol{name: "country_code"})
	if err != nil {
		return nil, err
	}
	rows, err := s.pool.Query(ctx, `SELECT `+partyCols+` FROM parties WHERE `+cond+` ORDER BY country_code`+limit, args...)
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
		_, err := putCompanyTx(ctx, tx, c)
		return err
	})
}

// putCompanyTx writes c in tx and reports whether anything changed.
func putCompanyTx(ctx context.Context, tx pgx.Tx, c Company) (bool, error) {
	tag, err := tx.Exec(ctx, `INSERT INTO companies (company_id, name, country_code, updated_at)
	    VALUES ($1, $2, $3, now())
	    ON CONFLICT (company_id) DO UPDATE SET name = EXCLUDED.name,
	      country_code = EXCLUDED.country_code, updated_at = now()
	    WHERE companies.name IS DISTINCT FROM EXCLUDED.name OR companies.country_code IS DISTINCT FROM EXCLUDED.country_code`,
		c.CompanyID, c.Name, c.CountryCode)
	if err != nil {
		return false, classify(err, "company", c.CompanyID)
	}
	if tag.RowsAffected() == 0 {
		return false, nil
	}
	return true, audit(ctx, tx, "put", "company", c.CompanyID, "", c)
}

// ListCompanies returns the companies in identifier order.
func (s *Store) ListCompanies(ctx context.Context) ([]Company, error) {
	return s.ListCompaniesPage(ctx, "", Page{})
}

// ListCompaniesPage returns one page of the companies in identifier order: only the one
// identified by only, when it is not empty.
func (s *Store) ListCompaniesPage(ctx context.Context, only string, p Page) (_ []Company, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql([]any{only}, keyCol{name: "company_id"})
	if err != nil {
		return nil, err
	}
	rows, err := s.pool.Query(ctx, `SELECT company_id, name, country_code FROM companies
	    WHERE ($1 = '' OR company_id = $1) AND `+cond+` ORDER BY company_id`+limit, args...)
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

// IssueLicence stores a new licence with its quota lines (drawn starts at 0); its history
// starts with its status from its first day of validity.
func (s *Store) IssueLicence(ctx context.Context, l Licence, reason string) error {
	// READ COMMITTED: plain inserts; a licence number issued concurrently fails on the
	// primary key (ErrAlreadyExists), whichever commits first.
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error { return issueTx(ctx, tx, l, reason) })
}

func issueTx(ctx context.Context, tx pgx.Tx, l Licence, reason string) error {
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
	if _, err := tx.Exec(ctx, `INSERT INTO licence_events (licence_number, kind, effective_on, status, reason, actor)
	    VALUES ($1, 'issued', $2, $3, $4, $5)`, l.Number, l.ValidFrom, l.Status, reason, callctx.Actor(ctx)); err != nil {
		return classify(err, "history of licence", l.Number)
	}
	return audit(ctx, tx, "issue", "licence", l.Number, reason, l)
}

// Amendment asks for a licence's terms and quota lines to change.
type Amendment struct {
	// Licence is the licence as it should be; its status is not changed here
	// (SetLicenceStatus does that), quota lines are matched by number.
	Licence Licence
	// EffectiveOn is the day the amendment takes effect (recorded in the history).
	EffectiveOn time.Time
	Reason      string
	// ExpectedVersion, when not 0, is the version the caller read; another one is refused.
	ExpectedVersion int
}

// oldLine is a stored quota line with whether shipments have drawn on it.
type oldLine struct {
	QuotaLine
	hasDraws bool
}

// AmendLicence changes validity, directions, purposes, company and quota lines, and
// reports whether anything changed (nothing is written when not). The licence row is
// locked first, then its quota lines in line order (the order the recorder uses too), so
// an amendment and a recording batch cannot deadlock. What past draws mean never changes:
// a line cannot go below what is drawn; a line with draws cannot be removed, and keeps its
// unit and scope, and the licence its company, once any line has draws (close the line,
// CloseQuotaLine, and open another); a closed line stays as it is.
func (s *Store) AmendLicence(ctx context.Context, a Amendment) (changed bool, err error) {
	// READ COMMITTED: the licence and its lines are read FOR UPDATE, so what is checked
	// (status, drawn) is the latest committed value and cannot change before commit.
	err = s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		var e error
		changed, e = amendTx(ctx, tx, a)
		return e
	})
	return changed, err
}

func amendTx(ctx context.Context, tx pgx.Tx, a Amendment) (bool, error) {
	l := a.Licence
	lk, err := lockLicence(ctx, tx, l.Number, a.ExpectedVersion)
	if err != nil {
		return false, err
	}
	if lk.status == terms.LicenceRevoked {
		return false, fmt.Errorf("licence %q is revoked and cannot be amended: %w", l.Number, ErrConflict)
	}
	var before Licence
	if err := tx.QueryRow(ctx, `SELECT `+licenceCols+` FROM licences WHERE licence_number = $1`, l.Number).Scan(
		&before.Number, &before.CompanyID, &before.Directions, &before.ValidFrom, &before.ValidTo, &before.Status,
		&before.SpecialPurposes, &before.Version); err != nil {
		return false, err
	}
	old := map[int]oldLine{}
	rows, err := tx.Query(ctx, `SELECT line_number, annex_group, substance, unit, purposes, allocated, drawn, closed_on,
	      EXISTS (SELECT 1 FROM quota_draws d WHERE d.licence_number = q.licence_number AND d.line_number = q.line_number)
	    FROM quota_lines q WHERE licence_number = $1 ORDER BY line_number FOR UPDATE`, l.Number)
	if err != nil {
		return false, err
	}
	drawnLine := 0
	for rows.Next() {
		var q oldLine
		var closed *time.Time
		if err := rows.Scan(&q.LineNumber, &q.AnnexGroup, &q.Substance, &q.Unit, &q.Purposes, &q.Allocated, &q.Drawn, &closed, &q.hasDraws); err != nil {
			rows.Close()
			return false, err
		}
		if closed != nil {
			q.ClosedOn = *closed
		}
		q.hasDraws = q.hasDraws || q.Drawn.Sign() > 0
		if q.hasDraws && drawnLine == 0 {
			drawnLine = q.LineNumber
		}
		old[q.LineNumber] = q
		before.QuotaLines = append(before.QuotaLines, q.QuotaLine)
	}
	if err := rows.Err(); err != nil {
		return false, err
	}
	if drawnLine != 0 && l.CompanyID != before.CompanyID {
		return false, fmt.Errorf("licence %q: company_id stays %s: line %d has draws, which are that company's (issue a new licence to %s): %w",
			l.Number, before.CompanyID, drawnLine, l.CompanyID, ErrConflict)
	}
	changed := l.CompanyID != before.CompanyID || !slices.Equal(l.Directions, before.Directions) ||
		!l.ValidFrom.Equal(before.ValidFrom) || !l.ValidTo.Equal(before.ValidTo) ||
		!slices.Equal(nonNil(l.SpecialPurposes), nonNil(before.SpecialPurposes))
	keep := map[int]bool{}
	for _, q := range l.QuotaLines {
		keep[q.LineNumber] = true
		o, ok := old[q.LineNumber]
		if !ok {
			changed = true
			continue
		}
		sameTerms := o.Unit == q.Unit && o.AnnexGroup == q.AnnexGroup && o.Substance == q.Substance &&
			slices.Equal(nonNil(o.Purposes), nonNil(q.Purposes))
		if sameTerms && o.Allocated.Equal(q.Allocated) {
			continue
		}
		changed = true
		switch {
		case !o.ClosedOn.IsZero():
			return false, fmt.Errorf("licence %q line %d is closed (from %s) and stays as it is: %w",
				l.Number, q.LineNumber, o.ClosedOn.Format(time.DateOnly), ErrConflict)
		case o.hasDraws && !sameTerms:
			return false, fmt.Errorf("licence %q line %d has %v %s drawn, so its unit, scope and purposes stay %s %s: close it (CloseQuotaLine) and open a new line instead: %w",
				l.Number, q.LineNumber, o.Drawn, o.Unit, o.Unit, lineScopeText(o.QuotaLine), ErrConflict)
		case q.Allocated.Cmp(o.Drawn) < 0:
			return false, fmt.Errorf("licence %q line %d: allocation %v is below the %v already drawn: %w",
				l.Number, q.LineNumber, q.Allocated, o.Drawn, ErrConflict)
		}
	}
	for n, o := range old {
		if keep[n] {
			continue
		}
		changed = true
		if o.hasDraws {
			return false, fmt.Errorf("licence %q line %d has %v drawn and cannot be removed (close it with CloseQuotaLine): %w", l.Number, n, o.Drawn, ErrConflict)
		}
	}
	if !changed {
		return false, nil
	}
	if _, err := tx.Exec(ctx, `UPDATE licences SET company_id = $2, directions = $3, valid_from = $4,
	    valid_to = $5, special_purposes = $6, updated_at = now() WHERE licence_number = $1`,
		l.Number, l.CompanyID, l.Directions, l.ValidFrom, l.ValidTo, nonNil(l.SpecialPurposes)); err != nil {
		return false, classify(err, "licence", l.Number)
	}
	for _, q := range l.QuotaLines {
		if _, err := tx.Exec(ctx, `INSERT INTO quota_lines (licence_number, line_number, annex_group, substance, unit, allocated, purposes)
		    VALUES ($1, $2, $3, $4, $5, $6, $7)
		    ON CONFLICT (licence_number, line_number) DO UPDATE SET annex_group = EXCLUDED.annex_group,
		      substance = EXCLUDED.substance, unit = EXCLUDED.unit, allocated = EXCLUDED.allocated,
		      purposes = EXCLUDED.purposes`,
			l.Number, q.LineNumber, q.AnnexGroup, q.Substance, q.Unit, q.Allocated, nonNil(q.Purposes)); err != nil {
			return false, classify(err, "quota line of licence", l.Number)
		}
	}
	for n := range old {
		if keep[n] {
			continue
		}
		if _, err := tx.Exec(ctx, `DELETE FROM quota_lines WHERE licence_number = $1 AND line_number = $2`, l.Number, n); err != nil {
			return false, err
		}
	}
	before.Version = 0
	after := l
	after.Status, after.Version, after.StatusHistory = terms.LicenceStatusUnspecified, 0, nil
	before.Status = terms.LicenceStatusUnspecified
	return true, addEvent(ctx, tx, l.Number, "amended", a.EffectiveOn, terms.LicenceStatusUnspecified, a.Reason,
		map[string]any{"before": before, "after": after, "effective_on": a.EffectiveOn.Format(time.DateOnly)})
}

// lineScopeText is a line's Annex group or substance.
func lineScopeText(q QuotaLine) string {
	if q.AnnexGroup != "" {
		return q.AnnexGroup
	}
	return q.Substance
}

const licenceCols = `licence_number, company_id, directions, valid_from, valid_to, status, special_purposes, version`

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
	return s.ListLicencesPage(ctx, companyID, year, Page{})
}

// ListLicencesPage returns one page of ListLicences, in number order.
func (s *Store) ListLicencesPage(ctx context.Context, companyID string, year int, p Page) ([]Licence, error) {
	cond, limit, args, err := p.sql([]any{companyID, year}, keyCol{name: "licence_number"})
	if err != nil {
		return nil, err
	}
	return s.queryLicences(ctx, `SELECT `+licenceCols+` FROM licences
	    WHERE ($1 = '' OR company_id = $1)
	      AND ($2 = 0 OR (valid_from <= make_date($2, 12, 31) AND valid_to >= make_date($2, 1, 1)))
	      AND `+cond+` ORDER BY licence_number`+limit, args...)
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
		if err := rows.Scan(&l.Number, &l.CompanyID, &l.Directions, &l.ValidFrom, &l.ValidTo, &l.Status, &l.SpecialPurposes, &l.Version); err != nil {
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
	hist, err := statusHistories(ctx, s.pool, nums)
	if err != nil {
		return nil, err
	}
	for n, h := range hist {
		out[idx[n]].StatusHistory = h
	}
	rows, err = s.pool.Query(ctx, `SELECT licence_number, line_number, annex_group, substance, unit,
	    purposes, allocated, drawn, closed_on FROM quota_lines WHERE licence_number = ANY($1)
	    ORDER BY licence_number, line_number`, nums)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var n string
		var q QuotaLine
		var closed *time.Time
		if err := rows.Scan(&n, &q.LineNumber, &q.AnnexGroup, &q.Substance, &q.Unit, &q.Purposes, &q.Allocated, &q.Drawn, &closed); err != nil {
			return nil, err
		}
		if closed != nil {
			q.ClosedOn = *closed
		}
		out[idx[n]].QuotaLines = append(out[idx[n]].QuotaLines, q)
	}
	return out, rows.Err()
}
