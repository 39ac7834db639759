// Package ledger is hulltally's PostgreSQL record and the only door to
// the database: the connection (to a configured server or to the managed
// local cluster), the migrations, the repositories for hulls, dives,
// readings and acoustic-emission hits, the streaming ingest of
// data-logger files, and the append-only audit chain. No other package
// speaks SQL; the arithmetic it applies (counting, damage, evidence,
// fitness rules) lives in the pure packages under hulltally/fatigue.
//
// Every ledger table is append-only (database triggers refuse UPDATE,
// DELETE and TRUNCATE) and every record is chained per hull (the derived
// fleet_summary table is neither):
// hash = SHA-256(previous hash ‖ canonical bytes of the record).
//
// # Writes
//
// These methods of Ledger write (each in its own transaction, chained):
//
//   - AddHull: a hull or a new revision of its spec;
//   - LogDive: a dive (samples, blocks, cycles, holds, profile, evidence,
//     hits) with its assessment, and the dives it judges again;
//   - VoidDive: a void record for a dive, and a new assessment without it;
//   - CorrectDive: a correction of a dive's recorded field;
//   - RecordInspection, RecordProofTest, ProofTestWithSamples,
//     RecordDecision: the maintenance record;
//   - Assess: a new assessment of every (or one) hull;
//   - FitnessOf: evaluates the rules and records the status in the
//     hull's status history when it changed (FitnessAt is its read);
//   - RebuildFleetSummary: every hull's fleet summary afresh (derived
//     data, not chained; every write above that evaluates a hull also
//     writes that hull's summary after its commit).
//   - RegisterReport: the record of an issued report;
//   - AddPerson, DisablePerson, CreateToken, RevokeToken, SignIn (a
//     day's token for a web session, once the password is checked),
//     RevokeSecret: people and their tokens (not chained);
//   - Migrate (and Open, which calls it): the schema.
//
// Every other method only reads: Hull, Hulls, HullSummary, Dives, Dive,
// ReadBlocks, HullDamage, DiveCycles, DiveDamageOf, LoadOf, HullCycles,
// ProfileOf, EvidenceOf, HullEvidence, HitsOf, VoidOf, FitnessAt, Clear,
// StatusHistory, MaintenanceOf, ReportBasis, ChainHead, Verify,
// IssuedReportOf, SchemaVersion, Fleet (reads the fleet summary, and
// evaluates without recording any hull whose summary does not stand).
//
// # Snapshots
//
// Reads go through one querier: the pool, or inside Snapshot one
// read-only REPEATABLE READ transaction, so a report built from many reads
// sees the ledger at one moment. Writes refuse a snapshot's Ledger
// (ErrSnapshotWrite).
package ledger
