-- hulltally ledger, first schema: hulls and their specification revisions,
-- components and gauges, dives, raw readings in blocks, acoustic-emission
-- hits, corrections and the per-hull audit chain.
--
-- Every ledger table is append-only: triggers below refuse UPDATE, DELETE
-- and TRUNCATE. A correction is a new row that names what it corrects.
-- Every table carries hull_id so that the schema can be distributed by hull
-- (hull_id as the distribution key of a PostgreSQL-compatible scale-out).

CREATE TABLE hulls (
    id          uuid PRIMARY KEY,
    serial      text NOT NULL UNIQUE CHECK (serial ~ '^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$'),
    recorded_at timestamptz NOT NULL
);

-- One row per revision of a hull's specification. The newest revision is
-- in force; a revision names the one it supersedes and why.
CREATE TABLE hull_revisions (
    hull_id               uuid NOT NULL REFERENCES hulls(id),
    revision              integer NOT NULL CHECK (revision >= 1),
    name                  text NOT NULL,
    material_system       text NOT NULL,
    shape                 text NOT NULL CHECK (shape IN ('cylinder', 'sphere')),
    inner_radius_m        double precision NOT NULL CHECK (inner_radius_m > 0),
    wall_thickness_m      double precision NOT NULL CHECK (wall_thickness_m > 0),
    length_m              double precision CHECK (length_m > 0),
    rated_depth_m         double precision NOT NULL CHECK (rated_depth_m > 0),
    design_pressure_mpa   double precision NOT NULL CHECK (design_pressure_mpa > 0),
    proof_pressure_mpa    double precision NOT NULL CHECK (proof_pressure_mpa > 0),
    collapse_pressure_mpa double precision NOT NULL CHECK (collapse_pressure_mpa > 0),
    spec_json             text NOT NULL,
    reason                text NOT NULL,
    actor                 text NOT NULL,
    recorded_at           timestamptz NOT NULL,
    PRIMARY KEY (hull_id, revision)
);

CREATE TABLE hull_components (
    hull_id         uuid NOT NULL,
    revision        integer NOT NULL,
    name            text NOT NULL,
    kind            text NOT NULL,
    transfer_basis  text NOT NULL CHECK (transfer_basis IN ('designer', 'lame', 'gauge', 'measured')),
    transfer_factor double precision,
    curve           text NOT NULL,
    rupture_curve   text NOT NULL DEFAULT '',
    PRIMARY KEY (hull_id, revision, name),
    FOREIGN KEY (hull_id, revision) REFERENCES hull_revisions(hull_id, revision)
);

CREATE TABLE gauges (
    hull_id    uuid NOT NULL,
    revision   integer NOT NULL,
    name       text NOT NULL,
    kind       text NOT NULL CHECK (kind IN ('strain', 'ae')),
    component  text NOT NULL DEFAULT '',
    position   text NOT NULL DEFAULT '',
    direction  text NOT NULL DEFAULT '',
    channel    integer,
    PRIMARY KEY (hull_id, revision, name),
    FOREIGN KEY (hull_id, revision) REFERENCES hull_revisions(hull_id, revision)
);

CREATE TABLE dives (
    id                uuid PRIMARY KEY,
    hull_id           uuid NOT NULL REFERENCES hulls(id),
    hull_revision     integer NOT NULL,
    source_name       text NOT NULL,
    source_sha256     bytea NOT NULL CHECK (length(source_sha256) = 32),
    source_bytes      bigint NOT NULL,
    ae_source_name    text NOT NULL DEFAULT '',
    ae_source_sha256  bytea,
    start_time        timestamptz NOT NULL,
    end_time          timestamptz NOT NULL,
    latitude          double precision NOT NULL,
    latitude_assumed  boolean NOT NULL,
    site              text NOT NULL DEFAULT '',
    operator          text NOT NULL DEFAULT '',
    load_column       text NOT NULL,
    columns           text[] NOT NULL,
    gauges            text[] NOT NULL,
    sample_count      bigint NOT NULL CHECK (sample_count > 0),
    block_count       integer NOT NULL,
    duration_s        double precision NOT NULL,
    max_depth_m       double precision NOT NULL,
    max_pressure_mpa  double precision NOT NULL,
    beyond_rated      boolean NOT NULL,
    ae_hit_count      integer NOT NULL DEFAULT 0,
    recorded_at       timestamptz NOT NULL,
    UNIQUE (hull_id, source_sha256)
);
CREATE INDEX dives_hull_start ON dives (hull_id, start_time);

-- Raw readings, losslessly, in blocks of consecutive samples. Each block
-- holds every column of the source file for its samples, encoded by
-- ledger/blocks (decimal columns as scaled integers, delta and varint;
-- other numbers as IEEE-754 bits), with the SHA-256 of the encoded bytes.
-- The dive row is written last in the same transaction, so the foreign
-- key is checked at commit.
CREATE TABLE reading_blocks (
    dive_id      uuid NOT NULL REFERENCES dives(id) DEFERRABLE INITIALLY DEFERRED,
    hull_id      uuid NOT NULL,
    block_no     integer NOT NULL CHECK (block_no >= 0),
    first_sample bigint NOT NULL,
    samples      integer NOT NULL CHECK (samples > 0),
    t_first_ns   bigint NOT NULL,
    t_last_ns    bigint NOT NULL,
    data         bytea NOT NULL,
    sha256       bytea NOT NULL CHECK (length(sha256) = 32),
    PRIMARY KEY (dive_id, block_no)
);
-- The encoded data is already compact: keep PostgreSQL from trying to
-- compress it again.
ALTER TABLE reading_blocks ALTER COLUMN data SET STORAGE EXTERNAL;

CREATE TABLE ae_hits (
    dive_id       uuid NOT NULL REFERENCES dives(id) DEFERRABLE INITIALLY DEFERRED,
    hull_id       uuid NOT NULL,
    seq           integer NOT NULL,
    t_ns          bigint NOT NULL,
    channel       integer NOT NULL,
    amplitude_db  double precision NOT NULL,
    energy        double precision NOT NULL,
    counts        bigint NOT NULL,
    duration_us   double precision NOT NULL,
    rise_us       double precision NOT NULL,
    PRIMARY KEY (dive_id, seq)
);

-- A correction names the record it corrects (table and key), the field,
-- the value it should have had, who and why. The corrected row stays.
CREATE TABLE corrections (
    id           uuid PRIMARY KEY,
    hull_id      uuid NOT NULL REFERENCES hulls(id),
    target_kind  text NOT NULL,
    target_key   text NOT NULL,
    field        text NOT NULL,
    value_json   text NOT NULL,
    reason       text NOT NULL,
    actor        text NOT NULL,
    recorded_at  timestamptz NOT NULL
);

-- The audit chain, one per hull: hash = SHA-256(previous hash || canonical
-- bytes of the record). The first record's previous hash is 32 zero bytes.
CREATE TABLE audit_chain (
    hull_id     uuid NOT NULL,
    seq         bigint NOT NULL CHECK (seq >= 1),
    kind        text NOT NULL,
    record_key  text NOT NULL,
    prev_hash   bytea NOT NULL CHECK (length(prev_hash) = 32),
    hash        bytea NOT NULL CHECK (length(hash) = 32),
    recorded_at timestamptz NOT NULL,
    PRIMARY KEY (hull_id, seq),
    UNIQUE (kind, record_key)
);

CREATE FUNCTION ledger_append_only() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'hulltally ledger table % is append-only: % refused (record a correction instead)',
        TG_TABLE_NAME, TG_OP USING ERRCODE = 'insufficient_privilege';
END;
$$;

-- ledger_protect(tables) makes each table append-only; later migrations
-- call it for the ledger tables they add.
CREATE FUNCTION ledger_protect(tables text[]) RETURNS void LANGUAGE plpgsql AS $$
DECLARE t text;
BEGIN
    FOREACH t IN ARRAY tables LOOP
        EXECUTE format('CREATE TRIGGER %I BEFORE UPDATE OR DELETE ON %I FOR EACH ROW EXECUTE FUNCTION ledger_append_only()',
                       t || '_append_only', t);
        EXECUTE format('CREATE TRIGGER %I BEFORE TRUNCATE ON %I FOR EACH STATEMENT EXECUTE FUNCTION ledger_append_only()',
                       t || '_no_truncate', t);
    END LOOP;
END;
$$;

SELECT ledger_protect(ARRAY['hulls', 'hull_revisions', 'hull_components', 'gauges', 'dives',
                            'reading_blocks', 'ae_hits', 'corrections', 'audit_chain']);
