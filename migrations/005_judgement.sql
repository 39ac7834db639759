-- Judgement that never looks better than the data.
--
-- evidence_revisions: a dive's evidence judged again (a dive logged late
-- for an earlier day raised the reference pressure, a dive was voided, the
-- compliance baseline changed). The newest revision of a dive supersedes
-- its dive_evidence row and every earlier revision; nothing is edited.
-- dive_voids: a maintenance record that takes a dive out of damage,
-- evidence and status from then on (logged to the wrong hull, say). The
-- dive and its readings stay in the ledger.
-- dive_fingerprints: the SHA-256 of a dive's normalised samples (comments,
-- line ends and column order do not count), so that the same samples under
-- another file are recognised as the same dive.
-- ae_hits.event: a hit, or a sensor check (pencil-lead break, automatic
-- sensor test) recorded in the hits file.

CREATE TABLE evidence_revisions (
    dive_id       uuid NOT NULL REFERENCES dives(id),
    hull_id       uuid NOT NULL,
    seq           bigserial,
    evidence_json text NOT NULL,
    reason        text NOT NULL,
    cause         text NOT NULL,
    recorded_at   timestamptz NOT NULL,
    PRIMARY KEY (dive_id, seq)
);
CREATE INDEX evidence_revisions_hull ON evidence_revisions (hull_id);

CREATE TABLE dive_voids (
    id          uuid PRIMARY KEY,
    hull_id     uuid NOT NULL REFERENCES hulls(id),
    dive_id     uuid NOT NULL UNIQUE REFERENCES dives(id),
    reason      text NOT NULL CHECK (reason <> ''),
    actor       text NOT NULL CHECK (actor <> ''),
    recorded_at timestamptz NOT NULL
);

CREATE TABLE dive_fingerprints (
    dive_id     uuid PRIMARY KEY REFERENCES dives(id) DEFERRABLE INITIALLY DEFERRED,
    hull_id     uuid NOT NULL,
    fingerprint bytea NOT NULL CHECK (length(fingerprint) = 32)
);
CREATE INDEX dive_fingerprints_fp ON dive_fingerprints (fingerprint);

ALTER TABLE ae_hits ADD COLUMN event text NOT NULL DEFAULT 'hit' CHECK (event IN ('hit', 'lead_break', 'sensor_test'));

SELECT ledger_protect(ARRAY['evidence_revisions', 'dive_voids', 'dive_fingerprints']);
