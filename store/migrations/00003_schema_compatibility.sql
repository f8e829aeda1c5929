-- +goose Up
-- Which older servers a schema still serves. During a rolling upgrade the new binary's
-- migration runs while old replicas keep serving; they stay ready on a newer schema unless
-- a migration says they cannot: such a migration inserts a row naming its own version, the
-- oldest server schema version that still works with it, and why. A server whose newest
-- embedded migration is older than the largest oldest_server_schema of the applied rows
-- reports NOT_SERVING and logs the reason.
CREATE TABLE schema_compatibility (
    version              bigint PRIMARY KEY,
    oldest_server_schema bigint NOT NULL CHECK (oldest_server_schema <= version),
    reason               text   NOT NULL CHECK (reason <> '')
);

-- +goose Down
DROP TABLE schema_compatibility;
