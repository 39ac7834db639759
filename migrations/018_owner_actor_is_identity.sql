-- Every record's actor is the identity the database authenticated, the
-- owner of the tables included: migration 014 let the owner (the command
-- line on the managed cluster, the service's own connection) name anyone
-- as the actor of an inspection, a proof test or a decision, so a record
-- could carry a name nobody signed in as. From here on the owner's records
-- carry the owner's own login, as a person's carry the person's, and
-- the login must be one that signs in (checked for dives' recorded_by
-- too). Records
-- already in the ledger keep the actor they were made with (the chain
-- hashes them).
CREATE OR REPLACE FUNCTION ledger_actor_is_identity() RETURNS trigger LANGUAGE plpgsql
SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    IF NEW.actor IS DISTINCT FROM current_user::text THEN
        RAISE EXCEPTION 'a record of % made by % names % as its actor: records carry the identity of who is signed in', TG_TABLE_NAME, current_user, NEW.actor
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    -- The owner included: a role that cannot sign in (a group, or a
    -- NOLOGIN role in the owner's group reached by SET ROLE) is a name
    -- nobody signed in as.
    IF NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles r WHERE r.rolname = current_user AND r.rolcanlogin) THEN
        RAISE EXCEPTION 'a record of % made as %, which is a group or cannot sign in: records are made by someone signed in as themselves', TG_TABLE_NAME, current_user
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    RETURN NEW;
END
$$;

-- The same for a dive's recorded_by (migration 017 exempted the owner's
-- groups from the sign-in check).
CREATE OR REPLACE FUNCTION ledger_dive_recorded_by() RETURNS trigger LANGUAGE plpgsql
SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    IF NEW.recorded_by IS DISTINCT FROM current_user::text THEN
        RAISE EXCEPTION 'a dive logged by % names % as who logged it: dives carry the identity of the session that logs them', current_user, NEW.recorded_by
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    IF NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles r WHERE r.rolname = current_user AND r.rolcanlogin) THEN
        RAISE EXCEPTION 'a dive logged as %, which is a group or cannot sign in: dives are logged by someone signed in as themselves', current_user
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    RETURN NEW;
END
$$;
