-- Tokens are made and revoked through owner-owned functions (found by
-- review): with INSERT and UPDATE on api_tokens an admin could write a
-- token with any creator, time and expiry, or clear a revocation. The
-- functions stamp the creator (the caller's login, session_user) and the
-- time, bound the expiry to 1..366 days, make tokens only for people (a
-- login role in a hulltally group), and never clear revoked_at.

REVOKE INSERT, UPDATE ON api_tokens FROM hulltally_admin;

CREATE FUNCTION hulltally_create_token(token_id uuid, person_name text, token_hash bytea, token_note text, days integer)
RETURNS TABLE (created_at timestamptz, created_by text, expires_at timestamptz) LANGUAGE plpgsql
SECURITY DEFINER SET search_path = pg_catalog, pg_temp AS $$
DECLARE
    t timestamptz := date_trunc('milliseconds', pg_catalog.clock_timestamp());
BEGIN
    IF days IS NULL OR days < 1 OR days > 366 THEN
        RAISE EXCEPTION 'a token lasts 1 to 366 days' USING ERRCODE = 'invalid_parameter_value';
    END IF;
    IF NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles u JOIN pg_catalog.pg_auth_members m ON m.member = u.oid
            JOIN pg_catalog.pg_roles g ON g.oid = m.roleid
            WHERE u.rolname = person_name AND u.rolcanlogin AND NOT u.rolsuper
            AND g.rolname IN ('hulltally_inspector', 'hulltally_operator', 'hulltally_maintenance', 'hulltally_admin')) THEN
        RAISE EXCEPTION 'no person % who may sign in', person_name USING ERRCODE = 'invalid_parameter_value';
    END IF;
    INSERT INTO public.api_tokens (id, person, token_sha256, note, created_at, created_by, expires_at)
        VALUES (token_id, person_name, token_hash, coalesce(token_note, ''), t, session_user, t + pg_catalog.make_interval(days => days));
    RETURN QUERY SELECT t, session_user::text, t + pg_catalog.make_interval(days => days);
END
$$;

CREATE FUNCTION hulltally_revoke_token(token_id uuid) RETURNS boolean LANGUAGE plpgsql
SECURITY DEFINER SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    UPDATE public.api_tokens SET revoked_at = coalesce(revoked_at, pg_catalog.clock_timestamp()) WHERE id = token_id;
    RETURN FOUND;
END
$$;

REVOKE ALL ON FUNCTION hulltally_create_token(uuid, text, bytea, text, integer), hulltally_revoke_token(uuid) FROM PUBLIC;
GRANT EXECUTE ON FUNCTION hulltally_create_token(uuid, text, bytea, text, integer), hulltally_revoke_token(uuid) TO hulltally_admin;
