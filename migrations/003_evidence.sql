-- Evidence of damage and maintenance records.
--
-- dive_profiles: each dive's decimated profile (means over windows of
-- step_s seconds, at most 20 000 points a dive) of gauge pressure and of
-- every strain gauge (strain flattened gauge by gauge, in `gauges` order),
-- from which the strain evidence is computed and the reports draw.
-- dive_evidence: the evidence measures of each dive (acoustic emission and
-- strain), as canonical JSON.
-- inspections, proof_tests and decisions: maintenance records, each with
-- who and when. status_history: every change of a hull's status.

CREATE TABLE dive_profiles (
    dive_id      uuid PRIMARY KEY REFERENCES dives(id) DEFERRABLE INITIALLY DEFERRED,
    hull_id      uuid NOT NULL,
    step_s       double precision NOT NULL,
    time_s       double precision[] NOT NULL,
    pressure_mpa double precision[] NOT NULL,
    gauges       text[] NOT NULL,
    strain_ue    double precision[] NOT NULL,
    CHECK (cardinality(time_s) = cardinality(pressure_mpa)),
    CHECK (cardinality(strain_ue) = cardinality(gauges) * cardinality(time_s))
);

CREATE TABLE dive_evidence (
    dive_id       uuid PRIMARY KEY REFERENCES dives(id) DEFERRABLE INITIALLY DEFERRED,
    hull_id       uuid NOT NULL,
    evidence_json text NOT NULL
);

CREATE TABLE inspections (
    id          uuid PRIMARY KEY,
    hull_id     uuid NOT NULL REFERENCES hulls(id),
    at          timestamptz NOT NULL,
    method      text NOT NULL,
    findings    text NOT NULL,
    result      text NOT NULL CHECK (result IN ('pass', 'fail')),
    actor       text NOT NULL,
    recorded_at timestamptz NOT NULL
);

CREATE TABLE proof_tests (
    id            uuid PRIMARY KEY,
    hull_id       uuid NOT NULL REFERENCES hulls(id),
    at            timestamptz NOT NULL,
    pressure_mpa  double precision NOT NULL CHECK (pressure_mpa > 0),
    result        text NOT NULL CHECK (result IN ('pass', 'fail')),
    notes         text NOT NULL,
    actor         text NOT NULL,
    dive_id       uuid REFERENCES dives(id),
    baseline_json text NOT NULL,
    recorded_at   timestamptz NOT NULL
);

CREATE TABLE decisions (
    id          uuid PRIMARY KEY,
    hull_id     uuid NOT NULL REFERENCES hulls(id),
    at          timestamptz NOT NULL,
    kind        text NOT NULL CHECK (kind IN ('return_to_service', 'withdraw')),
    actor       text NOT NULL CHECK (actor <> ''),
    reason      text NOT NULL CHECK (reason <> ''),
    recorded_at timestamptz NOT NULL
);

CREATE TABLE status_history (
    hull_id      uuid NOT NULL REFERENCES hulls(id),
    seq          bigserial,
    status       text NOT NULL,
    reasons_json text NOT NULL,
    recorded_at  timestamptz NOT NULL,
    PRIMARY KEY (hull_id, seq)
);

SELECT ledger_protect(ARRAY['dive_profiles', 'dive_evidence', 'inspections', 'proof_tests', 'decisions', 'status_history']);
