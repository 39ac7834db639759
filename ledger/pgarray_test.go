package ledger_test

import (
	"bytes"
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
	"hulltally/migrations"
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
	for _, expr := range []string{"ARRAY[1, NULL, 3]::float8[]", "NULL::float8[]", "'[5:7]={1,2,3}'::float8[]", "'{{1,2},{3,4}}'::float8[]", "ARRAY[1, 2]::float4[]"} {
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
	// The header changed where the values would read the same, or so as
	// to claim more elements than there are: refused.
	for _, c := range []struct {
		what string
		at   int
		to   uint32
	}{{"NULL flag set", 4, 1}, {"lower bound 5", 16, 5}, {"lower bound 0", 16, 0}, {"no elements", 12, 0}, {"a huge count", 12, 0x15555556}, {"a negative count", 12, 0xffffffff}} {
		b := slices.Clone(whole)
		binary.BigEndian.PutUint32(b[c.at:], c.to)
		if got, err := ledger.AppendFloat8Array(nil, b); !errors.Is(err, ledger.ErrFloat8Array) {
			t.Errorf("%s: read as %v (%v), want refused", c.what, got, err)
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

// TestProfileBytesAsSent: what hulltally stores for a profile series
// (migration 019) is byte for byte what PostgreSQL's array_send gives for
// the same values, so profiles converted by the migration and profiles
// written since are alike; and it reads back as the same values.
func TestProfileBytesAsSent(t *testing.T) {
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	for _, vs := range [][]float64{
		{},
		{1.5},
		{math.NaN(), math.Copysign(0, -1), math.Inf(1), math.Inf(-1), 1e-310, math.MaxFloat64},
		func() []float64 {
			out := make([]float64, 20000)
			for i := range out {
				out[i] = float64(i) * 0.37
			}
			return out
		}(),
	} {
		var sent []byte
		if err := l.Pool().QueryRow(ctx, "SELECT array_send($1::float8[])", vs).Scan(&sent); err != nil {
			t.Fatal(err)
		}
		if got := ledger.AppendFloat8Sent(nil, vs); !bytes.Equal(got, sent) {
			t.Fatalf("%d values: hulltally's bytes differ from array_send's (%d vs %d bytes)", len(vs), len(got), len(sent))
		}
		back, err := ledger.AppendFloat8Array(nil, sent)
		if err != nil || !slices.EqualFunc(back, vs, func(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }) {
			t.Fatalf("%d values did not read back: %v", len(vs), err)
		}
	}
}

// TestMigration019KeepsProfiles: profiles stored as float8[] (the schema
// before migration 019) are converted by the migration's own SQL to the
// bytes hulltally reads, with the same values, and the ledger verifies
// clean after it (the chain hashed the values, which did not change). The
// state before is made from a migrated ledger by turning the columns back
// into float8[] filled with the values read through the ledger.
func TestMigration019KeepsProfiles(t *testing.T) {
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	addExampleHull(t, l)
	d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)})
	if err != nil {
		t.Fatal(err)
	}
	before, err := l.ProfileOf(ctx, d.ID)
	if err != nil || before == nil || len(before.TimeS) == 0 {
		t.Fatalf("profile: %+v %v", before, err)
	}
	var strain []float64
	var gauges []string
	if err := l.Pool().QueryRow(ctx, "SELECT gauges FROM dive_profiles WHERE dive_id = $1", d.ID).Scan(&gauges); err != nil {
		t.Fatal(err)
	}
	for _, g := range gauges {
		strain = append(strain, before.Strain[g]...)
	}
	sql, err := migrations.FS.ReadFile("019_profiles_as_sent.sql")
	if err != nil {
		t.Fatal(err)
	}
	// asBefore puts the profile back as the schema before 019 kept it,
	// with pressures given by the SQL expression press ($1: the values),
	// then runs the migration.
	asBefore := func(tx pgx.Tx, press string) error {
		for _, s := range []string{
			"SET CONSTRAINTS ALL IMMEDIATE",
			"ALTER TABLE dive_profiles DROP CONSTRAINT dive_profiles_points",
			"ALTER TABLE dive_profiles ALTER COLUMN time_s TYPE float8[] USING '{}', ALTER COLUMN pressure_mpa TYPE float8[] USING '{}', ALTER COLUMN strain_ue TYPE float8[] USING '{}'",
			"ALTER TABLE dive_profiles DISABLE TRIGGER USER",
		} {
			if _, err := tx.Exec(ctx, s); err != nil {
				return fmt.Errorf("%s: %w", s, err)
			}
		}
		if _, err := tx.Exec(ctx, "UPDATE dive_profiles SET time_s = $2, pressure_mpa = "+press+", strain_ue = $4 WHERE dive_id = $1", d.ID, before.TimeS, before.PressureMPa, strain); err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, "ALTER TABLE dive_profiles ENABLE TRIGGER USER"); err != nil {
			return err
		}
		_, err := tx.Exec(ctx, string(sql))
		return err
	}
	// A form hulltally never stores is refused by the migration, not
	// carried over into bytes (the table is left as it was).
	for _, bad := range []string{"array_append($3::float8[], NULL)", "ARRAY[$3::float8[], $3::float8[]]", "('[2:' || cardinality($3::float8[]) + 1 || ']=' || $3::float8[]::text)::float8[]"} {
		err := pgx.BeginFunc(ctx, l.Pool(), func(tx pgx.Tx) error { return asBefore(tx, bad) })
		if err == nil || !strings.Contains(err.Error(), "migration 019") {
			t.Fatalf("migrating pressures %s: %v, want refused by the migration", bad, err)
		}
	}
	if err := pgx.BeginFunc(ctx, l.Pool(), func(tx pgx.Tx) error { return asBefore(tx, "$3") }); err != nil {
		t.Fatal(err)
	}
	var stored []byte
	if err := l.Pool().QueryRow(ctx, "SELECT pressure_mpa FROM dive_profiles WHERE dive_id = $1", d.ID).Scan(&stored); err != nil || !bytes.Equal(stored, ledger.AppendFloat8Sent(nil, before.PressureMPa)) {
		t.Fatalf("the migrated pressures are not the bytes hulltally writes (%v)", err)
	}
	after, err := l.ProfileOf(ctx, d.ID)
	if err != nil || after == nil {
		t.Fatalf("profile after the migration: %v", err)
	}
	same := func(a, b []float64) bool {
		return slices.EqualFunc(a, b, func(x, y float64) bool { return math.Float64bits(x) == math.Float64bits(y) })
	}
	if !same(after.TimeS, before.TimeS) || !same(after.PressureMPa, before.PressureMPa) || len(after.Strain) != len(before.Strain) {
		t.Fatal("the profile's values changed in the migration")
	}
	for g, v := range before.Strain {
		if !same(after.Strain[g], v) {
			t.Fatalf("gauge %s's strain changed in the migration", g)
		}
	}
	if res, err := l.Verify(ctx); err != nil || !res.OK {
		t.Fatalf("verify after the migration: %v %+v", err, res.FirstBroken)
	}
}

// TestProfileCanonSentMatches: the canonical bytes verify makes straight
// from a stored profile's series are the bytes the chain hashed when the
// profile was written (made from the decoded values), and a stored form
// the decoder refuses is refused with the same finding. The expected
// bytes come from the decoding path, which TestFloat8ArrayMatchesPgx
// checks against PostgreSQL's own array codec.
func TestProfileCanonSentMatches(t *testing.T) {
	sent := ledger.AppendFloat8Sent
	ts := sent(nil, []float64{0, 5, 10})
	press := sent(nil, []float64{0.1, math.NaN(), math.Inf(1)})
	strain := sent(nil, []float64{1, 2, 3, math.Copysign(0, -1), 5, 6})
	nullElem := slices.Clone(press)
	binary.BigEndian.PutUint32(nullElem[20+12:], 0xffffffff)
	for _, c := range []struct {
		name              string
		gauges            []string
		ts, press, strain []byte
		wantWhy           string // a part of the finding; "" for none
	}{
		{"two gauges", []string{"hoop", "axial"}, ts, press, strain, ""},
		{"no gauges", nil, ts, press, sent(nil, nil), ""},
		{"empty profile", nil, sent(nil, nil), sent(nil, nil), sent(nil, nil), ""},
		{"a pressure short", []string{"hoop", "axial"}, ts, sent(nil, []float64{1, 2}), strain, "3 times and 2 pressures"},
		{"strain for one gauge too few", []string{"hoop", "axial", "third"}, ts, press, strain, "6 values for 3 gauges"},
		{"a NULL element", []string{"hoop", "axial"}, ts, nullElem, strain, "element 2 has length -1"},
		{"cut short", []string{"hoop", "axial"}, ts[:len(ts)-1], press, strain, "elements in"},
		{"two faults: the first series' is told", []string{"hoop", "axial"}, ts[:len(ts)-1], nullElem, strain, "elements in"},
	} {
		t.Run(c.name, func(t *testing.T) {
			direct, dWhy, decoded, why := ledger.ProfileCanonBothWays([16]byte{1, 2, 3}, 5, c.gauges, c.ts, c.press, c.strain)
			if dWhy != why {
				t.Fatalf("findings differ: direct %q, decoded %q", dWhy, why)
			}
			if c.wantWhy == "" {
				if why != "" || len(direct) == 0 || !bytes.Equal(direct, decoded) {
					t.Fatalf("canonical bytes differ (%d against %d bytes), finding %q", len(direct), len(decoded), why)
				}
			} else if !strings.Contains(why, c.wantWhy) {
				t.Fatalf("finding %q, want one with %q", why, c.wantWhy)
			}
		})
	}
}

// FuzzProfileCanonSent: on any stored bytes, the canonical bytes made
// straight from the stored series and those made from the decoded values
// are the same, or both ways find the same fault.
func FuzzProfileCanonSent(f *testing.F) {
	sent := ledger.AppendFloat8Sent
	f.Add(sent(nil, []float64{0, 5}), sent(nil, []float64{1, 2}), sent(nil, []float64{3, 4}), uint8(1))
	f.Add(sent(nil, nil), sent(nil, nil), sent(nil, nil), uint8(0))
	f.Add(sent(nil, []float64{0}), sent(nil, []float64{1}), sent(nil, []float64{3, 4}), uint8(2))
	f.Fuzz(func(t *testing.T, ts, press, strain []byte, ng uint8) {
		gauges := make([]string, ng%4)
		for i := range gauges {
			gauges[i] = fmt.Sprint("g", i)
		}
		direct, dWhy, decoded, why := ledger.ProfileCanonBothWays([16]byte{9}, 1, gauges, ts, press, strain)
		if dWhy != why || !bytes.Equal(direct, decoded) {
			t.Fatalf("direct (%d bytes, %q) and decoded (%d bytes, %q) differ", len(direct), dWhy, len(decoded), why)
		}
	})
}
