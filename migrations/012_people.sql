-- People and roles: the database, not the application, decides who may
-- write what.
--
-- Four group roles (NOLOGIN), shared by every hulltally database of the
-- server (PostgreSQL roles belong to the server; keep one ledger per
-- server where groups must not span ledgers):
--   hulltally_inspector    read and verify
--   hulltally_operator     log dives, correct a dive's site or operator, read
--   hulltally_maintenance  also hulls and spec revisions, inspections, proof
--                          tests, decisions, voids, re-assessment, reports,
--                          checkpoints
--   hulltally_admin        people (a person with this role is created with
--                          CREATEROLE, which group membership cannot give)
-- A person is a login role in one group (hulltally person add). The owner
-- of the ledger's tables (who runs the migrations; on the managed local
-- cluster, the local user) keeps every right.
--
-- Every record with an actor made by a person must carry the person's own
-- identity: a BEFORE INSERT trigger refuses any other actor (the owner's
-- records, and every record made before this migration, are as they were).
-- The append-only guards stay; no group has UPDATE, DELETE or TRUNCATE on a
-- ledger table. fleet_summary is derived (rebuilt from the ledger), so
-- writers may replace its rows.

DO $$
DECLARE
    r text;
BEGIN
    IF (SELECT count(*) FROM pg_roles WHERE rolname LIKE 'hulltally\_%') < 4
       AND NOT (SELECT rolcreaterole OR rolsuper FROM pg_roles WHERE rolname = current_user) THEN
        RAISE EXCEPTION 'migration 012 makes the hulltally group roles, which needs CREATEROLE: run it once as a role that has it (ALTER ROLE % CREATEROLE), or have an administrator create hulltally_inspector, hulltally_operator, hulltally_maintenance and hulltally_admin (NOLOGIN)', current_user
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    FOREACH r IN ARRAY ARRAY['hulltally_inspector', 'hulltally_operator', 'hulltally_maintenance', 'hulltally_admin'] LOOP
        IF NOT EXISTS (SELECT 1 FROM pg_roles WHERE rolname = r) THEN
            BEGIN
                EXECUTE format('CREATE ROLE %I NOLOGIN', r);
            EXCEPTION WHEN duplicate_object OR unique_violation THEN
                NULL; -- made at the same moment by another database's migration
            END;
        END IF;
    END LOOP;
END
$$;

GRANT USAGE ON SCHEMA public TO hulltally_inspector, hulltally_operator, hulltally_maintenance, hulltally_admin;
GRANT SELECT ON ALL TABLES IN SCHEMA public TO hulltally_inspector, hulltally_operator, hulltally_maintenance, hulltally_admin;
GRANT USAGE ON ALL SEQUENCES IN SCHEMA public TO hulltally_operator, hulltally_maintenance;

GRANT INSERT ON dives, reading_blocks, ae_hits, dive_fingerprints, dive_cycles, dive_holds, dive_profiles,
    dive_evidence, evidence_revisions, assessments, assessment_damage, audit_chain, status_history, corrections
    TO hulltally_operator, hulltally_maintenance;
GRANT INSERT ON hulls, hull_revisions, hull_components, gauges, inspections, proof_tests, decisions, dive_voids,
    issued_reports, checkpoints
    TO hulltally_maintenance;
GRANT SELECT, INSERT, UPDATE, DELETE ON fleet_summary TO hulltally_operator, hulltally_maintenance;

CREATE FUNCTION ledger_actor_is_identity() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    IF NOT pg_has_role(current_user, (SELECT relowner FROM pg_class WHERE oid = TG_RELID), 'USAGE')
       AND NEW.actor IS DISTINCT FROM current_user::text THEN
        RAISE EXCEPTION 'a record of % made by % names % as its actor: records carry the identity of the person signed in', TG_TABLE_NAME, current_user, NEW.actor
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    RETURN NEW;
END
$$;

DO $$
DECLARE
    t text;
BEGIN
    FOREACH t IN ARRAY ARRAY['hull_revisions', 'corrections', 'assessments', 'inspections', 'proof_tests', 'decisions', 'dive_voids'] LOOP
        EXECUTE format('CREATE TRIGGER %I BEFORE INSERT ON %I FOR EACH ROW EXECUTE FUNCTION ledger_actor_is_identity()', t || '_actor_is_identity', t);
    END LOOP;
END
$$;
