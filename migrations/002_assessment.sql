-- Counted load cycles per dive, and damage assessments.
--
-- dive_cycles keeps each dive's rainflow cycles (range, mean, count) of
-- gauge pressure (series 'pressure', MPa) and of each strain gauge (series
-- 'strain:<gauge>', microstrain), so that a change of curve or factor
-- re-assesses the fleet without reading raw data again. dive_holds keeps
-- the time at pressure for sustained-load damage.
--
-- An assessment is a set of damage rows made with one configuration (its
-- SHA-256 and text are kept). Logging a dive makes an assessment of that
-- dive; `hulltally assess` makes one per hull covering every dive. The
-- newest assessment of a dive is the one in force; older ones stay.

CREATE TABLE dive_cycles (
    dive_id  uuid NOT NULL REFERENCES dives(id) DEFERRABLE INITIALLY DEFERRED,
    hull_id  uuid NOT NULL,
    series   text NOT NULL,
    unit     text NOT NULL,
    gate     double precision NOT NULL,
    ranges   double precision[] NOT NULL,
    means    double precision[] NOT NULL,
    counts   double precision[] NOT NULL,
    PRIMARY KEY (dive_id, series),
    CHECK (cardinality(ranges) = cardinality(means) AND cardinality(means) = cardinality(counts))
);

CREATE TABLE dive_holds (
    dive_id  uuid PRIMARY KEY REFERENCES dives(id) DEFERRABLE INITIALLY DEFERRED,
    hull_id  uuid NOT NULL,
    bin_mpa  double precision NOT NULL,
    levels   double precision[] NOT NULL,
    seconds  double precision[] NOT NULL,
    CHECK (cardinality(levels) = cardinality(seconds))
);

CREATE TABLE assessments (
    id           uuid PRIMARY KEY,
    seq          bigserial UNIQUE,
    hull_id      uuid NOT NULL REFERENCES hulls(id),
    hull_revision integer NOT NULL,
    kind         text NOT NULL CHECK (kind IN ('dive', 'reassess')),
    config_hash  bytea NOT NULL CHECK (length(config_hash) = 32),
    config_json  text NOT NULL,
    reason       text NOT NULL,
    actor        text NOT NULL,
    recorded_at  timestamptz NOT NULL
);
CREATE INDEX assessments_hull ON assessments (hull_id, seq);

-- One row per assessment and component, holding every assessed dive's
-- damage as parallel arrays (dive ids, cyclic, sustained): a re-assessment
-- of 50 hulls of 1000 dives writes 100 rows, not 100 000, which keeps it
-- within seconds. The dive ids cannot carry a foreign key; they are
-- written only by the ledger, in the transaction of their assessment, and
-- the assessment's chain record hashes every element, so verify finds any
-- change.
CREATE TABLE assessment_damage (
    assessment_id uuid NOT NULL REFERENCES assessments(id),
    hull_id       uuid NOT NULL,
    component     text NOT NULL,
    basis         text NOT NULL,
    factor        double precision NOT NULL,
    curve         text NOT NULL,
    rupture_curve text NOT NULL,
    dive_ids      uuid[] NOT NULL,
    cyclic        double precision[] NOT NULL,
    sustained     double precision[] NOT NULL,
    PRIMARY KEY (assessment_id, component),
    CHECK (cardinality(dive_ids) = cardinality(cyclic) AND cardinality(cyclic) = cardinality(sustained))
);
CREATE INDEX assessment_damage_hull ON assessment_damage (hull_id);

SELECT ledger_protect(ARRAY['dive_cycles', 'dive_holds', 'assessments', 'assessment_damage']);
