-- +goose Up
-- A licence's life as a dated history. Every change of status (issue, activation,
-- suspension, reinstatement, revocation) and every amendment of its terms or quota lines is
-- one row of licence_events with the date it takes effect and the reason given. A
-- declaration is judged by the status the licence had on the declaration date: the status
-- of the last status event effective on or before that date (events of one licence are
-- recorded in date order, so event_id breaks ties on one day).
--
-- licences.status keeps the status of the last status event (the licence as it stands at
-- the end of its history), which is what an older server reads. licences.version counts
-- the changes of a licence's terms and status (not its draws) so that a caller can say
-- which version it amends. quota_lines.closed_on is the day a line stopped taking draws
-- (its allocation is then cut to what was drawn, so nothing more can be drawn on it even by
-- an older server); a line's unit, scope and company never change once it has draws.
--
-- Compatible with the previous release: columns with defaults and a new table. A status
-- set by an older server (which writes no event) is caught by a trigger that records it
-- as taking effect on the day it was written.
ALTER TABLE licences ADD COLUMN version integer NOT NULL DEFAULT 1 CHECK (version > 0);
ALTER TABLE quota_lines ADD COLUMN closed_on date;

CREATE TABLE licence_events (
    event_id        bigserial PRIMARY KEY,
    licence_number  text NOT NULL REFERENCES licences (licence_number) ON DELETE CASCADE,
    kind            text NOT NULL CHECK (kind IN ('issued', 'activated', 'suspended', 'reinstated',
                        'revoked', 'amended', 'line-closed', 'status-undated')),
    effective_on    date NOT NULL,
    -- The status from effective_on on; NULL for an event that does not change the status.
    status          text CHECK (status IN ('draft', 'active', 'suspended', 'revoked')),
    reason          text NOT NULL DEFAULT '',
    actor           text NOT NULL DEFAULT '',
    recorded_at     timestamptz NOT NULL DEFAULT now(),
    -- What changed: for an amendment the terms before and after, for a closed line its
    -- allocation, what was drawn and the line opened in its place.
    detail          jsonb NOT NULL DEFAULT '{}'
);
CREATE INDEX licence_events_licence ON licence_events (licence_number, event_id);

-- The history of licences issued before this migration starts with their status then.
INSERT INTO licence_events (licence_number, kind, effective_on, status, reason, actor)
SELECT licence_number, 'issued', valid_from, status,
       'status as it stood when the dated history began', 'migration'
FROM licences;

-- +goose StatementBegin
CREATE FUNCTION licence_status_undated() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    IF NOT EXISTS (SELECT 1 FROM licence_events e WHERE e.licence_number = NEW.licence_number) THEN
        INSERT INTO licence_events (licence_number, kind, effective_on, status, reason, actor)
        VALUES (NEW.licence_number, 'issued', OLD.valid_from, OLD.status,
                'status as it stood before a status written without a dated event', '');
    END IF;
    IF (SELECT e.status FROM licence_events e
        WHERE e.licence_number = NEW.licence_number AND e.status IS NOT NULL
        ORDER BY e.event_id DESC LIMIT 1) IS DISTINCT FROM NEW.status THEN
        INSERT INTO licence_events (licence_number, kind, effective_on, status, reason, actor)
        VALUES (NEW.licence_number, 'status-undated', current_date, NEW.status,
                'status written without a dated event (an older server)', '');
    END IF;
    RETURN NULL;
END;
$$;
-- +goose StatementEnd

CREATE TRIGGER licences_status_undated AFTER UPDATE OF status ON licences
    FOR EACH ROW WHEN (OLD.status IS DISTINCT FROM NEW.status)
    EXECUTE FUNCTION licence_status_undated();

-- +goose Down
DROP TRIGGER licences_status_undated ON licences;
DROP FUNCTION licence_status_undated();
DROP TABLE licence_events;
ALTER TABLE quota_lines DROP COLUMN closed_on;
ALTER TABLE licences DROP COLUMN version;
