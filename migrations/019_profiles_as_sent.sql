-- Dive profiles are kept in the binary form PostgreSQL sends a float8[]
-- in (array_send: a 12- or 20-byte header, then a 4-byte length and the 8
-- bytes of each value), as bytea. verify reads every profile of the fleet,
-- and sending a float8[] calls the element type's send function once per
-- value: on a fleet of 50 hulls × 100 short dives, 1.8 s of the server's
-- 2 s of verify (COPY of the arrays 2.4 – 2.8 s against 0.8 – 1.2 s for
-- the same values as bytea). Stored as sent, the cost is paid once, at
-- insert, and verify reads the bytes as they are. hulltally writes the
-- same bytes array_send does (TestProfileBytesAsSent). The values, and so
-- the chain's hashes, are unchanged.
--
-- The rewrite takes the table's lock for its duration: 146 s for 50 000
-- dives of about 1 140 points each (2.9 ms a dive; hulltally db migrate on
-- the 500 × 100 benchmark fleet of cmd/hulltally-fleetbench).
DO $$
BEGIN
    -- Only the form hulltally stores converts to bytes it reads: one
    -- dimension from 1 (or empty), no NULL. (The dimensions first, in a
    -- CASE: array_position refuses an array of more.)
    IF EXISTS (SELECT 1 FROM dive_profiles p, LATERAL (VALUES (p.time_s), (p.pressure_mpa), (p.strain_ue)) v(a)
               WHERE CASE WHEN coalesce(array_ndims(v.a), 1) <> 1 THEN true
                          ELSE coalesce(array_lower(v.a, 1), 1) <> 1 OR array_position(v.a, NULL) IS NOT NULL END) THEN
        RAISE EXCEPTION 'migration 019: a dive profile holds a NULL, a multi-dimensional array or one not indexed from 1, which hulltally never stores: run hulltally verify, and restore the table from a backup before migrating';
    END IF;
END
$$;

ALTER TABLE dive_profiles DROP CONSTRAINT IF EXISTS dive_profiles_check;
ALTER TABLE dive_profiles DROP CONSTRAINT IF EXISTS dive_profiles_check1;
ALTER TABLE dive_profiles
    ALTER COLUMN time_s       TYPE bytea USING array_send(time_s),
    ALTER COLUMN pressure_mpa TYPE bytea USING array_send(pressure_mpa),
    ALTER COLUMN strain_ue    TYPE bytea USING array_send(strain_ue),
    -- As many times as pressures (the same length as sent); the strain's
    -- count against the gauges is checked by hulltally on every read.
    ADD CONSTRAINT dive_profiles_points CHECK (length(time_s) = length(pressure_mpa));

DO $$
BEGIN
    IF current_setting('server_version_num')::int >= 140000 THEN
        EXECUTE 'ALTER TABLE dive_profiles
            ALTER COLUMN time_s       SET COMPRESSION lz4,
            ALTER COLUMN pressure_mpa SET COMPRESSION lz4,
            ALTER COLUMN strain_ue    SET COMPRESSION lz4';
    END IF;
EXCEPTION WHEN feature_not_supported THEN
    RAISE NOTICE 'lz4 compression is not available on this server: profiles keep pglz (%)', SQLERRM;
END
$$;
