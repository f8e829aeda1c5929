-- +goose Up
-- The life of a recorded shipment, replays that answer what was stored, and closed
-- reporting years.
--
-- A shipment row is live, voided or superseded. Voiding keeps the row (and its figures)
-- and moves its quota draws to released_draws, giving the amounts back to the lines; a
-- correction supersedes the live row with a new version under the same company and key,
-- checked like a new record, its draws replacing the old ones in one transaction. Only
-- live rows count in consumption and draw on quota. Keys stay taken by voided rows, so a
-- retried file never brings a voided shipment back.
--
-- verdict is the verdict given when the row was stored (a halovet.v1.Verdict in protocol
-- buffer encoding); a replay of the same company, key and content answers it unchanged.
-- NULL for rows stored before this migration: they are answered by a fresh check.
--
-- closed_years: a reporting year an officer closed; nothing declared in it is recorded,
-- voided or corrected until it is reopened. Writers take PostgreSQL's advisory lock
-- (class 1751215222, the year) shared, closing and reopening take it exclusively, so a
-- close waits for the writes of that year in flight and no write slips past it.
--
-- Not compatible with the previous release: a server built before it would count voided
-- and superseded rows in consumption and would not look at closed years.
ALTER TABLE shipments
    ADD COLUMN state         text NOT NULL DEFAULT 'live' CHECK (state IN ('live', 'voided', 'superseded')),
    ADD COLUMN version       integer NOT NULL DEFAULT 1 CHECK (version > 0),
    ADD COLUMN previous_id   bigint REFERENCES shipments (shipment_id),
    ADD COLUMN verdict       bytea,
    ADD COLUMN changed_at    timestamptz,
    ADD COLUMN change_reason text NOT NULL DEFAULT '';
ALTER TABLE shipments DROP CONSTRAINT shipments_company_id_record_key_key;
-- One current row (live or voided) per company and key; superseded versions beside it.
CREATE UNIQUE INDEX shipments_current_key ON shipments (company_id, record_key) WHERE state <> 'superseded';
CREATE UNIQUE INDEX shipments_key_version ON shipments (company_id, record_key, version);
CREATE INDEX shipments_licence ON shipments (licence_number, declaration_date);
CREATE INDEX shipments_company_date ON shipments (company_id, declaration_date);

CREATE TABLE released_draws (
    shipment_id     bigint NOT NULL REFERENCES shipments (shipment_id) ON DELETE CASCADE,
    licence_number  text NOT NULL,
    line_number     integer NOT NULL,
    amount          numeric(30, 9) NOT NULL CHECK (amount >= 0),
    released_at     timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (shipment_id, licence_number, line_number)
);

CREATE TABLE closed_years (
    year       integer PRIMARY KEY CHECK (year BETWEEN 1986 AND 2200),
    closed_at  timestamptz NOT NULL DEFAULT now(),
    closed_by  text NOT NULL DEFAULT '',
    reason     text NOT NULL CHECK (reason <> '')
);

INSERT INTO schema_compatibility (version, oldest_server_schema, reason)
VALUES (8, 8, 'shipments gain a state (voided and superseded rows must not count) and closed years');

-- +goose Down
DELETE FROM schema_compatibility WHERE version = 8;
DROP TABLE closed_years;
DROP TABLE released_draws;
DROP INDEX shipments_company_date;
DROP INDEX shipments_licence;
DROP INDEX shipments_key_version;
DROP INDEX shipments_current_key;
ALTER TABLE shipments DROP COLUMN previous_id;
DELETE FROM shipments WHERE state <> 'live';
ALTER TABLE shipments ADD CONSTRAINT shipments_company_id_record_key_key UNIQUE (company_id, record_key);
ALTER TABLE shipments
    DROP COLUMN change_reason,
    DROP COLUMN changed_at,
    DROP COLUMN verdict,
    DROP COLUMN version,
    DROP COLUMN state;
