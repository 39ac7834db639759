package ledger_test

import (
	"context"
	"encoding/binary"
	"strings"
	"testing"

	"hulltally/ledger"
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

// TestSeriesHeaderChecked: the database refuses a packed profile whose
// header is not one hulltally writes (migration 020's check), each way a
// header can be wrong; hulltally checks it again on every read (the
// tamper tests drop the check first).
func TestSeriesHeaderChecked(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ name, set string }{
		{"another format", "set_byte(series, 0, 2)"},
		{"a point more", "set_byte(series, 4, get_byte(series, 4) # 1)"},
		{"a strain value more", "set_byte(series, 8, get_byte(series, 8) # 1)"},
		{"header cut short", "substring(series FROM 1 FOR 8)"},
		{"no bytes", "''::bytea"},
	} {
		t.Run(c.name, func(t *testing.T) {
			err := tamperWith(l, "ALL", "UPDATE dive_profiles SET series = "+c.set+" WHERE dive_id = $1", d.ID)
			if err == nil || !strings.Contains(err.Error(), "dive_profiles_series_header") {
				t.Fatalf("series = %s: %v, want refused by dive_profiles_series_header", c.set, err)
			}
		})
	}
	// Counts of three and four bytes, as large profiles have (20 000
	// points of 8 gauges are 160 000 strain values): accepted when they
	// pair up with the row's gauges (8 here), refused when a byte
	// differs. With 8 gauges the strain count carries from byte to byte: a
	// check that shifted the sum so far, as << and | in PostgreSQL do,
	// refused the 0.2 Hz dive of 20 000 points and 8 gauges. The block is
	// not the database's to read; hulltally reads it.
	const g = 8
	gauges := []string{"g1", "g2", "g3", "g4", "g5", "g6", "g7", "g8"}
	header := func(n, m uint32) []byte {
		b := binary.BigEndian.AppendUint32([]byte{1}, n)
		return append(binary.BigEndian.AppendUint32(b, m), "block"...)
	}
	for _, n := range []uint32{20000, 70000, 0x018080, 0x808080, 0x01000001} {
		if err := tamperWith(l, "ALL", "UPDATE dive_profiles SET gauges = $3, series = $2 WHERE dive_id = $1", d.ID, header(n, n*g), gauges); err != nil {
			t.Errorf("a header of %d points and %d strain values of %d gauges, refused: %v", n, n*g, g, err)
		}
		err := tamperWith(l, "ALL", "UPDATE dive_profiles SET gauges = $3, series = $2 WHERE dive_id = $1", d.ID, header(n, n*g+65536), gauges)
		if err == nil || !strings.Contains(err.Error(), "dive_profiles_series_header") {
			t.Errorf("a header of %d points and %d strain values: %v, want refused", n, n*g+65536, err)
		}
	}
	// The gauges changed under a packed profile: the strain no longer
	// pairs with them.
	err = tamperWith(l, "ALL", "UPDATE dive_profiles SET gauges = gauges || 'extra'::text WHERE dive_id = $1", d.ID)
	if err == nil || !strings.Contains(err.Error(), "dive_profiles_series_header") {
		t.Fatalf("a gauge added: %v, want refused by dive_profiles_series_header", err)
	}
}
