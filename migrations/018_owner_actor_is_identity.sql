-- Every record's actor is the identity the database authenticated, the
-- owner of the tables included: migration 014 let the owner (the command
-- line on the managed cluster, the service's own connection) name anyone
-- as the actor of an inspection, a proof test or a decision, so a record
-- could carry a name nobody signed in as. From here on the owner's records
-- carry the owner's own login, as a person's carry the person's. Records
-- already in the ledger keep the actor they were made with (the chain
-- hashes them).
CREATE OR REPLACE FUNCTION ledger_actor_is_identity() RETURNS trigger LANGUAGE plpgsql
SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    IF NEW.actor IS DISTINCT FROM current_user::text THEN
        RAISE EXCEPTION 'a record of % made by % names % as its actor: records carry the identity of who is signed in', TG_TABLE_NAME, current_user, NEW.actor
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    IF NOT pg_catalog.pg_has_role(current_user, (SELECT c.relowner FROM pg_catalog.pg_class c WHERE c.oid = TG_RELID), 'USAGE')
       AND NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles r WHERE r.rolname = current_user AND r.rolcanlogin) THEN
        RAISE EXCEPTION 'a record of % made as %, which is a group or cannot sign in: records are made by a person as themselves', TG_TABLE_NAME, current_user
            USING ERRCODE = 'insufficient_privilege';
    END IF;
    RETURN NEW;
END
$$;
