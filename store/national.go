package store

import (
	"context"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/exact"
)

// Kinds of national entries, as stored in national_entries.entry_type.
const (
	EntryProduction               = "production"                  // produced in the reporting Party
	EntryDestruction              = "destruction"                 // destroyed by an approved technology
	EntryFeedstock                = "feedstock"                   // used entirely as feedstock
	EntryQPS                      = "qps"                         // methyl bromide used for QPS
	EntryHistoricalImport         = "historical-import"           // imports before the service was in use
	EntryHistoricalExport         = "historical-export"           // exports to Parties before the service was in use
	EntryHistoricalExportNonParty = "historical-export-non-party" // exports to non-Parties, idem
)

// EntryTypes lists the kinds of national entries.
var EntryTypes = []string{EntryProduction, EntryDestruction, EntryFeedstock, EntryQPS,
	EntryHistoricalImport, EntryHistoricalExport, EntryHistoricalExportNonParty}

// NationalEntry is one quantity of one substance in one year that does not come from a
// recorded shipment: production, destruction, feedstock and QPS use, and historical trade
// totals for years before the service was in use.
type NationalEntry struct {
	Key       string // caller's key; an entry with the same key is replaced
	Year      int
	Type      string // one of EntryTypes
	Substance string // catalogue designation of a single substance
	Tonnes    exact.Decimal
	Note      string
	// OutsideCustoms marks a feedstock, QPS or destruction entry that covers only
	// quantities that never passed customs (domestic production used as feedstock, stocks
	// destroyed): it adds to what the shipments declared for the same use deduct. Unmarked,
	// such an entry is a whole year's use for a year without shipments declared for it.
	OutsideCustoms bool
}

// NationalTotal is the sum of the national entries of one kind, substance and year.
type NationalTotal struct {
	Year      int
	Type      string
	Substance string
	Tonnes    exact.Decimal
	Entries   int
	// OutsideCustoms: the entries summed are all marked outside customs, or all unmarked
	// (totals are per mark).
	OutsideCustoms bool
	// Keys of the entries summed, in order.
	Keys []string
}

// PutNationalEntries stores entries in one transaction: a new key is inserted, an existing
// key replaced (ON CONFLICT, so two callers storing the same key at once cannot both
// insert). Every entry is written to the audit log. A substance missing from the catalogue
// table fails the whole call with ErrNotFound, and a value the schema refuses or an entry
// of (or replacing one of) a closed reporting year (*YearClosedError) with
// ErrConflict; nothing is stored then.
func (s *Store) PutNationalEntries(ctx context.Context, entries []NationalEntry) error {
	if len(entries) == 0 {
		return nil
	}
	// READ COMMITTED: each entry is one upsert by key; entries do not depend on each other.
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		// A closed reporting year's entries do not change (its report stays the same).
		keys := make([]string, len(entries))
		years := make([]int, len(entries))
		for i, e := range entries {
			keys[i], years[i] = e.Key, e.Year
		}
		if err := refuseClosedYears(ctx, tx, "national_entries", "entry_key", keys, years); err != nil {
			return err
		}
		for _, e := range entries {
			// One statement per entry keeps the SQLSTATE tied to its key for the message;
			// a batch of a few thousand entries still runs in seconds.
			_, err := tx.Exec(ctx, `INSERT INTO national_entries (entry_key, year, entry_type, substance, metric_tonnes, note, outside_customs, updated_at)
			    VALUES ($1, $2, $3, $4, $5, $6, $7, now())
			    ON CONFLICT (entry_key) DO UPDATE SET year = EXCLUDED.year, entry_type = EXCLUDED.entry_type,
			      substance = EXCLUDED.substance, metric_tonnes = EXCLUDED.metric_tonnes, note = EXCLUDED.note,
			      outside_customs = EXCLUDED.outside_customs, updated_at = now()`, e.Key, e.Year, e.Type, e.Substance, e.Tonnes, e.Note, e.OutsideCustoms)
			if err != nil {
				return classify(err, "national entry", e.Key)
			}
			if err := audit(ctx, tx, "put", "national_entry", e.Key, "", e); err != nil {
				return err
			}
		}
		return nil
	})
}

// ListNationalEntries returns the entries of one year (all years when year is 0), by year,
// kind, substance and key.
func (s *Store) ListNationalEntries(ctx context.Context, year int) ([]NationalEntry, error) {
	return s.reader().ListNationalEntriesPage(ctx, year, Page{})
}

// ListNationalEntriesPage returns one page of ListNationalEntries.
func (s *Store) ListNationalEntriesPage(ctx context.Context, year int, p Page) ([]NationalEntry, error) {
	return s.reader().ListNationalEntriesPage(ctx, year, p)
}

// ListNationalEntries is Store.ListNationalEntries within the reader's transaction, if any.
func (r Reader) ListNationalEntries(ctx context.Context, year int) ([]NationalEntry, error) {
	return r.ListNationalEntriesPage(ctx, year, Page{})
}

// ListNationalEntriesPage is Store.ListNationalEntriesPage within the reader's
// transaction, if any.
func (r Reader) ListNationalEntriesPage(ctx context.Context, year int, p Page) (_ []NationalEntry, err error) {
	defer classifyInto(&err)
	cond, limit, args, err := p.sql([]any{year}, keyCol{"year", true}, keyCol{name: "entry_type"}, keyCol{name: "substance"}, keyCol{name: "entry_key"})
	if err != nil {
		return nil, err
	}
	rows, err := r.q.Query(ctx, `SELECT entry_key, year, entry_type, substance, metric_tonnes, note, outside_customs
	    FROM national_entries WHERE ($1 = 0 OR year = $1) AND `+cond+`
	    ORDER BY year, entry_type, substance, entry_key`+limit, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []NationalEntry
	for rows.Next() {
		var e NationalEntry
		if err := rows.Scan(&e.Key, &e.Year, &e.Type, &e.Substance, &e.Tonnes, &e.Note, &e.OutsideCustoms); err != nil {
			return nil, err
		}
		out = append(out, e)
	}
	return out, rows.Err()
}

// NationalTotals sums the national entries per year, kind, substance and outside-customs
// mark, in the database,
// for the given years (every year when years is nil).
func (s *Store) NationalTotals(ctx context.Context, years []int) (_ []NationalTotal, err error) {
	return s.reader().NationalTotals(ctx, years)
}

// NationalTotals is Store.NationalTotals within the reader's transaction, if any.
func (r Reader) NationalTotals(ctx context.Context, years []int) (_ []NationalTotal, err error) {
	defer classifyInto(&err)
	rows, err := r.q.Query(ctx, `SELECT year, entry_type, substance, sum(metric_tonnes), count(*),
	        outside_customs, array_agg(entry_key ORDER BY entry_key)
	    FROM national_entries WHERE ($1::int[] IS NULL OR year = ANY($1))
	    GROUP BY year, entry_type, substance, outside_customs ORDER BY year, entry_type, substance, outside_customs`, intsOrNil(years))
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []NationalTotal
	for rows.Next() {
		var t NationalTotal
		if err := rows.Scan(&t.Year, &t.Type, &t.Substance, &t.Tonnes, &t.Entries, &t.OutsideCustoms, &t.Keys); err != nil {
			return nil, err
		}
		out = append(out, t)
	}
	return out, rows.Err()
}

// ErrNoReportingParty: no country is configured as the reporting Party.
var ErrNoReportingParty = errors.New("no reporting Party is configured")

// ReportingParty returns the settings of the country marked as the reporting Party; the
// error wraps ErrNoReportingParty when there is none.
func (s *Store) ReportingParty(ctx context.Context) (_ Party, err error) {
	return s.reader().ReportingParty(ctx)
}

// ReportingParty is Store.ReportingParty within the reader's transaction, if any.
func (r Reader) ReportingParty(ctx context.Context) (_ Party, err error) {
	defer classifyInto(&err)
	p, err := scanParty(r.q.QueryRow(ctx, `SELECT `+partyCols+` FROM parties WHERE reporting_party`))
	if errors.Is(err, pgx.ErrNoRows) {
		return p, fmt.Errorf("%w: store the country's settings and name it with SetReportingParty (or reporting_party true in a first 'halovet load')", ErrNoReportingParty)
	}
	return p, err
}

// intsOrNil passes nil for "no filter" and the years otherwise.
func intsOrNil(v []int) any {
	if v == nil {
		return nil
	}
	out := make([]int32, len(v))
	for i, x := range v {
		out[i] = int32(x)
	}
	return out
}
