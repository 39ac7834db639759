-- The register of issued reports becomes a chain of its own, like the
-- checkpoints table: each row issued from now on carries seq (1, 2, …
-- without gaps), prev_hash (the hash of the row before; 32 zero bytes for
-- the first chained row) and
--   hash = SHA-256(prev_hash ‖ canonical bytes of the row)
-- where the canonical bytes (ledger/reports.go, registerCanon) encode
-- file_sha256, kind, subject, fingerprint, generated_at, pages,
-- recorded_at and seq. Checkpoints (statement v2) state the register's
-- length and head, so a row deleted, rewritten or inserted behind the
-- chain is found.
--
-- Rows issued before this migration are the LEGACY rows: seq, prev_hash
-- and hash stay NULL (the table is append-only; old rows are not
-- updated). They are not on the chain and are not protected by it one by
-- one. What protects them as a set is the legacy seal below, computed
-- once here: their number and a digest over all of their fields. A row
-- inserted later with a NULL hash (posing as legacy), or a legacy row
-- rewritten or deleted, no longer matches the seal, and the register
-- does not verify. The seal is also stated in every v2 checkpoint.
--
-- ADD COLUMN leaves the append-only triggers (UPDATE, DELETE, TRUNCATE)
-- as they were.
ALTER TABLE issued_reports
    ADD COLUMN seq       bigint UNIQUE CHECK (seq >= 1),
    ADD COLUMN prev_hash bytea CHECK (length(prev_hash) = 32),
    ADD COLUMN hash      bytea UNIQUE CHECK (length(hash) = 32),
    ADD CONSTRAINT issued_reports_chained_together
        CHECK ((seq IS NULL) = (hash IS NULL) AND (hash IS NULL) = (prev_hash IS NULL));

-- The legacy seal: issued_reports_legacy_seal() returns the number of
-- legacy rows and the SHA-256 over the SHA-256 of each legacy row in
-- file_sha256 order (empty input when there are none), each row encoded as
--   file_sha256 ‖ len(kind) kind ‖ len(subject) subject ‖
--   len(fingerprint) fingerprint ‖ generated_at µs ‖ pages ‖ recorded_at µs
-- (lengths and pages int4 big-endian, times int8 big-endian microseconds
-- since the Unix epoch, text UTF-8). ledger/reports.go recomputes it.
DO $$
DECLARE
    n bigint;
    d bytea;
BEGIN
    SELECT count(*), sha256(coalesce(string_agg(sha256(
               file_sha256
            || int4send(octet_length(kind)) || convert_to(kind, 'UTF8')
            || int4send(octet_length(subject)) || convert_to(subject, 'UTF8')
            || int4send(octet_length(fingerprint)) || convert_to(fingerprint, 'UTF8')
            || int8send((extract(epoch FROM generated_at) * 1000000)::bigint)
            || int4send(pages)
            || int8send((extract(epoch FROM recorded_at) * 1000000)::bigint)
           ), ''::bytea ORDER BY file_sha256), ''::bytea))
      INTO n, d
      FROM issued_reports;
    EXECUTE format('CREATE FUNCTION issued_reports_legacy_seal(OUT legacy_count bigint, OUT legacy_digest bytea) LANGUAGE sql IMMUTABLE AS $f$ SELECT %s::bigint, %L::bytea $f$', n, d);
END $$;
