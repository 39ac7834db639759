-- Personal API tokens for hulltally serve.
--
-- A token is shown once when it is made; only its SHA-256 is kept. It
-- belongs to one person (a login role of migration 012), expires, and can
-- be revoked (revoked_at set: the one column ever changed, so the table is
-- not append-only). The service authenticates a bearer token by its hash,
-- then runs the request as the token's person inside the database (SET
-- ROLE), so the database, not the handler, has the last word. A token of a
-- person who can no longer sign in (person disable) is refused too.
--
-- Not a hull table: on a scale-out distributed by hull it is a reference
-- (replicated) table, read on the coordinator.

CREATE TABLE api_tokens (
    id           uuid PRIMARY KEY,
    person       text NOT NULL,
    token_sha256 bytea NOT NULL UNIQUE CHECK (length(token_sha256) = 32),
    note         text NOT NULL DEFAULT '',
    created_at   timestamptz NOT NULL,
    created_by   text NOT NULL DEFAULT current_user,
    expires_at   timestamptz NOT NULL CHECK (expires_at > created_at),
    revoked_at   timestamptz
);
CREATE INDEX api_tokens_person ON api_tokens (person);

GRANT SELECT, INSERT ON api_tokens TO hulltally_admin;
GRANT UPDATE (revoked_at) ON api_tokens TO hulltally_admin;
