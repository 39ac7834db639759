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

-- A row inserted into a table the evaluation reads takes the hull's
-- summary away in the same statement, even an insert that bypasses the
-- application (and so the chain): the hull is then evaluated from the
-- ledger until its next write leaves a new summary. (An update or delete
-- is refused by the append-only guards; a row added behind the chain is
-- also found by verify.)
CREATE FUNCTION fleet_summary_forget() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    DELETE FROM fleet_summary s USING (SELECT DISTINCT hull_id FROM new_rows) n WHERE s.hull_id = n.hull_id;
    RETURN NULL;
END
$$;

DO $$
DECLARE t text;
BEGIN
    FOREACH t IN ARRAY ARRAY['hull_revisions', 'hull_components', 'gauges', 'dives', 'dive_voids', 'dive_evidence',
        'evidence_revisions', 'dive_cycles', 'dive_holds', 'assessments', 'assessment_damage', 'inspections',
        'proof_tests', 'decisions'] LOOP
        EXECUTE format('CREATE TRIGGER %I AFTER INSERT ON %I REFERENCING NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION fleet_summary_forget()',
            t || '_forgets_summary', t);
    END LOOP;
END
$$;
