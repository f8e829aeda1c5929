-- +goose Up
-- National entries: only the kinds the consumption arithmetic knows, and no negative
-- quantities (a correction replaces the entry under its key instead). Aggregation of
-- shipment components by year reads shipments by year and joins the components on their
-- primary key, so no new index is needed for it.
ALTER TABLE national_entries
    ADD CONSTRAINT national_entries_type CHECK (entry_type IN ('production', 'destruction',
        'feedstock', 'qps', 'historical-import', 'historical-export', 'historical-export-non-party')),
    ADD CONSTRAINT national_entries_tonnes CHECK (metric_tonnes >= 0);
CREATE INDEX national_entries_year_type ON national_entries (year, entry_type, substance);
DROP INDEX national_entries_year;

-- +goose Down
CREATE INDEX national_entries_year ON national_entries (year);
DROP INDEX national_entries_year_type;
ALTER TABLE national_entries DROP CONSTRAINT national_entries_tonnes,
    DROP CONSTRAINT national_entries_type;
