-- +goose Up
-- Who may do what, and a trail that names them.
--
-- credentials: the secrets halovet issues, stored only as the SHA-256 of the secret; a
-- trader's credential is bound to one company. Revoking sets revoked_at (rows are never
-- deleted, so the audit trail's credential ids stay resolvable). Servers read a credential
-- again at most 1 s after their last read, so a revocation needs no announcement.
--
-- audit_log gains the credential id and request id of the call apart from the actor's
-- name, and a hash chain: chain_seq numbers the events in the order they were chained,
-- prev_hash is the previous event's hash, hash = SHA-256(prev_hash || the canonical
-- content, see audit_event_hash). The chain head is one row locked by every insert, so
-- events chain in one line whatever the isolation level (a REPEATABLE READ writer that
-- loses the race gets a serialization failure and is retried by the store). TRUNCATE is
-- refused as UPDATE and DELETE already were.
--
-- shipments carry who recorded them. Older servers keep working on this schema (new
-- columns have defaults, the chain is filled in by the trigger), so no
-- schema_compatibility row.

CREATE TABLE credentials (
    credential_id  text PRIMARY KEY CHECK (credential_id ~ '^[0-9a-f]{16}$'),
    name           text NOT NULL CHECK (name <> '' AND length(name) <= 200),
    role           text NOT NULL CHECK (role IN ('officer', 'customs', 'trader', 'auditor', 'reader')),
    company_id     text REFERENCES companies (company_id),
    secret_sha256  bytea NOT NULL CHECK (length(secret_sha256) = 32),
    created_at     timestamptz NOT NULL DEFAULT now(),
    created_by     text NOT NULL DEFAULT '',
    expires_at     timestamptz,
    revoked_at     timestamptz,
    revoked_by     text NOT NULL DEFAULT '',
    CHECK ((role = 'trader') = (company_id IS NOT NULL))
);

CREATE TRIGGER credentials_no_delete BEFORE DELETE ON credentials
    FOR EACH ROW EXECUTE FUNCTION audit_log_append_only();
CREATE TRIGGER credentials_no_truncate BEFORE TRUNCATE ON credentials
    FOR EACH STATEMENT EXECUTE FUNCTION audit_log_append_only();

ALTER TABLE shipments
    ADD COLUMN recorded_by text NOT NULL DEFAULT '',
    ADD COLUMN recorded_credential text NOT NULL DEFAULT '';

ALTER TABLE audit_log
    ADD COLUMN credential_id text NOT NULL DEFAULT '',
    ADD COLUMN request_id text NOT NULL DEFAULT '',
    ADD COLUMN chain_seq bigint,
    ADD COLUMN prev_hash bytea,
    ADD COLUMN hash bytea;

CREATE TABLE audit_chain_head (
    one       boolean PRIMARY KEY DEFAULT true CHECK (one),
    seq       bigint NOT NULL DEFAULT 0,
    hash      bytea NOT NULL DEFAULT ''::bytea
);
INSERT INTO audit_chain_head DEFAULT VALUES;
CREATE TRIGGER audit_chain_head_no_delete BEFORE DELETE ON audit_chain_head
    FOR EACH ROW EXECUTE FUNCTION audit_log_append_only();
CREATE TRIGGER audit_chain_head_no_truncate BEFORE TRUNCATE ON audit_chain_head
    FOR EACH STATEMENT EXECUTE FUNCTION audit_log_append_only();

-- The canonical content of an event: every field but the hash itself, each written as its
-- length in characters, ':' and the text, in a fixed order; the time in UTC to the
-- microsecond; the detail as jsonb prints it (keys sorted, one form per value).
-- +goose StatementBegin
CREATE FUNCTION audit_event_hash(prev bytea, a audit_log) RETURNS bytea
    LANGUAGE sql STABLE AS $$
    SELECT sha256(coalesce(prev, ''::bytea) || convert_to(
        (SELECT string_agg(length(f)::text || ':' || f, '' ORDER BY n)
         FROM unnest(ARRAY[
             a.chain_seq::text,
             a.audit_id::text,
             to_char(a.at AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.US"Z"'),
             a.actor, a.credential_id, a.request_id, a.action, a.entity, a.entity_key,
             a.reason, a.detail::text]) WITH ORDINALITY AS t(f, n)), 'UTF8'))
$$;
-- +goose StatementEnd

-- +goose StatementBegin
CREATE FUNCTION audit_log_chain() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    head_seq  bigint;
    head_hash bytea;
BEGIN
    UPDATE audit_chain_head SET seq = seq + 1 WHERE one RETURNING seq, hash INTO head_seq, head_hash;
    NEW.chain_seq := head_seq;
    NEW.prev_hash := head_hash;
    NEW.hash := audit_event_hash(head_hash, NEW);
    UPDATE audit_chain_head SET hash = NEW.hash WHERE one;
    RETURN NEW;
END;
$$;
-- +goose StatementEnd

-- Chain the events already in the log, in the order they were written.
ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update;
-- +goose StatementBegin
DO $$
DECLARE
    r audit_log;
    prev bytea := ''::bytea;
    n bigint := 0;
BEGIN
    FOR r IN SELECT * FROM audit_log ORDER BY audit_id LOOP
        n := n + 1;
        r.chain_seq := n;
        r.prev_hash := prev;
        r.hash := audit_event_hash(prev, r);
        UPDATE audit_log SET chain_seq = r.chain_seq, prev_hash = r.prev_hash, hash = r.hash
            WHERE audit_id = r.audit_id;
        prev := r.hash;
    END LOOP;
    UPDATE audit_chain_head SET seq = n, hash = prev;
END;
$$;
-- +goose StatementEnd
ALTER TABLE audit_log ENABLE TRIGGER audit_log_no_update;

CREATE TRIGGER audit_log_chain BEFORE INSERT ON audit_log
    FOR EACH ROW EXECUTE FUNCTION audit_log_chain();
CREATE TRIGGER audit_log_no_truncate BEFORE TRUNCATE ON audit_log
    FOR EACH STATEMENT EXECUTE FUNCTION audit_log_append_only();
CREATE UNIQUE INDEX audit_log_chain_seq ON audit_log (chain_seq);
CREATE INDEX audit_log_actor ON audit_log (actor, at);
CREATE INDEX audit_log_object ON audit_log (entity, entity_key);
CREATE INDEX audit_log_at ON audit_log (at);

-- +goose Down
DROP INDEX audit_log_at;
DROP INDEX audit_log_object;
DROP INDEX audit_log_actor;
DROP INDEX audit_log_chain_seq;
DROP TRIGGER audit_log_no_truncate ON audit_log;
DROP TRIGGER audit_log_chain ON audit_log;
DROP FUNCTION audit_log_chain();
DROP FUNCTION audit_event_hash(bytea, audit_log);
DROP TABLE audit_chain_head;
ALTER TABLE audit_log DROP COLUMN hash, DROP COLUMN prev_hash, DROP COLUMN chain_seq,
    DROP COLUMN request_id, DROP COLUMN credential_id;
ALTER TABLE shipments DROP COLUMN recorded_credential, DROP COLUMN recorded_by;
DROP TABLE credentials;
