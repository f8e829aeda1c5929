-- +goose Up
-- The reporting year (Montreal Protocol Article 7).
--
-- One source per quantity: feedstock, QPS and destruction are deducted from the recorded
-- shipments by their declared purpose. A national entry of those kinds either covers only
-- quantities that never passed customs (outside_customs: domestic production used as
-- feedstock, stocks destroyed) or, unmarked, a whole year's use for a year in which no
-- shipment was recorded for that use. Existing rows are unmarked (the old meaning).
ALTER TABLE national_entries ADD COLUMN outside_customs boolean NOT NULL DEFAULT false;

-- Authorised exemptions per Party and year (essential, critical, laboratory and analytical,
-- high-ambient-temperature uses), each with the decision that authorises it. The amount is
-- in the unit of the scope's control measure: ODP t for Annexes A to E, CO2-eq t for F.
CREATE TABLE authorised_exemptions (
    exemption_key  text PRIMARY KEY CHECK (exemption_key <> ''),
    country_code   text NOT NULL CHECK (country_code ~ '^[A-Z]{2}$'),
    year           integer NOT NULL CHECK (year BETWEEN 1986 AND 2100),
    annex_scope    text NOT NULL,
    use_kind       text NOT NULL CHECK (use_kind IN ('essential', 'critical', 'laboratory', 'high-ambient-temperature')),
    amount         numeric(30, 9) NOT NULL CHECK (amount >= 0),
    unit           text NOT NULL CHECK (unit IN ('ODP t', 'CO2-eq t')),
    source         text NOT NULL CHECK (source <> ''),
    note           text NOT NULL DEFAULT '',
    updated_at     timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX authorised_exemptions_scope ON authorised_exemptions (country_code, annex_scope, year);

-- Figures as officially set: a baseline as the Parties have set it, or a year's limit (e.g.
-- of an agreed plan stricter than the treaty's). They take precedence over computed ones.
-- year is 0 for a baseline.
CREATE TABLE official_figures (
    figure_key    text PRIMARY KEY CHECK (figure_key <> ''),
    country_code  text NOT NULL CHECK (country_code ~ '^[A-Z]{2}$'),
    kind          text NOT NULL CHECK (kind IN ('baseline', 'limit')),
    annex_scope   text NOT NULL,
    year          integer NOT NULL CHECK ((kind = 'baseline' AND year = 0) OR (kind = 'limit' AND year BETWEEN 1986 AND 2100)),
    value         numeric(30, 9) NOT NULL CHECK (value >= 0),
    unit          text NOT NULL CHECK (unit IN ('ODP t', 'CO2-eq t')),
    source        text NOT NULL CHECK (source <> ''),
    updated_at    timestamptz NOT NULL DEFAULT now(),
    UNIQUE (country_code, kind, annex_scope, year)
);

-- HFC-23 generated at a facility (Article 2J paras 6-7; Article 3 para 1(d); Article 7
-- para 3 ter): per facility and year, in metric tonnes; reported beside Annex F
-- consumption, never part of it.
CREATE TABLE hfc23_facility_entries (
    entry_key              text PRIMARY KEY CHECK (entry_key <> ''),
    facility               text NOT NULL CHECK (facility <> ''),
    year                   integer NOT NULL CHECK (year BETWEEN 1986 AND 2100),
    generated_tonnes       numeric(30, 9) NOT NULL CHECK (generated_tonnes >= 0),
    captured_used_tonnes   numeric(30, 9) NOT NULL CHECK (captured_used_tonnes >= 0),
    destroyed_tonnes       numeric(30, 9) NOT NULL CHECK (destroyed_tonnes >= 0),
    emitted_tonnes         numeric(30, 9) NOT NULL CHECK (emitted_tonnes >= 0),
    note                   text NOT NULL DEFAULT '',
    updated_at             timestamptz NOT NULL DEFAULT now(),
    UNIQUE (facility, year)
);

-- What trading partners report as their exports to the reporting Party, for comparison
-- with the recorded imports.
CREATE TABLE partner_export_reports (
    report_key     text PRIMARY KEY CHECK (report_key <> ''),
    year           integer NOT NULL CHECK (year BETWEEN 1986 AND 2100),
    partner        text NOT NULL CHECK (partner ~ '^[A-Z]{2}$'),
    substance      text NOT NULL,
    metric_tonnes  numeric(30, 9) NOT NULL CHECK (metric_tonnes >= 0),
    source         text NOT NULL DEFAULT '',
    updated_at     timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX partner_export_reports_year ON partner_export_reports (year, partner, substance);

-- +goose Down
DROP TABLE partner_export_reports;
DROP TABLE hfc23_facility_entries;
DROP TABLE official_figures;
DROP TABLE authorised_exemptions;
ALTER TABLE national_entries DROP COLUMN outside_customs;
