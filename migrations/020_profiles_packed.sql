-- Dive profiles are stored packed: every value of a profile in one bytea,
-- series, byte-shuffled and LZ4-compressed by hulltally
-- (ledger/profilepack), and kept as it is (STORAGE EXTERNAL: compressing
-- it again would gain nothing). verify reads every profile of the fleet,
-- and profiles were most of what it read: on the 500 × 100 benchmark fleet
-- of cmd/hulltally-fleetbench, 2.9 GB of the 3.3 GB sent, each value as
-- 12 bytes (a length word and the value), decompressed by the server
-- first. Packed, the server sends the stored bytes as they are, about a
-- quarter as many (DEVELOPERS.md, "Verify").
--
-- The profiles stored before this migration keep their form (migration
-- 019: three bytea as PostgreSQL sends a float8[]) and stay readable;
-- hulltally db migrate packs them, hull by hull, checking that each reads
-- to the same values first. A row holds exactly one form. The values, and
-- so the chain's hashes, are unchanged.
ALTER TABLE dive_profiles
    ADD COLUMN series bytea,
    ALTER COLUMN time_s DROP NOT NULL,
    ALTER COLUMN pressure_mpa DROP NOT NULL,
    ALTER COLUMN strain_ue DROP NOT NULL,
    ALTER COLUMN series SET STORAGE EXTERNAL,
    ADD CONSTRAINT dive_profiles_one_form
        CHECK (num_nonnulls(time_s, pressure_mpa, strain_ue) = CASE WHEN series IS NULL THEN 3 ELSE 0 END),
    -- The packed header as hulltally writes it: format 1, then the points
    -- and the strain values (big-endian), one strain series per gauge.
    -- hulltally checks it again on every read, and the block behind it.
    -- (Arithmetic, not << and |: PostgreSQL gives all those operators one
    -- precedence, left to right, and the shifts would apply to the sum so
    -- far: TestSeriesHeaderChecked's counts of three and four bytes.)
    ADD CONSTRAINT dive_profiles_series_header
        CHECK (series IS NULL OR (octet_length(series) >= 9 AND get_byte(series, 0) = 1
            AND get_byte(series, 5) * 16777216::bigint + get_byte(series, 6) * 65536 + get_byte(series, 7) * 256 + get_byte(series, 8)
              = (get_byte(series, 1) * 16777216::bigint + get_byte(series, 2) * 65536 + get_byte(series, 3) * 256 + get_byte(series, 4))
                * coalesce(cardinality(gauges), 0)));

-- The profiles still to pack, for hulltally db migrate to find without
-- reading the table (empty once every profile is packed).
CREATE INDEX dive_profiles_as_sent ON dive_profiles (hull_id, dive_id) WHERE series IS NULL;
