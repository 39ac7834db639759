package ledger_test

import (
	"context"
	"testing"
)

// TestStorageSettings: migrations 011's and 020's storage is in place —
// the encoded blocks and the packed profiles are not compressed again
// (EXTERNAL), and the arrays of counted cycles and the profiles stored as
// sent use lz4 where the server has it (Debian's PostgreSQL does).
func TestStorageSettings(t *testing.T) {
	l := newLedger(t, 0)
	rows, err := l.Pool().Query(context.Background(), `SELECT attrelid::regclass::text || '.' || attname, attstorage, attcompression FROM pg_attribute
		WHERE (attrelid, attname) IN (('reading_blocks'::regclass, 'data'), ('dive_cycles'::regclass, 'ranges'), ('dive_cycles'::regclass, 'means'),
			('dive_cycles'::regclass, 'counts'), ('dive_profiles'::regclass, 'time_s'), ('dive_profiles'::regclass, 'pressure_mpa'), ('dive_profiles'::regclass, 'strain_ue'), ('dive_profiles'::regclass, 'series'))`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	n := 0
	for rows.Next() {
		var col string
		var storage, compression byte
		if err := rows.Scan(&col, &storage, &compression); err != nil {
			t.Fatal(err)
		}
		n++
		switch {
		case col == "reading_blocks.data" || col == "dive_profiles.series":
			if storage != 'e' {
				t.Errorf("%s: storage %q, want e (EXTERNAL: compressed already)", col, storage)
			}
		case compression != 'l':
			t.Errorf("%s: compression %q, want l (lz4)", col, compression)
		}
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	if n != 8 {
		t.Fatalf("%d columns found, want 8", n)
	}
}
