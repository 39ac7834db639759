-- The fleet summary: one row per hull with what the fleet view shows (its
-- status and reasons, damage against the allowable, remaining life, last
-- dive). Derived, not ledger: it is not chained and not append-only; it
-- is written after every write that evaluates a hull, rebuilt from the
-- ledger by `hulltally fleet rebuild`, and checked against the ledger by
-- `hulltally verify`.
--
-- A row is used only while it still describes the hull: its chain head
-- (chain_seq, chain_hash) is the hull's head now, its basis is the
-- reader's (configuration, rules and build), and the moment read lies in
-- [evaluated_at, stable_until) (stable_until NULL: nothing in the hull's
-- facts depends on the time). Any other row is ignored and the hull is
-- evaluated from the ledger, so a missing, old or tampered-with row can
-- make the view slower, never better.
CREATE TABLE fleet_summary (
    hull_id      uuid PRIMARY KEY REFERENCES hulls(id),
    chain_seq    bigint NOT NULL,
    chain_hash   bytea NOT NULL CHECK (length(chain_hash) = 32),
    basis        bytea NOT NULL CHECK (length(basis) = 32),
    evaluated_at timestamptz NOT NULL,
    stable_until timestamptz,
    status       text NOT NULL,
    summary_json text NOT NULL
);
