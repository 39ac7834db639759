-- A dive's recorded_by must name a person, as migration 014 requires of
-- every actor: under SET ROLE to a group (hulltally_operator, say)
-- current_user is the group, and migration 016's check alone would let a
-- dive be recorded in the group's name. The owner of the tables (the
-- command line on the managed cluster, the service's own connection) keeps
-- its own name.
CREATE OR REPLACE FUNCTION ledger_dive_recorded_by() RETURNS trigger LANGUAGE plpgsql
SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    IF NEW.recorded_by IS DISTINCT FROM current_user::text THEN
        RAISE EXCEPTION 'a dive logged by % names % as who logged it: dives carry the identity of the session that logs them', current_user, NEW.recorded_by
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    IF NOT pg_catalog.pg_has_role(current_user, (SELECT c.relowner FROM pg_catalog.pg_class c WHERE c.oid = TG_RELID), 'USAGE')
       AND NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles r WHERE r.rolname = current_user AND r.rolcanlogin) THEN
        RAISE EXCEPTION 'a dive logged as %, which is a group or cannot sign in: dives are logged by a person as themselves', current_user
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    RETURN NEW;
END
$$;
