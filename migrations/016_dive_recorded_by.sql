-- Who logged each dive: the database identity of the session that
-- recorded it (current_user: the person, under the service's SET ROLE to
-- the person's role; the login itself on the command line), checked here
-- and never taken from the client. It is part of the dive's canonical
-- bytes, so the audit chain covers it. Dives logged before this migration
-- have none (NULL): who logged them was not kept, and their canonical
-- bytes stay as they were hashed.
ALTER TABLE dives ADD COLUMN recorded_by text CHECK (recorded_by <> '');

CREATE FUNCTION ledger_dive_recorded_by() RETURNS trigger LANGUAGE plpgsql
SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    IF NEW.recorded_by IS DISTINCT FROM current_user::text THEN
        RAISE EXCEPTION 'a dive logged by % names % as who logged it: dives carry the identity of the session that logs them', current_user, NEW.recorded_by
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    RETURN NEW;
END
$$;

CREATE TRIGGER dives_recorded_by BEFORE INSERT ON dives FOR EACH ROW EXECUTE FUNCTION ledger_dive_recorded_by();
