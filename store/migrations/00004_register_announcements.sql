-- +goose Up
-- Every change to parties, licences and quota lines (amounts drawn included) is announced
-- on the channel halovet_register once the transaction commits, so that every replica
-- rebuilds its check environment; triggers catch changes made by any client, not only by
-- halovet. Payloads: 'parties', 'licence:' || licence_number, or '*' (reload everything:
-- a table truncated, or a licence number too long for a payload). PostgreSQL folds
-- identical announcements of one transaction into one. Older servers serve this schema as
-- before (they do not listen on the channel), so it adds no schema_compatibility row.

-- +goose StatementBegin
CREATE FUNCTION register_announce() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    num text;
BEGIN
    IF TG_TABLE_NAME = 'parties' THEN
        PERFORM pg_notify('halovet_register', 'parties');
        RETURN NULL;
    END IF;
    IF TG_LEVEL = 'STATEMENT' THEN
        PERFORM pg_notify('halovet_register', '*');
        RETURN NULL;
    END IF;
    IF TG_OP = 'DELETE' THEN
        num := OLD.licence_number;
    ELSE
        num := NEW.licence_number;
    END IF;
    IF octet_length(num) > 7000 THEN
        PERFORM pg_notify('halovet_register', '*');
    ELSE
        PERFORM pg_notify('halovet_register', 'licence:' || num);
    END IF;
    IF TG_OP = 'UPDATE' AND OLD.licence_number IS DISTINCT FROM NEW.licence_number THEN
        PERFORM pg_notify('halovet_register', '*');
    END IF;
    RETURN NULL;
END;
$$;
-- +goose StatementEnd

CREATE TRIGGER parties_announce AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON parties
    FOR EACH STATEMENT EXECUTE FUNCTION register_announce();
CREATE TRIGGER licences_announce AFTER INSERT OR UPDATE OR DELETE ON licences
    FOR EACH ROW EXECUTE FUNCTION register_announce();
CREATE TRIGGER licences_announce_truncate AFTER TRUNCATE ON licences
    FOR EACH STATEMENT EXECUTE FUNCTION register_announce();
CREATE TRIGGER quota_lines_announce AFTER INSERT OR UPDATE OR DELETE ON quota_lines
    FOR EACH ROW EXECUTE FUNCTION register_announce();
CREATE TRIGGER quota_lines_announce_truncate AFTER TRUNCATE ON quota_lines
    FOR EACH STATEMENT EXECUTE FUNCTION register_announce();

-- +goose Down
DROP TRIGGER quota_lines_announce_truncate ON quota_lines;
DROP TRIGGER quota_lines_announce ON quota_lines;
DROP TRIGGER licences_announce_truncate ON licences;
DROP TRIGGER licences_announce ON licences;
DROP TRIGGER parties_announce ON parties;
DROP FUNCTION register_announce();
