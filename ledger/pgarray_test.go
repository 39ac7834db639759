package ledger_test

import (
	"context"
	"errors"
	"math"
	"slices"
	"testing"

	"hulltally/ledger"
)

// TestFloat8ArrayMatchesPgx: appendFloat8Array reads what PostgreSQL
// sends for a float8[] exactly as pgx's own codec does (the expected
// values are pgx's decoding of the same column, bit for bit: NaN, -0 and
// the infinities included), and refuses what it cannot read as a list
// (NULL elements, two dimensions) instead of reading it as something
// else.
func TestFloat8ArrayMatchesPgx(t *testing.T) {
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	for _, expr := range []string{
		"'{}'::float8[]",
		"ARRAY[1.5]::float8[]",
		"ARRAY['NaN', '-0', 'Infinity', '-Infinity', 1e-310, 1.7976931348623157e308]::float8[]",
		"(SELECT array_agg(i * 0.1) FROM generate_series(1, 100000) i)::float8[]",
		"'[5:7]={1,2,3}'::float8[]",
	} {
		rows, err := l.Pool().Query(ctx, "SELECT "+expr+", "+expr)
		if err != nil {
			t.Fatal(err)
		}
		if !rows.Next() {
			t.Fatalf("%s: no row: %v", expr, rows.Err())
		}
		var want []float64
		if err := rows.Scan(&want, nil); err != nil {
			t.Fatalf("%s: %v", expr, err)
		}
		got, err := ledger.Float8Column(rows, 1, []float64{42})
		rows.Close()
		if err != nil || len(got) != len(want)+1 || got[0] != 42 {
			t.Fatalf("%s: %d values, %v; want %d after the one already there", expr, len(got), err, len(want))
		}
		if !slices.EqualFunc(got[1:], want, func(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }) {
			t.Fatalf("%s: decoded differently from pgx", expr)
		}
	}
	for _, expr := range []string{"ARRAY[1, NULL, 3]::float8[]", "NULL::float8[]", "'{{1,2},{3,4}}'::float8[]", "ARRAY[1, 2]::float4[]"} {
		rows, err := l.Pool().Query(ctx, "SELECT "+expr)
		if err != nil {
			t.Fatal(err)
		}
		rows.Next()
		got, err := ledger.Float8Column(rows, 0, nil)
		rows.Close()
		if !errors.Is(err, ledger.ErrFloat8Array) {
			t.Fatalf("%s: read as %v (%v), want refused", expr, got, err)
		}
	}
	// Cut short anywhere: refused, never read as a shorter list.
	rows, err := l.Pool().Query(ctx, "SELECT ARRAY[1, 2, 3]::float8[]")
	if err != nil {
		t.Fatal(err)
	}
	rows.Next()
	whole := slices.Clone(rows.RawValues()[0])
	rows.Close()
	for n := 0; n < len(whole); n++ {
		if got, err := ledger.AppendFloat8Array(nil, whole[:n]); !errors.Is(err, ledger.ErrFloat8Array) {
			t.Fatalf("cut to %d bytes: read as %v", n, got)
		}
	}
}

// FuzzFloat8Array: any bytes are read or refused, never a panic, and a
// read gives exactly one number per 12 bytes of body.
func FuzzFloat8Array(f *testing.F) {
	f.Add([]byte{0, 0, 0, 1, 0, 0, 0, 0, 0, 0, 2, 189, 0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 8, 63, 240, 0, 0, 0, 0, 0, 0})
	f.Add([]byte{0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 2, 189})
	f.Fuzz(func(t *testing.T, b []byte) {
		got, err := ledger.AppendFloat8Array(nil, b)
		if err == nil && len(b) > 12 && 12*len(got) != len(b)-20 {
			t.Fatalf("%d values from %d bytes", len(got), len(b))
		}
	})
}
