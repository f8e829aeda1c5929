-- Secrets every replica shares: the key that signs page tokens, so that a token one replica
-- issued is accepted by the others and a token a client made up is refused. 256 random bits
-- from two random UUIDs (gen_random_uuid, built in since PostgreSQL 13: 122 random bits each).

-- +goose Up
CREATE TABLE server_secrets (
    name       text PRIMARY KEY,
    secret     bytea NOT NULL CHECK (length(secret) >= 16),
    created_at timestamptz NOT NULL DEFAULT now()
);
INSERT INTO server_secrets (name, secret)
VALUES ('page-token', decode(replace(gen_random_uuid()::text || gen_random_uuid()::text, '-', ''), 'hex'));

-- +goose Down
DROP TABLE server_secrets;
