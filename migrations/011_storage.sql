-- How the large values are stored (measured, see DEVELOPERS.md "Benchmarks
-- that tell the truth").
--
-- reading_blocks.data is already compressed by hulltally's own block
-- encoding; PostgreSQL's default (pglz) still tried to compress every
-- block again and failed: 440 blocks of a 3.6-million-row dive took 0.76 to
-- 0.95 s to insert with the default storage and 0.24 to 0.29 s without the
-- attempt, stored at the same size. EXTERNAL stores them out of line,
-- uncompressed.
--
-- The arrays of counted cycles and of the decimated profile compress well
-- (quantised readings), but pglz is slow: the counted cycles of the same
-- dive took about 0.2 s of compression in a serial step after the blocks.
-- lz4 compresses them in a few milliseconds, about 1.6 times larger (2.0
-- MB against 1.3 MB for that dive). A server built without lz4 keeps pglz
-- and says so; nothing else changes. Only rows written from now on are
-- affected; every value reads back the same.

ALTER TABLE reading_blocks ALTER COLUMN data SET STORAGE EXTERNAL;

-- SET COMPRESSION is PostgreSQL 14's: on 13 the statements are not even
-- parsed (EXECUTE), and pglz stays.
DO $$
BEGIN
    IF current_setting('server_version_num')::int < 140000 THEN
        RAISE NOTICE 'PostgreSQL 13 has no lz4 column compression: counted cycles and profiles keep pglz';
        RETURN;
    END IF;
    EXECUTE 'ALTER TABLE dive_cycles
        ALTER COLUMN ranges SET COMPRESSION lz4,
        ALTER COLUMN means  SET COMPRESSION lz4,
        ALTER COLUMN counts SET COMPRESSION lz4';
    EXECUTE 'ALTER TABLE dive_profiles
        ALTER COLUMN time_s       SET COMPRESSION lz4,
        ALTER COLUMN pressure_mpa SET COMPRESSION lz4,
        ALTER COLUMN strain_ue    SET COMPRESSION lz4';
EXCEPTION WHEN feature_not_supported THEN
    RAISE NOTICE 'lz4 compression is not available on this server: counted cycles and profiles keep pglz (%)', SQLERRM;
END
$$;
