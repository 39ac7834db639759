-- Every key of a hull's records includes hull_id, so the ledger can be
-- distributed by hull on a PostgreSQL-compatible scale-out (there a
-- primary key, a unique constraint or a foreign key between two
-- distributed tables must include the distribution column). The
-- constraints keep what they guaranteed on one server: dive and record
-- ids are random UUIDs, each child row still references exactly its dive
-- (now by hull and dive, so a row can no longer name a dive of another
-- hull), and a dive is voided at most once. The chain's (kind,
-- record_key) becomes unique per hull; that a record is chained to its own
-- hull is checked by verify, which rebuilds every record from its hull's
-- rows.
--
-- Lookups by a dive's or a record's id alone keep an index of their own
-- (not unique: uniqueness across hulls cannot be enforced shard by shard).
-- The new primary keys start with hull_id, which also gives verify and the
-- per-hull reads an index on every child table.
--
-- Constraints only: no row is written, so the append-only triggers and the
-- chain are untouched.

-- 1. The foreign keys that depend on the keys being replaced.
ALTER TABLE reading_blocks     DROP CONSTRAINT reading_blocks_dive_id_fkey;
ALTER TABLE ae_hits            DROP CONSTRAINT ae_hits_dive_id_fkey;
ALTER TABLE dive_cycles        DROP CONSTRAINT dive_cycles_dive_id_fkey;
ALTER TABLE dive_holds         DROP CONSTRAINT dive_holds_dive_id_fkey;
ALTER TABLE dive_profiles      DROP CONSTRAINT dive_profiles_dive_id_fkey;
ALTER TABLE dive_evidence      DROP CONSTRAINT dive_evidence_dive_id_fkey;
ALTER TABLE dive_fingerprints  DROP CONSTRAINT dive_fingerprints_dive_id_fkey;
ALTER TABLE evidence_revisions DROP CONSTRAINT evidence_revisions_dive_id_fkey;
ALTER TABLE dive_voids         DROP CONSTRAINT dive_voids_dive_id_fkey;
ALTER TABLE proof_tests        DROP CONSTRAINT proof_tests_dive_id_fkey;
ALTER TABLE assessment_damage  DROP CONSTRAINT assessment_damage_assessment_id_fkey;

-- 2. Primary and unique keys, hull first.
ALTER TABLE dives              DROP CONSTRAINT dives_pkey,              ADD PRIMARY KEY (hull_id, id);
ALTER TABLE reading_blocks     DROP CONSTRAINT reading_blocks_pkey,     ADD PRIMARY KEY (hull_id, dive_id, block_no);
ALTER TABLE ae_hits            DROP CONSTRAINT ae_hits_pkey,            ADD PRIMARY KEY (hull_id, dive_id, seq);
ALTER TABLE dive_cycles        DROP CONSTRAINT dive_cycles_pkey,        ADD PRIMARY KEY (hull_id, dive_id, series);
ALTER TABLE dive_holds         DROP CONSTRAINT dive_holds_pkey,         ADD PRIMARY KEY (hull_id, dive_id);
ALTER TABLE dive_profiles      DROP CONSTRAINT dive_profiles_pkey,      ADD PRIMARY KEY (hull_id, dive_id);
ALTER TABLE dive_evidence      DROP CONSTRAINT dive_evidence_pkey,      ADD PRIMARY KEY (hull_id, dive_id);
ALTER TABLE dive_fingerprints  DROP CONSTRAINT dive_fingerprints_pkey,  ADD PRIMARY KEY (hull_id, dive_id);
ALTER TABLE evidence_revisions DROP CONSTRAINT evidence_revisions_pkey, ADD PRIMARY KEY (hull_id, dive_id, seq);
ALTER TABLE dive_voids         DROP CONSTRAINT dive_voids_pkey,         ADD PRIMARY KEY (hull_id, id),
                               DROP CONSTRAINT dive_voids_dive_id_key,  ADD UNIQUE (hull_id, dive_id);
ALTER TABLE proof_tests        DROP CONSTRAINT proof_tests_pkey,        ADD PRIMARY KEY (hull_id, id);
ALTER TABLE inspections        DROP CONSTRAINT inspections_pkey,        ADD PRIMARY KEY (hull_id, id);
ALTER TABLE decisions          DROP CONSTRAINT decisions_pkey,          ADD PRIMARY KEY (hull_id, id);
ALTER TABLE corrections        DROP CONSTRAINT corrections_pkey,        ADD PRIMARY KEY (hull_id, id);
ALTER TABLE assessments        DROP CONSTRAINT assessments_pkey,        ADD PRIMARY KEY (hull_id, id),
                               DROP CONSTRAINT assessments_seq_key,     ADD UNIQUE (hull_id, seq);
ALTER TABLE assessment_damage  DROP CONSTRAINT assessment_damage_pkey,  ADD PRIMARY KEY (hull_id, assessment_id, component);
ALTER TABLE audit_chain        DROP CONSTRAINT audit_chain_kind_record_key_key, ADD UNIQUE (hull_id, kind, record_key);

-- 3. The foreign keys again, by hull and dive (deferrable where they were).
ALTER TABLE reading_blocks     ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id) DEFERRABLE INITIALLY DEFERRED;
ALTER TABLE ae_hits            ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id) DEFERRABLE INITIALLY DEFERRED;
ALTER TABLE dive_cycles        ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id) DEFERRABLE INITIALLY DEFERRED;
ALTER TABLE dive_holds         ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id) DEFERRABLE INITIALLY DEFERRED;
ALTER TABLE dive_profiles      ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id) DEFERRABLE INITIALLY DEFERRED;
ALTER TABLE dive_evidence      ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id) DEFERRABLE INITIALLY DEFERRED;
ALTER TABLE dive_fingerprints  ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id) DEFERRABLE INITIALLY DEFERRED;
ALTER TABLE evidence_revisions ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id);
ALTER TABLE dive_voids         ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id);
ALTER TABLE proof_tests        ADD FOREIGN KEY (hull_id, dive_id) REFERENCES dives (hull_id, id);
ALTER TABLE assessment_damage  ADD FOREIGN KEY (hull_id, assessment_id) REFERENCES assessments (hull_id, id);

-- 4. Lookups by id alone.
CREATE INDEX dives_id               ON dives (id);
CREATE INDEX reading_blocks_dive    ON reading_blocks (dive_id, block_no);
CREATE INDEX ae_hits_dive           ON ae_hits (dive_id, seq);
CREATE INDEX dive_cycles_dive       ON dive_cycles (dive_id);
CREATE INDEX dive_holds_dive        ON dive_holds (dive_id);
CREATE INDEX dive_profiles_dive     ON dive_profiles (dive_id);
CREATE INDEX dive_evidence_dive     ON dive_evidence (dive_id);
CREATE INDEX dive_fingerprints_dive ON dive_fingerprints (dive_id);
CREATE INDEX evidence_revisions_dive ON evidence_revisions (dive_id, seq);
CREATE INDEX dive_voids_dive        ON dive_voids (dive_id);
CREATE INDEX dive_voids_id          ON dive_voids (id);
CREATE INDEX proof_tests_id         ON proof_tests (id);
CREATE INDEX inspections_id         ON inspections (id);
CREATE INDEX decisions_id           ON decisions (id);
CREATE INDEX corrections_id         ON corrections (id);
CREATE INDEX assessments_id         ON assessments (id);
CREATE INDEX assessment_damage_assessment ON assessment_damage (assessment_id);

-- 5. Indexes the new primary keys make redundant.
DROP INDEX assessment_damage_hull;
DROP INDEX evidence_revisions_hull;
