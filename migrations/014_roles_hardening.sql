-- Closing ways round the roles of migration 012 (found by review, each
-- with a test in ledger/roles_test.go, TestRolesResistRawSQL).
--
-- 1. No one but the owner creates objects in the schema. PostgreSQL 14
--    and older let everyone create in public: a person could shadow a
--    function a trigger calls.
-- 2. The actor check runs with a fixed search path and qualified calls,
--    and refuses an identity that is a group or cannot sign in (a person
--    who SET ROLE to their group would otherwise write records naming no
--    one).
-- 3. The fleet summary is written by the owner only. It is derived: a
--    person who could write it could show a hull on hold as fit until
--    verify. Inserts by anyone still delete the hull's row (the trigger
--    runs as the owner), and a hull without a row is evaluated from the
--    ledger when read.
-- 4. People are added and disabled through two owner-owned functions
--    that the admin group may call, instead of admins holding CREATEROLE
--    (which on PostgreSQL 15 and older lets them grant themselves any
--    group, or pg_execute_server_program, and change anyone's password).
--    Admins made by 012 lose CREATEROLE.
-- 5. What an operator writes beyond the dive itself is what logging a dive
--    writes, checked at commit: an assessment of kind 'dive' whose damage
--    rows are for dives inserted in the same transaction; evidence and its
--    revisions only in a transaction that inserted a dive of the hull;
--    corrections of a dive's site or operator only. Without this an
--    operator with a database login could append a re-assessment that
--    lowers the damage of earlier dives. What is left is stated in
--    DEVELOPERS.md ("What the roles do not stop").

REVOKE CREATE ON SCHEMA public FROM PUBLIC;

CREATE OR REPLACE FUNCTION ledger_actor_is_identity() RETURNS trigger LANGUAGE plpgsql
SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    IF pg_catalog.pg_has_role(current_user, (SELECT c.relowner FROM pg_catalog.pg_class c WHERE c.oid = TG_RELID), 'USAGE') THEN
        RETURN NEW;
    END IF;
    IF NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles r WHERE r.rolname = current_user AND r.rolcanlogin) THEN
        RAISE EXCEPTION 'a record of % made as %, which is a group or cannot sign in: records are made by a person as themselves', TG_TABLE_NAME, current_user
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    IF NEW.actor IS DISTINCT FROM current_user::text THEN
        RAISE EXCEPTION 'a record of % made by % names % as its actor: records carry the identity of the person signed in', TG_TABLE_NAME, current_user, NEW.actor
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    RETURN NEW;
END
$$;

REVOKE INSERT, UPDATE, DELETE ON fleet_summary FROM hulltally_operator, hulltally_maintenance;
CREATE OR REPLACE FUNCTION fleet_summary_forget() RETURNS trigger LANGUAGE plpgsql
SECURITY DEFINER SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    DELETE FROM public.fleet_summary s USING (SELECT DISTINCT hull_id FROM new_rows) n WHERE s.hull_id = n.hull_id;
    RETURN NULL;
END
$$;

DO $$
DECLARE
    r record;
BEGIN
    FOR r IN SELECT u.rolname FROM pg_catalog.pg_roles u JOIN pg_catalog.pg_auth_members m ON m.member = u.oid
            JOIN pg_catalog.pg_roles g ON g.oid = m.roleid
            WHERE g.rolname = 'hulltally_admin' AND u.rolcreaterole AND NOT u.rolsuper LOOP
        EXECUTE format('ALTER ROLE %I NOCREATEROLE', r.rolname);
    END LOOP;
END
$$;

CREATE FUNCTION hulltally_add_person(person text, grp text, verifier text) RETURNS void LANGUAGE plpgsql
SECURITY DEFINER SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    IF person !~ '^[a-z][a-z0-9._-]{1,62}$' OR person LIKE 'hulltally%' OR person LIKE 'pg\_%' THEN
        RAISE EXCEPTION 'a name is 2 to 63 characters, lower-case letters, digits, ".", "_" or "-", starting with a letter'
            USING ERRCODE = 'invalid_parameter_value';
    END IF;
    IF grp NOT IN ('hulltally_inspector', 'hulltally_operator', 'hulltally_maintenance', 'hulltally_admin') THEN
        RAISE EXCEPTION 'group %: not one of the hulltally groups', grp USING ERRCODE = 'invalid_parameter_value';
    END IF;
    IF verifier !~ '^SCRAM-SHA-256\$[0-9]+:[A-Za-z0-9+/=]+\$[A-Za-z0-9+/=]+:[A-Za-z0-9+/=]+$' THEN
        RAISE EXCEPTION 'a password is given as a SCRAM-SHA-256 verifier' USING ERRCODE = 'invalid_parameter_value';
    END IF;
    EXECUTE format('CREATE ROLE %I LOGIN NOSUPERUSER NOCREATEDB NOCREATEROLE NOREPLICATION NOBYPASSRLS INHERIT PASSWORD %L IN ROLE %I',
        person, verifier, grp);
END
$$;

CREATE FUNCTION hulltally_disable_person(person text) RETURNS void LANGUAGE plpgsql
SECURITY DEFINER SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    IF NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles u JOIN pg_catalog.pg_auth_members m ON m.member = u.oid
            JOIN pg_catalog.pg_roles g ON g.oid = m.roleid
            WHERE u.rolname = person AND NOT u.rolsuper
            AND g.rolname IN ('hulltally_inspector', 'hulltally_operator', 'hulltally_maintenance', 'hulltally_admin')) THEN
        RAISE EXCEPTION 'no person % (a login role in a hulltally group)', person USING ERRCODE = 'invalid_parameter_value';
    END IF;
    EXECUTE format('ALTER ROLE %I NOLOGIN', person);
    PERFORM pg_catalog.pg_terminate_backend(a.pid) FROM pg_catalog.pg_stat_activity a WHERE a.usename = person;
END
$$;

REVOKE ALL ON FUNCTION hulltally_add_person(text, text, text), hulltally_disable_person(text) FROM PUBLIC;
GRANT EXECUTE ON FUNCTION hulltally_add_person(text, text, text), hulltally_disable_person(text) TO hulltally_admin;

CREATE FUNCTION ledger_operator_writes() RETURNS trigger LANGUAGE plpgsql
SET search_path = pg_catalog, pg_temp AS $$
DECLARE
    xact text := (pg_catalog.txid_current() % 4294967296)::text;
BEGIN
    IF pg_catalog.pg_has_role(current_user, (SELECT c.relowner FROM pg_catalog.pg_class c WHERE c.oid = TG_RELID), 'USAGE')
       OR pg_catalog.pg_has_role(current_user, 'hulltally_maintenance', 'MEMBER') THEN
        RETURN NULL;
    END IF;
    -- Nested IFs: a condition naming a column the table lacks fails even
    -- when an earlier one is false.
    IF TG_TABLE_NAME = 'assessments' THEN
        IF NEW.kind <> 'dive' THEN
            RAISE EXCEPTION 'an assessment of kind % by %: only maintenance re-assesses', NEW.kind, current_user USING ERRCODE = 'insufficient_privilege';
        END IF;
    ELSIF TG_TABLE_NAME = 'assessment_damage' THEN
        IF EXISTS (SELECT 1 FROM pg_catalog.unnest(NEW.dive_ids) d(id)
                WHERE NOT EXISTS (SELECT 1 FROM public.dives x WHERE x.hull_id = NEW.hull_id AND x.id = d.id AND x.xmin::text = xact)) THEN
            RAISE EXCEPTION 'damage rows by % for dives not logged in this transaction: only maintenance re-assesses', current_user USING ERRCODE = 'insufficient_privilege';
        END IF;
    ELSIF TG_TABLE_NAME IN ('dive_evidence', 'evidence_revisions') THEN
        IF NOT EXISTS (SELECT 1 FROM public.dives x WHERE x.hull_id = NEW.hull_id AND x.xmin::text = xact) THEN
            RAISE EXCEPTION 'evidence by % outside the logging of a dive of the hull', current_user USING ERRCODE = 'insufficient_privilege';
        END IF;
    ELSIF TG_TABLE_NAME = 'corrections' THEN
        IF NEW.field NOT IN ('site', 'operator') THEN
            RAISE EXCEPTION 'a correction of % by %: only a dive''s site or operator is corrected', NEW.field, current_user USING ERRCODE = 'insufficient_privilege';
        END IF;
    END IF;
    RETURN NULL;
END
$$;

DO $$
DECLARE
    t text;
BEGIN
    FOREACH t IN ARRAY ARRAY['assessments', 'assessment_damage', 'dive_evidence', 'evidence_revisions', 'corrections'] LOOP
        -- Checked at commit: logging a dive stores its evidence and
        -- assessment before the dive row.
        EXECUTE format('CREATE CONSTRAINT TRIGGER %I AFTER INSERT ON %I DEFERRABLE INITIALLY DEFERRED FOR EACH ROW EXECUTE FUNCTION ledger_operator_writes()', t || '_operator_writes', t);
    END LOOP;
END
$$;
