-- +goose Up
-- The halovet schema: catalogue, parties and licensing, shipments with their computed
-- figures and quota draws, national entries, and an append-only audit log.

-- Catalogue ---------------------------------------------------------------------------
CREATE TABLE substances (
    designation     text PRIMARY KEY,
    chemical_name   text NOT NULL DEFAULT '',
    formula         text NOT NULL,
    structure       text NOT NULL DEFAULT '',
    cas_number      text NOT NULL DEFAULT '',
    annex_group     text NOT NULL DEFAULT '',
    odp             double precision NOT NULL DEFAULT 0 CHECK (odp >= 0),
    odp_range_low   double precision NOT NULL DEFAULT 0,
    odp_range_high  double precision NOT NULL DEFAULT 0,
    isomer_count    integer NOT NULL DEFAULT 1,
    lifetime_years  double precision NOT NULL DEFAULT 0,
    molar_mass      double precision NOT NULL DEFAULT 0,
    hs2017          text[] NOT NULL DEFAULT '{}',
    hs2022          text[] NOT NULL DEFAULT '{}',
    safety_class    text NOT NULL DEFAULT '',
    sources         text NOT NULL DEFAULT '',
    -- origin says whether the row comes from the embedded seed ('seed') or an
    -- administrator's correction ('admin'); seed sync never overwrites 'admin' rows.
    origin          text NOT NULL DEFAULT 'seed' CHECK (origin IN ('seed', 'admin')),
    updated_at      timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE substance_gwps (
    designation  text NOT NULL REFERENCES substances (designation) ON DELETE CASCADE,
    gwp_set      text NOT NULL CHECK (gwp_set IN ('MP', 'AR4', 'AR5', 'AR6')),
    gwp100       double precision NOT NULL,
    PRIMARY KEY (designation, gwp_set)
);

CREATE TABLE blends (
    designation   text PRIMARY KEY,
    blend_type    text NOT NULL DEFAULT '',
    safety_class  text NOT NULL DEFAULT '',
    sources       text NOT NULL DEFAULT '',
    updated_at    timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE blend_components (
    blend        text NOT NULL REFERENCES blends (designation) ON DELETE CASCADE,
    position     integer NOT NULL,
    component    text NOT NULL REFERENCES substances (designation),
    mass_pct     double precision NOT NULL CHECK (mass_pct > 0 AND mass_pct <= 100),
    tol_plus     double precision NOT NULL DEFAULT 0,
    tol_minus    double precision NOT NULL DEFAULT 0,
    PRIMARY KEY (blend, position)
);

-- Synonyms of substances and blends; the resolver indexes them in memory.
CREATE TABLE aliases (
    alias        text NOT NULL,
    designation  text NOT NULL,
    entry_kind   text NOT NULL CHECK (entry_kind IN ('substance', 'blend')),
    PRIMARY KEY (designation, alias)
);

-- Parties, companies, licences ----------------------------------------------------------
CREATE TABLE parties (
    country_code     char(2) PRIMARY KEY CHECK (country_code ~ '^[A-Z]{2}$'),
    name             text NOT NULL DEFAULT '',
    party_type       text NOT NULL CHECK (party_type IN ('article-5', 'non-article-5', 'non-party')),
    hfc_group        text NOT NULL DEFAULT '',
    reporting_party  boolean NOT NULL DEFAULT false,
    -- Annex group -> first day the country is bound by that group's control measures.
    bound_from       jsonb NOT NULL DEFAULT '{}',
    updated_at       timestamptz NOT NULL DEFAULT now()
);
-- At most one reporting Party.
CREATE UNIQUE INDEX parties_one_reporting ON parties (reporting_party) WHERE reporting_party;

CREATE TABLE companies (
    company_id    text PRIMARY KEY CHECK (company_id <> ''),
    name          text NOT NULL DEFAULT '',
    country_code  char(2) NOT NULL DEFAULT '',
    updated_at    timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE licences (
    licence_number    text PRIMARY KEY CHECK (licence_number <> ''),
    company_id        text NOT NULL REFERENCES companies (company_id),
    directions        text[] NOT NULL,
    valid_from        date NOT NULL,
    valid_to          date NOT NULL CHECK (valid_to >= valid_from),
    status            text NOT NULL CHECK (status IN ('draft', 'active', 'suspended', 'revoked')),
    special_purposes  text[] NOT NULL DEFAULT '{}',
    created_at        timestamptz NOT NULL DEFAULT now(),
    updated_at        timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX licences_company ON licences (company_id);

-- Amounts are numeric so that drawn equals the exact sum of the recorded draws.
CREATE TABLE quota_lines (
    licence_number  text NOT NULL REFERENCES licences (licence_number) ON DELETE CASCADE,
    line_number     integer NOT NULL CHECK (line_number > 0),
    annex_group     text NOT NULL DEFAULT '',
    substance       text NOT NULL DEFAULT '',
    unit            text NOT NULL CHECK (unit IN ('metric-t', 'odp-t', 'co2e-t')),
    allocated       numeric(30, 9) NOT NULL CHECK (allocated >= 0),
    drawn           numeric(30, 9) NOT NULL DEFAULT 0,
    PRIMARY KEY (licence_number, line_number),
    CHECK ((annex_group = '') <> (substance = '')),
    -- The last line of defence against over-drawing; the recorder checks first.
    CHECK (drawn >= 0 AND drawn <= allocated)
);

-- Shipments ---------------------------------------------------------------------------
CREATE TABLE shipments (
    shipment_id            bigserial PRIMARY KEY,
    company_id             text NOT NULL,
    record_key             text NOT NULL,
    fingerprint            text NOT NULL,
    direction              text NOT NULL,
    licence_number         text NOT NULL DEFAULT '',
    partner_country        text NOT NULL DEFAULT '',
    declaration_date       date NOT NULL,
    year                   integer NOT NULL,
    resolved_designation   text NOT NULL,
    entry_kind             text NOT NULL,
    purpose                text NOT NULL DEFAULT '',
    condition              text NOT NULL DEFAULT '',
    net_mass_kg            numeric(30, 9) NOT NULL,
    odp_tonnes             numeric(30, 9) NOT NULL,
    co2e_tonnes            numeric(30, 9) NOT NULL,
    counts_in_consumption  boolean NOT NULL,
    partner_non_party      boolean NOT NULL DEFAULT false,
    record                 jsonb NOT NULL,
    recorded_at            timestamptz NOT NULL DEFAULT now(),
    -- A retried record with the same key is found here and never counted twice.
    UNIQUE (company_id, record_key)
);
CREATE INDEX shipments_year ON shipments (year);

CREATE TABLE shipment_components (
    shipment_id  bigint NOT NULL REFERENCES shipments (shipment_id) ON DELETE CASCADE,
    designation  text NOT NULL,
    annex_group  text NOT NULL DEFAULT '',
    mass_kg      numeric(30, 9) NOT NULL,
    odp_tonnes   numeric(30, 9) NOT NULL,
    co2e_tonnes  numeric(30, 9) NOT NULL,
    PRIMARY KEY (shipment_id, designation)
);

CREATE TABLE quota_draws (
    shipment_id     bigint NOT NULL REFERENCES shipments (shipment_id) ON DELETE CASCADE,
    licence_number  text NOT NULL,
    line_number     integer NOT NULL,
    amount          numeric(30, 9) NOT NULL CHECK (amount >= 0),
    PRIMARY KEY (shipment_id, licence_number, line_number),
    FOREIGN KEY (licence_number, line_number) REFERENCES quota_lines (licence_number, line_number)
);

-- National entries (production, destruction, feedstock, QPS, historical trade) ----------
CREATE TABLE national_entries (
    entry_key      text PRIMARY KEY CHECK (entry_key <> ''),
    year           integer NOT NULL CHECK (year BETWEEN 1986 AND 2200),
    entry_type     text NOT NULL,
    substance      text NOT NULL REFERENCES substances (designation),
    metric_tonnes  numeric(30, 9) NOT NULL,
    note           text NOT NULL DEFAULT '',
    updated_at     timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX national_entries_year ON national_entries (year);

-- Audit log: append-only --------------------------------------------------------------
CREATE TABLE audit_log (
    audit_id    bigserial PRIMARY KEY,
    at          timestamptz NOT NULL DEFAULT now(),
    actor       text NOT NULL DEFAULT '',
    action      text NOT NULL,
    entity      text NOT NULL,
    entity_key  text NOT NULL,
    reason      text NOT NULL DEFAULT '',
    detail      jsonb NOT NULL DEFAULT '{}'
);

-- +goose StatementBegin
CREATE FUNCTION audit_log_append_only() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'audit_log is append-only';
END;
$$;
-- +goose StatementEnd

CREATE TRIGGER audit_log_no_update BEFORE UPDATE OR DELETE ON audit_log
    FOR EACH ROW EXECUTE FUNCTION audit_log_append_only();

-- +goose Down
DROP TABLE audit_log;
DROP FUNCTION audit_log_append_only();
DROP TABLE national_entries;
DROP TABLE quota_draws;
DROP TABLE shipment_components;
DROP TABLE shipments;
DROP TABLE quota_lines;
DROP TABLE licences;
DROP TABLE companies;
DROP TABLE parties;
DROP TABLE aliases;
DROP TABLE blend_components;
DROP TABLE blends;
DROP TABLE substance_gwps;
DROP TABLE substances;
