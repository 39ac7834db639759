package ledger_test

import (
	"context"
	"slices"
	"testing"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
)

// fleetWideTables are the only tables without hull_id: on a scale-out
// distributed by hull they stay on the coordinator (reference or local
// tables). hulls is distributed by its own id.
var fleetWideTables = []string{"api_tokens", "checkpoints", "hulltally_schema_version", "issued_reports"}

// TestKeysIncludeHull checks the rules a scale-out needs to distribute the
// ledger by hull (from memory of PostgreSQL scale-out documentation), against the catalog of a migrated database: every table
// but the fleet-wide ones has hull_id; every primary key, unique
// constraint and foreign key of those tables includes it (hulls: its id),
// and every foreign key maps hull_id to hull_id, so no row can reference a
// record of another hull. A new table or constraint that breaks a rule
// fails here, with its definition.
func TestKeysIncludeHull(t *testing.T) {
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	db := l.Pool()

	rows, _ := db.Query(ctx, `SELECT c.relname FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
		WHERE n.nspname = current_schema() AND c.relkind IN ('r', 'p')
		AND NOT EXISTS (SELECT 1 FROM pg_attribute a WHERE a.attrelid = c.oid AND a.attname = 'hull_id' AND NOT a.attisdropped)
		AND c.relname <> 'hulls' ORDER BY 1`)
	without, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(without, fleetWideTables) {
		t.Errorf("tables without hull_id: %v, want only the fleet-wide %v", without, fleetWideTables)
	}

	type constraint struct {
		Table, Name, Kind, Def string
		Cols, RefCols          []string
		RefTable               *string
	}
	rows, _ = db.Query(ctx, `SELECT c.relname, con.conname, con.contype::text, pg_get_constraintdef(con.oid),
			ARRAY(SELECT a.attname::text FROM unnest(con.conkey) WITH ORDINALITY k(n, o) JOIN pg_attribute a ON a.attrelid = con.conrelid AND a.attnum = k.n ORDER BY k.o),
			ARRAY(SELECT a.attname::text FROM unnest(coalesce(con.confkey, '{}')) WITH ORDINALITY k(n, o) JOIN pg_attribute a ON a.attrelid = con.confrelid AND a.attnum = k.n ORDER BY k.o),
			rc.relname::text
		FROM pg_constraint con JOIN pg_class c ON c.oid = con.conrelid JOIN pg_namespace n ON n.oid = c.relnamespace
		LEFT JOIN pg_class rc ON rc.oid = con.confrelid
		WHERE n.nspname = current_schema() AND con.contype IN ('p', 'u', 'f') ORDER BY 1, 2`)
	cons, err := pgx.CollectRows(rows, pgx.RowToStructByPos[constraint])
	if err != nil {
		t.Fatal(err)
	}
	checked := 0
	for _, c := range cons {
		if slices.Contains(fleetWideTables, c.Table) {
			continue
		}
		checked++
		key := "hull_id"
		if c.Table == "hulls" {
			key = "id"
			if c.Kind == "u" && slices.Equal(c.Cols, []string{"serial"}) {
				// A serial is unique across the fleet: hulls is the one
				// table whose unique serial the coordinator keeps (the
				// contributor guide's distribution section).
				continue
			}
		}
		i := slices.Index(c.Cols, key)
		if i < 0 {
			t.Errorf("%s.%s does not include %s: %s", c.Table, c.Name, key, c.Def)
			continue
		}
		if c.Kind == "f" {
			want := "hull_id"
			if c.RefTable != nil && *c.RefTable == "hulls" {
				want = "id"
			}
			if i >= len(c.RefCols) || c.RefCols[i] != want {
				t.Errorf("%s.%s maps %s to %v, not to the referenced table's %s: %s", c.Table, c.Name, key, c.RefCols, want, c.Def)
			}
		}
	}
	if checked < 40 {
		t.Fatalf("only %d constraints checked: the catalog query is wrong", checked)
	}
}
