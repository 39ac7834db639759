package ledger_test

import (
	"context"
	"testing"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
)

// TestDiveRecordedBy: a dive carries who logged it, as the database knows
// the session (the person through their own sign-in), never what a client
// says; the audit chain covers it. The adversarial cases: a raw insert
// naming someone else, and an edit or removal of the name afterwards.
func TestDiveRecordedBy(t *testing.T) {
	ctx := context.Background()
	cfg := testConfig(t)
	owner, err := ledger.Open(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	defer owner.Close()
	addExampleHull(t, owner)
	op, opName := asPerson(t, owner, cfg.Database.URL, ledger.RoleOperator)

	d, err := op.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)})
	if err != nil {
		t.Fatal(err)
	}
	if d.RecordedBy == nil || *d.RecordedBy != opName {
		t.Fatalf("the dive's recorded_by: %v, want %s", d.RecordedBy, opName)
	}
	for _, l := range []*ledger.Ledger{owner, op} {
		got, err := l.Dive(ctx, d.ID.String())
		if err != nil || got.RecordedBy == nil || *got.RecordedBy != opName {
			t.Fatalf("read back as %s: %v %v", l.Identity().Name, got, err)
		}
	}
	ds, err := owner.Dives(ctx, serial)
	if err != nil || len(ds) != 1 || ds[0].RecordedBy == nil || *ds[0].RecordedBy != opName {
		t.Fatalf("dive list: %v %v", ds, err)
	}
	if own := owner.Identity().Name; own == "" {
		t.Fatal("the owner has no identity")
	}

	// A person's raw insert naming another author is refused by the
	// database (a copy of the stored row, with the author changed).
	_, err = op.Pool().Exec(ctx, `INSERT INTO dives (id, hull_id, hull_revision, source_name, source_sha256, source_bytes, ae_source_name,
		start_time, end_time, latitude, latitude_assumed, site, operator, load_column, columns, gauges, sample_count, block_count,
		duration_s, max_depth_m, max_pressure_mpa, beyond_rated, ae_hit_count, recorded_at, recorded_by)
		SELECT gen_random_uuid(), hull_id, hull_revision, source_name, '\x01', source_bytes, ae_source_name,
		start_time + interval '1 day', end_time + interval '1 day', latitude, latitude_assumed, site, operator, load_column, columns, gauges,
		sample_count, block_count, duration_s, max_depth_m, max_pressure_mpa, beyond_rated, ae_hit_count, now(), 'somebody-else'
		FROM dives WHERE id = $1`, d.ID)
	if !ledger.IsNotPermitted(err) {
		t.Fatalf("a raw insert naming somebody else as who logged it: %v, want refused (42501)", err)
	}
	// Nor in a group's name, after SET ROLE to the group.
	err = pgx.BeginFunc(ctx, op.Pool(), func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, "SET LOCAL ROLE hulltally_operator"); err != nil {
			return err
		}
		_, err := tx.Exec(ctx, `INSERT INTO dives (id, hull_id, hull_revision, source_name, source_sha256, source_bytes, ae_source_name,
			start_time, end_time, latitude, latitude_assumed, site, operator, load_column, columns, gauges, sample_count, block_count,
			duration_s, max_depth_m, max_pressure_mpa, beyond_rated, ae_hit_count, recorded_at, recorded_by)
			SELECT gen_random_uuid(), hull_id, hull_revision, source_name, '\x02', source_bytes, ae_source_name,
			start_time + interval '2 days', end_time + interval '2 days', latitude, latitude_assumed, site, operator, load_column, columns, gauges,
			sample_count, block_count, duration_s, max_depth_m, max_pressure_mpa, beyond_rated, ae_hit_count, now(), 'hulltally_operator'
			FROM dives WHERE id = $1`, d.ID)
		return err
	})
	if !ledger.IsNotPermitted(err) {
		t.Fatalf("a raw insert in the operators' group's name: %v, want refused (42501)", err)
	}
	if n := rowCounts(t, owner)["dives"]; n != 1 {
		t.Fatalf("%d dives after the refused inserts", n)
	}

	// The name is in the dive's canonical bytes: changing or removing it
	// breaks the chain.
	if res, err := owner.Verify(ctx); err != nil || !res.OK {
		t.Fatalf("verify before: %+v %v", res, err)
	}
	for _, v := range []any{"somebody-else", nil} {
		tamper(t, owner, "UPDATE dives SET recorded_by = $2 WHERE id = $1", d.ID, v)
		if res, err := owner.Verify(ctx); err != nil || res.OK {
			t.Fatalf("verify after recorded_by set to %v: %+v %v", v, res, err)
		}
		tamper(t, owner, "UPDATE dives SET recorded_by = $2 WHERE id = $1", d.ID, opName)
	}
	if res, err := owner.Verify(ctx); err != nil || !res.OK {
		t.Fatalf("verify restored: %+v %v", res, err)
	}
}
