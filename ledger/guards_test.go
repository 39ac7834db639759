package ledger_test

import (
	"context"
	"errors"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"hulltally/configs"
	"hulltally/ledger"
	"hulltally/ledger/ledgertest"
)

// guardExec runs administrator statements in one transaction, as a rogue
// or careless administrator would, without touching any record.
func guardExec(t *testing.T, l *ledger.Ledger, stmts ...string) {
	t.Helper()
	ctx := context.Background()
	err := pgx.BeginFunc(ctx, l.Pool(), func(tx pgx.Tx) error {
		for _, s := range stmts {
			if _, err := tx.Exec(ctx, s); err != nil {
				return errors.Join(errors.New(s), err)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

// typedInspection and typedDive insert records naming someone who did
// not sign in: what the identity guards refuse.
const (
	typedInspection = "INSERT INTO inspections (id, hull_id, at, method, result, findings, actor, recorded_at) SELECT gen_random_uuid(), id, now(), 'visual', 'pass', '', 'Chief Eng.', now() FROM hulls LIMIT 1"
	typedDive       = "INSERT INTO dives SELECT * FROM jsonb_populate_record(NULL::dives, (SELECT to_jsonb(d) || jsonb_build_object('id', gen_random_uuid(), 'recorded_by', 'Chief Eng.') FROM dives d LIMIT 1))"
)

// TestGuardsWatched: each way of taking an append-only guard down is
// reported by verify (not OK, naming the trigger and the table), while
// the chain itself still holds; Migrate puts the guard back and says so,
// the guard refuses edits again, and verify is OK again.
func TestGuardsWatched(t *testing.T) {
	ctx := context.Background()
	cases := []struct {
		name  string
		stmts []string
		want  []ledger.GuardFinding // Table, Trigger, Problem
		// edit is a statement the restored guard must refuse.
		edit string
	}{
		{"drop a row trigger", []string{"DROP TRIGGER dives_append_only ON dives"},
			[]ledger.GuardFinding{{Table: "dives", Trigger: "dives_append_only", Problem: ledger.GuardMissing}},
			"UPDATE dives SET max_depth_m = 1"},
		{"drop a truncate trigger", []string{"DROP TRIGGER reading_blocks_no_truncate ON reading_blocks"},
			[]ledger.GuardFinding{{Table: "reading_blocks", Trigger: "reading_blocks_no_truncate", Problem: ledger.GuardMissing}},
			"TRUNCATE reading_blocks CASCADE"},
		{"disable a row trigger", []string{"ALTER TABLE corrections DISABLE TRIGGER corrections_append_only"},
			[]ledger.GuardFinding{{Table: "corrections", Trigger: "corrections_append_only", Problem: ledger.GuardDisabled}},
			"DELETE FROM corrections"},
		{"disable every user trigger of a table", []string{"ALTER TABLE audit_chain DISABLE TRIGGER USER"},
			[]ledger.GuardFinding{
				{Table: "audit_chain", Trigger: "audit_chain_append_only", Problem: ledger.GuardDisabled},
				{Table: "audit_chain", Trigger: "audit_chain_no_truncate", Problem: ledger.GuardDisabled},
			},
			"DELETE FROM audit_chain"},
		{"row trigger set to fire in replica sessions only", []string{"ALTER TABLE hulls ENABLE REPLICA TRIGGER hulls_append_only"},
			[]ledger.GuardFinding{{Table: "hulls", Trigger: "hulls_append_only", Problem: ledger.GuardDisabled}},
			"UPDATE hulls SET serial = 'OTHER'"},
		{"row trigger replaced by one on INSERT only", []string{
			"DROP TRIGGER hull_components_append_only ON hull_components",
			"CREATE TRIGGER hull_components_append_only BEFORE INSERT ON hull_components FOR EACH ROW EXECUTE FUNCTION ledger_append_only()"},
			[]ledger.GuardFinding{{Table: "hull_components", Trigger: "hull_components_append_only", Problem: ledger.GuardAltered}},
			"DELETE FROM hull_components"},
		{"trigger function replaced by one that lets edits through", []string{
			"CREATE OR REPLACE FUNCTION ledger_append_only() RETURNS trigger LANGUAGE plpgsql AS $$ BEGIN RETURN OLD; END; $$"},
			[]ledger.GuardFinding{{Table: "", Trigger: "ledger_append_only", Problem: ledger.GuardAltered}},
			"UPDATE hull_revisions SET rated_depth_m = 6000"},
		{"one dropped and one disabled", []string{
			"DROP TRIGGER assessments_append_only ON assessments",
			"ALTER TABLE dive_fingerprints DISABLE TRIGGER dive_fingerprints_no_truncate"},
			[]ledger.GuardFinding{
				{Table: "assessments", Trigger: "assessments_append_only", Problem: ledger.GuardMissing},
				{Table: "dive_fingerprints", Trigger: "dive_fingerprints_no_truncate", Problem: ledger.GuardDisabled},
			},
			"UPDATE assessments SET reason = 'other'"},
		// The identity guards (migrations 012, 016, 018): each edit is an
		// insert naming someone who did not sign in.
		{"disable an identity trigger", []string{"ALTER TABLE inspections DISABLE TRIGGER inspections_actor_is_identity"},
			[]ledger.GuardFinding{{Table: "inspections", Trigger: "inspections_actor_is_identity", Problem: ledger.GuardDisabled}},
			typedInspection},
		{"drop the dives' recorded_by trigger", []string{"DROP TRIGGER dives_recorded_by ON dives"},
			[]ledger.GuardFinding{{Table: "dives", Trigger: "dives_recorded_by", Problem: ledger.GuardMissing}},
			typedDive},
		{"identity trigger moved to UPDATE", []string{
			"DROP TRIGGER dive_voids_actor_is_identity ON dive_voids",
			"CREATE TRIGGER dive_voids_actor_is_identity BEFORE UPDATE ON dive_voids FOR EACH ROW EXECUTE FUNCTION ledger_actor_is_identity()"},
			[]ledger.GuardFinding{{Table: "dive_voids", Trigger: "dive_voids_actor_is_identity", Problem: ledger.GuardAltered}},
			"INSERT INTO dive_voids (id, hull_id, dive_id, reason, actor, recorded_at) SELECT gen_random_uuid(), hull_id, id, 'forged', 'Chief Eng.', now() FROM dives LIMIT 1"},
		{"identity function replaced by one that lets any name through", []string{
			"CREATE OR REPLACE FUNCTION ledger_actor_is_identity() RETURNS trigger LANGUAGE plpgsql SET search_path = pg_catalog, pg_temp AS $$ BEGIN RETURN NEW; END $$"},
			[]ledger.GuardFinding{{Table: "", Trigger: "ledger_actor_is_identity", Problem: ledger.GuardAltered}},
			"INSERT INTO decisions (id, hull_id, at, kind, actor, reason, recorded_at) SELECT gen_random_uuid(), id, now(), 'withdraw', 'Chief Eng.', 'lay-up', now() FROM hulls LIMIT 1"},
		{"identity function's search_path reset", []string{"ALTER FUNCTION ledger_dive_recorded_by() RESET search_path"},
			[]ledger.GuardFinding{{Table: "", Trigger: "ledger_dive_recorded_by", Problem: ledger.GuardAltered}},
			typedDive},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			l := newLedger(t, 0)
			d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive), AE: writeFile(t, "h.csv", goodHits)})
			if err != nil {
				t.Fatal(err)
			}
			if _, err := l.CorrectDive(ctx, d.ID.String(), "site", "Loch Ness", "typo in the log", ""); err != nil {
				t.Fatal(err)
			}
			res, err := l.Verify(ctx)
			if err != nil || !res.OK || len(res.Guards) != 0 {
				t.Fatalf("clean ledger: %v %+v", err, res)
			}
			guardExec(t, l, tc.stmts...)

			res, err = l.Verify(ctx)
			if err != nil {
				t.Fatal(err)
			}
			if res.OK {
				t.Fatalf("verify is OK with a guard down: %+v", res)
			}
			if got := strip(res.Guards); !equalFindings(got, tc.want) {
				t.Fatalf("guards %+v, want %+v", got, tc.want)
			}
			// Every chain holds: the first thing said is the guard.
			kind := "append_only_guard"
			if strings.Contains(tc.want[0].Trigger, "identity") || strings.Contains(tc.want[0].Trigger, "recorded_by") {
				kind = "identity_guard"
			}
			if res.FirstBroken == nil || res.FirstBroken.Kind != kind || res.FirstBroken.Key != tc.want[0].Trigger {
				t.Errorf("first broken %+v, want the guard %s", res.FirstBroken, tc.want[0].Trigger)
			}
			if !strings.Contains(res.Problem, tc.want[0].Trigger) || (tc.want[0].Table != "" && !strings.Contains(res.Problem, "table "+tc.want[0].Table)) {
				t.Errorf("problem %q does not name trigger %s on table %s", res.Problem, tc.want[0].Trigger, tc.want[0].Table)
			}

			// Opening the ledger again does not silently put the guard back.
			l2, err := ledger.Open(ctx, ledgerConfigOf(t, l))
			if err != nil {
				t.Fatal(err)
			}
			l2.Close()
			if res, err := l.Verify(ctx); err != nil || res.OK {
				t.Fatalf("guard restored by Open: %v %+v", err, res)
			}

			mr, err := l.Migrate(ctx)
			if err != nil {
				t.Fatal(err)
			}
			if got := strip(mr.Restored); !equalFindings(got, tc.want) {
				t.Fatalf("restored %+v, want %+v", got, tc.want)
			}
			res, err = l.Verify(ctx)
			if err != nil || !res.OK || len(res.Guards) != 0 || res.FirstBroken != nil {
				t.Fatalf("after migrate: %v %+v", err, res)
			}
			// The guard refuses again.
			_, err = l.Pool().Exec(ctx, tc.edit)
			var pe *pgconn.PgError
			refusal := "append-only"
			if strings.HasPrefix(tc.edit, "INSERT") {
				refusal = "identity"
			}
			if !errors.As(err, &pe) || pe.Code != "42501" || !strings.Contains(pe.Message, refusal) {
				t.Fatalf("%s after restore: %v, want refused (%s)", tc.edit, err, refusal)
			}
			// Nothing left to restore.
			if mr, err := l.Migrate(ctx); err != nil || len(mr.Restored) != 0 {
				t.Fatalf("second migrate: %v %+v", err, mr)
			}
		})
	}
}

// TestGuardTableDropped: a ledger table dropped whole (its guards with it)
// is reported, and Migrate says it cannot be restored.
func TestGuardTableDropped(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	guardExec(t, l, "DROP TABLE issued_reports")
	res, err := l.Verify(ctx)
	if err != nil {
		t.Fatal(err)
	}
	want := []ledger.GuardFinding{{Table: "issued_reports", Trigger: "issued_reports_append_only", Problem: ledger.GuardTableMissing}}
	if res.OK || !equalFindings(strip(res.Guards), want) {
		t.Fatalf("verify: %+v", res)
	}
	if _, err := l.Migrate(ctx); err == nil || !strings.Contains(err.Error(), "issued_reports") {
		t.Fatalf("migrate with a ledger table dropped: %v", err)
	}
}

// TestGuardOnAddedTable: a table protected by a later migration (here by
// hand, as a migration would with ledger_protect) is watched from the
// database's own list, though the list kept in Go does not name it.
func TestGuardOnAddedTable(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	guardExec(t, l, "CREATE TABLE later_records (id int)", "SELECT ledger_protect(ARRAY['later_records'])")
	if res, err := l.Verify(ctx); err != nil || !res.OK {
		t.Fatalf("clean: %v %+v", err, res)
	}
	guardExec(t, l, "DROP TRIGGER later_records_no_truncate ON later_records")
	res, err := l.Verify(ctx)
	want := []ledger.GuardFinding{{Table: "later_records", Trigger: "later_records_no_truncate", Problem: ledger.GuardMissing}}
	if err != nil || res.OK || !equalFindings(strip(res.Guards), want) {
		t.Fatalf("verify: %v %+v", err, res)
	}
	if mr, err := l.Migrate(ctx); err != nil || !equalFindings(strip(mr.Restored), want) {
		t.Fatalf("migrate: %v %+v", err, mr)
	}
	if res, err := l.Verify(ctx); err != nil || !res.OK {
		t.Fatalf("after migrate: %v %+v", err, res)
	}
}

// TestCorrectionKindBehindChain: a correction's kind or target changed
// behind the chain (which would take it off the dive it corrects: readers
// select target_kind = 'dive' and the dive id's text) is found, and a
// correction written today verifies.
func TestCorrectionKindBehindChain(t *testing.T) {
	ctx := context.Background()
	for _, tc := range []struct{ name, sql string }{
		{"kind changed", "UPDATE corrections SET target_kind = 'hull'"},
		{"kind changed in case only", "UPDATE corrections SET target_kind = 'Dive'"},
		{"target respelt", "UPDATE corrections SET target_key = upper(target_key)"},
		{"target changed", "UPDATE corrections SET target_key = gen_random_uuid()::text"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			l := newLedger(t, 0)
			d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)})
			if err != nil {
				t.Fatal(err)
			}
			if _, err := l.CorrectDive(ctx, d.ID.String(), "site", "Loch Ness", "typo in the log", ""); err != nil {
				t.Fatal(err)
			}
			if res, err := l.Verify(ctx); err != nil || !res.OK {
				t.Fatalf("clean ledger: %v %+v", err, res)
			}
			tamper(t, l, tc.sql)
			res, err := l.Verify(ctx)
			if err != nil {
				t.Fatal(err)
			}
			if res.OK || res.FirstBroken == nil || res.FirstBroken.Kind != "correction" {
				t.Fatalf("verify did not find the correction changed: %+v", res)
			}
		})
	}
}

// ledgerConfigOf is a configuration for the database l is on.
func ledgerConfigOf(t *testing.T, l *ledger.Ledger) *configs.Config {
	t.Helper()
	return ledgertest.Config(t, l.Pool().Config().ConnString())
}

func strip(gs []ledger.GuardFinding) []ledger.GuardFinding {
	out := make([]ledger.GuardFinding, len(gs))
	for i, g := range gs {
		if g.Detail == "" {
			panic("guard finding without detail")
		}
		out[i] = ledger.GuardFinding{Table: g.Table, Trigger: g.Trigger, Problem: g.Problem}
	}
	return out
}

func equalFindings(a, b []ledger.GuardFinding) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestChainedColumns pins every column of every chained table to where
// its canonical bytes take it (ledger/chain.go and the *Canon functions),
// so that a migration adding a column fails here until the column is put
// in its record's canonical bytes, or its exclusion is argued below.
// Exclusions:
//   - hull_id of a dive-keyed row (blocks, hits, cycles, holds, profiles,
//     evidence, evidence revisions, fingerprints, damage rows): not in the
//     bytes; verify reads each hull's rows by hull_id and counts them
//     against the hull's chain, so a row moved to another hull is found.
//   - reading_blocks.sha256: checked against the data, whose hash is
//     recomputed and chained.
//   - assessments.seq: NOT chained (see the report: it orders which
//     assessment is in force).
//   - audit_chain.recorded_at: the link's own time, not a record.
//   - dive_profiles' time_s, pressure_mpa, strain_ue (as sent, migration
//     019) and series (packed, migration 020): two stored forms of the
//     same values; the bytes hold the values, read from whichever form
//     the row holds (a row with both or neither is found broken).
//   - dive_cycles.chunk: not in the bytes as a number; the bytes are the
//     series joined in chunk order, and verify refuses chunks not numbered
//     0, 1, 2, ... (TestLongDiveInParts).
func TestChainedColumns(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	want := map[string]string{
		"hulls":              "id recorded_at serial",
		"hull_revisions":     "actor collapse_pressure_mpa design_pressure_mpa hull_id inner_radius_m length_m material_system name proof_pressure_mpa rated_depth_m reason recorded_at revision shape spec_json wall_thickness_m",
		"hull_components":    "curve hull_id kind name revision rupture_curve transfer_basis transfer_factor",
		"gauges":             "channel component direction hull_id kind name position revision",
		"dives":              "ae_hit_count ae_source_name ae_source_sha256 beyond_rated block_count columns duration_s end_time gauges hull_id hull_revision id latitude latitude_assumed load_column max_depth_m max_pressure_mpa operator recorded_at recorded_by sample_count site source_bytes source_name source_sha256 start_time",
		"reading_blocks":     "block_no data dive_id first_sample hull_id samples sha256 t_first_ns t_last_ns",
		"ae_hits":            "amplitude_db channel counts dive_id duration_us energy event hull_id rise_us seq t_ns",
		"corrections":        "actor field hull_id id reason recorded_at target_key target_kind value_json",
		"dive_cycles":        "chunk counts dive_id gate hull_id means ranges series unit",
		"dive_holds":         "bin_mpa dive_id hull_id levels seconds",
		"assessments":        "actor config_hash config_json hull_id hull_revision id kind reason recorded_at seq",
		"assessment_damage":  "assessment_id basis component curve cyclic dive_ids factor hull_id rupture_curve sustained",
		"dive_profiles":      "dive_id gauges hull_id pressure_mpa series step_s strain_ue time_s",
		"dive_evidence":      "dive_id evidence_json hull_id",
		"inspections":        "actor at findings hull_id id method recorded_at result",
		"proof_tests":        "actor at baseline_json dive_id hull_id id notes pressure_mpa recorded_at result",
		"decisions":          "actor at hull_id id kind reason recorded_at",
		"status_history":     "hull_id reasons_json recorded_at seq status",
		"evidence_revisions": "cause dive_id evidence_json hull_id reason recorded_at seq",
		"dive_voids":         "actor dive_id hull_id id reason recorded_at",
		"dive_fingerprints":  "dive_id fingerprint hull_id",
	}
	for table, cols := range want {
		rows, err := l.Pool().Query(ctx, `SELECT string_agg(column_name::text, ' ' ORDER BY column_name::text COLLATE "C")
			FROM information_schema.columns WHERE table_schema = current_schema() AND table_name = $1`, table)
		if err != nil {
			t.Fatal(err)
		}
		got, err := pgx.CollectOneRow(rows, pgx.RowTo[string])
		if err != nil {
			t.Fatal(err)
		}
		if got != cols {
			t.Errorf("%s columns\n got %s\nwant %s\n(a new column must go into its record's canonical bytes)", table, got, cols)
		}
	}
}
