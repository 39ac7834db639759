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

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
	"hulltally/ledger/profilepack"
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

// oneForm is migration 020's constraint: a profile's row holds exactly one
// stored form.
const oneForm = "ALTER TABLE dive_profiles ADD CONSTRAINT dive_profiles_one_form CHECK (num_nonnulls(time_s, pressure_mpa, strain_ue) = CASE WHEN series IS NULL THEN 3 ELSE 0 END)"

// TestMigrationsKeepProfiles: profiles stored as float8[] (the schema
// before migration 019) are converted by that migration's own SQL to the
// bytes as sent, with the same values, and the ledger verifies clean; then
// hulltally db migrate (Ledger.Migrate) packs them (migration 020's
// form), again with the same values and the same chain, and a profile it
// cannot read is left as stored, counted, and found by verify. The state
// before is made from a migrated ledger by turning the columns back into
// float8[] filled with the values read through the ledger.
func TestMigrationsKeepProfiles(t *testing.T) {
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	addExampleHull(t, l)
	h, err := l.Hull(ctx, serial)
	if err != nil {
		t.Fatal(err)
	}
	d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)})
	if err != nil {
		t.Fatal(err)
	}
	// d2 and d3: the same samples on later days, so the same profile.
	d2, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d2.csv", strings.ReplaceAll(goodDive, "2026-05-01", "2026-05-02"))})
	if err != nil {
		t.Fatal(err)
	}
	d3, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d3.csv", strings.ReplaceAll(goodDive, "2026-05-01", "2026-05-03"))})
	if err != nil {
		t.Fatal(err)
	}
	before, err := l.ProfileOf(ctx, d.ID)
	if err != nil || before == nil || len(before.TimeS) == 0 {
		t.Fatalf("profile: %+v %v", before, err)
	}
	head, _, err := l.ChainHead(ctx, h.ID)
	if err != nil {
		t.Fatal(err)
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
	// asBefore puts both dives' profiles back as the schema before 019
	// kept them (d2's and d3's values are d's: the same samples), with pressures given by the
	// SQL expression press ($1: the values), then runs migration 019 and
	// puts 020's constraint back.
	asBefore := func(tx pgx.Tx, press string) error {
		for _, s := range []string{
			"SET CONSTRAINTS ALL IMMEDIATE",
			"ALTER TABLE dive_profiles DROP CONSTRAINT dive_profiles_points",
			"ALTER TABLE dive_profiles DROP CONSTRAINT dive_profiles_one_form",
			"ALTER TABLE dive_profiles ALTER COLUMN time_s TYPE float8[] USING '{}', ALTER COLUMN pressure_mpa TYPE float8[] USING '{}', ALTER COLUMN strain_ue TYPE float8[] USING '{}'",
			"ALTER TABLE dive_profiles DISABLE TRIGGER USER",
		} {
			if _, err := tx.Exec(ctx, s); err != nil {
				return fmt.Errorf("%s: %w", s, err)
			}
		}
		if _, err := tx.Exec(ctx, "UPDATE dive_profiles SET time_s = $2, pressure_mpa = "+press+", strain_ue = $4, series = NULL WHERE dive_id = ANY($1)", []uuid.UUID{d.ID, d2.ID, d3.ID}, before.TimeS, before.PressureMPa, strain); err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, "ALTER TABLE dive_profiles ENABLE TRIGGER USER"); err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, string(sql)); err != nil {
			return err
		}
		_, err := tx.Exec(ctx, oneForm)
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
	same := func(a, b []float64) bool {
		return slices.EqualFunc(a, b, func(x, y float64) bool { return math.Float64bits(x) == math.Float64bits(y) })
	}
	sameProfile := func(when string) {
		t.Helper()
		after, err := l.ProfileOf(ctx, d.ID)
		if err != nil || after == nil {
			t.Fatalf("profile %s: %v", when, err)
		}
		if !same(after.TimeS, before.TimeS) || !same(after.PressureMPa, before.PressureMPa) || len(after.Strain) != len(before.Strain) {
			t.Fatalf("the profile's values changed %s", when)
		}
		for g, v := range before.Strain {
			if !same(after.Strain[g], v) {
				t.Fatalf("gauge %s's strain changed %s", g, when)
			}
		}
	}
	sameProfile("in migration 019")
	// d2 and d3 are the same samples on later days: their profiles' values
	// are d's.
	if res, err := l.Verify(ctx); err != nil || !res.OK {
		t.Fatalf("verify after migration 019: %v %+v", err, res.FirstBroken)
	}
	// Now change d2's last pressure behind the chain, in a form still
	// read (packing must carry the changed value over, for verify to
	// find), and spoil d3's stored form itself: a NULL flag, which no
	// reader accepts (packing must leave it as it is). And an
	// administrator has the guard fire always: packing must keep that.
	if err := tamperWith(l, "ALL", "UPDATE dive_profiles SET pressure_mpa = set_byte(pressure_mpa, length(pressure_mpa) - 8, get_byte(pressure_mpa, length(pressure_mpa) - 8) # 1) WHERE dive_id = $1", d2.ID); err != nil {
		t.Fatal(err)
	}
	if err := tamperWith(l, "ALL", "UPDATE dive_profiles SET pressure_mpa = overlay(pressure_mpa PLACING '\\x00000001'::bytea FROM 5 FOR 4) WHERE dive_id = $1", d3.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := l.Pool().Exec(ctx, "ALTER TABLE dive_profiles ENABLE ALWAYS TRIGGER dive_profiles_append_only"); err != nil {
		t.Fatal(err)
	}
	mr, err := l.Migrate(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if mr.Profiles != (ledger.ProfilesPacked{Packed: 2, Unreadable: 1}) {
		t.Fatalf("packing: %+v, want 2 packed and 1 unreadable", mr.Profiles)
	}
	var packed, asSent bool
	var mode string
	if err := l.Pool().QueryRow(ctx, `SELECT (SELECT bool_and(series IS NOT NULL AND time_s IS NULL) FROM dive_profiles WHERE dive_id = ANY($1)),
		(SELECT series IS NULL AND time_s IS NOT NULL FROM dive_profiles WHERE dive_id = $2),
		(SELECT tgenabled::text FROM pg_trigger WHERE tgname = 'dive_profiles_append_only')`, []uuid.UUID{d.ID, d2.ID}, d3.ID).Scan(&packed, &asSent, &mode); err != nil || !packed || !asSent || mode != "A" {
		t.Fatalf("after packing: d and d2 packed %v, d3 left as sent %v, the guard %q (want A) (%v)", packed, asSent, mode, err)
	}
	if _, err := l.ProfileOf(ctx, d3.ID); !errors.Is(err, ledger.ErrProfileChanged) {
		t.Fatalf("d3's profile read after packing: %v, want it refused as changed", err)
	}
	sameProfile("in packing")
	if after, _, err := l.ChainHead(ctx, h.ID); err != nil || !bytes.Equal(after, head) {
		t.Fatalf("the chain head moved in packing (%v)", err)
	}
	res, err := l.Verify(ctx)
	if err != nil || res.OK || res.FirstBroken == nil || res.FirstBroken.Key != d2.ID.String() || res.FirstBroken.Kind != "dive_profile" {
		t.Fatalf("verify after packing: %v %+v, want d2's profile found changed", err, res.FirstBroken)
	}
	// Packing again finds nothing more to pack; the guard is on again.
	if mr, err := l.Migrate(ctx); err != nil || mr.Profiles != (ledger.ProfilesPacked{Unreadable: 1}) || len(mr.Restored) != 0 {
		t.Fatalf("migrating again: %+v %v", mr, err)
	}
	if _, err := l.Pool().Exec(ctx, "UPDATE dive_profiles SET step_s = step_s WHERE dive_id = $1", d.ID); err == nil || !strings.Contains(err.Error(), "append-only") {
		t.Fatalf("an update of a packed profile after packing: %v, want refused by the append-only guard", err)
	}
}

// TestProfileCanonStoredMatches: the canonical bytes verify makes
// straight from a stored profile's series are the bytes the chain hashed
// when the profile was written (made from the decoded values), in either
// stored form (packed, or as sent before migration 020), and a stored form
// the decoder refuses is refused with the same finding. The expected
// bytes come from the decoding path, which TestFloat8ArrayMatchesPgx
// checks against PostgreSQL's own array codec (the form as sent) and
// ledger/profilepack's tests bit for bit (the packed form).
func TestProfileCanonStoredMatches(t *testing.T) {
	sent := ledger.AppendFloat8Sent
	tsV, pressV, strainV := []float64{0, 5, 10}, []float64{0.1, math.NaN(), math.Inf(1)}, []float64{1, 2, 3, math.Copysign(0, -1), 5, 6}
	ts, press, strain := sent(nil, tsV), sent(nil, pressV), sent(nil, strainV)
	nullElem := slices.Clone(press)
	binary.BigEndian.PutUint32(nullElem[20+12:], 0xffffffff)
	pack := func(ts, press, strain []float64) []byte {
		b, err := profilepack.Pack(nil, nil, ts, press, strain)
		if err != nil {
			t.Fatal(err)
		}
		return b
	}
	packed := pack(tsV, pressV, strainV)
	flipped := slices.Clone(packed)
	flipped[len(flipped)-1] ^= 0x40
	two := []string{"hoop", "axial"}
	for _, c := range []struct {
		name                      string
		gauges                    []string
		ts, press, strain, series []byte
		wantWhy                   string // a part of the finding; "" for none
	}{
		{"two gauges", two, ts, press, strain, nil, ""},
		{"two gauges, packed", two, nil, nil, nil, packed, ""},
		{"no gauges", nil, ts, press, sent(nil, nil), nil, ""},
		{"no gauges, packed", nil, nil, nil, nil, pack(tsV, pressV, nil), ""},
		{"empty profile", nil, sent(nil, nil), sent(nil, nil), sent(nil, nil), nil, ""},
		{"empty profile, packed", nil, nil, nil, nil, pack(nil, nil, nil), ""},
		{"a pressure short", two, ts, sent(nil, []float64{1, 2}), strain, nil, "3 times and 2 pressures"},
		{"strain for one gauge too few", []string{"hoop", "axial", "third"}, ts, press, strain, nil, "6 values for 3 gauges"},
		{"strain for one gauge too few, packed", []string{"hoop", "axial", "third"}, nil, nil, nil, packed, "6 values for 3 gauges"},
		{"a NULL element", two, ts, nullElem, strain, nil, "element 2 has length -1"},
		{"cut short", two, ts[:len(ts)-1], press, strain, nil, "elements in"},
		{"packed, cut short", two, nil, nil, nil, packed[:len(packed)-1], "not a packed profile"},
		{"two faults: the first series' is told", two, ts[:len(ts)-1], nullElem, strain, nil, "elements in"},
		{"both forms", two, ts, press, strain, packed, "both packed and as sent"},
		{"packed and one series as sent", two, nil, press, nil, packed, "both packed and as sent"},
		{"neither form", two, nil, nil, nil, nil, "no series"},
		{"one series missing", two, ts, nil, strain, nil, "bytes of header"},
	} {
		t.Run(c.name, func(t *testing.T) {
			direct, dWhy, decoded, why := ledger.ProfileCanonBothWays([16]byte{1, 2, 3}, 5, c.gauges, c.ts, c.press, c.strain, c.series)
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
	// Both forms of the same values read to the same canonical bytes: the
	// chain hashed the values, and packing moves no hash.
	asSent, _, _, _ := ledger.ProfileCanonBothWays([16]byte{1}, 5, two, ts, press, strain, nil)
	asPacked, _, _, _ := ledger.ProfileCanonBothWays([16]byte{1}, 5, two, nil, nil, nil, packed)
	if len(asSent) == 0 || !bytes.Equal(asSent, asPacked) {
		t.Fatalf("the two forms of one profile differ in their canonical bytes (%d and %d bytes)", len(asSent), len(asPacked))
	}
	// A literal byte of the block changed still unpacks, to other values:
	// their canonical bytes differ, so the chain finds the change.
	changed, why, _, _ := ledger.ProfileCanonBothWays([16]byte{1}, 5, two, nil, nil, nil, flipped)
	if why == "" && bytes.Equal(changed, asPacked) {
		t.Fatal("a packed profile with a byte changed reads to the same canonical bytes")
	}
}

// FuzzProfileCanonStored: on any stored bytes, in either form or both,
// the canonical bytes made straight from the stored series and those made
// from the decoded values are the same, or both ways find the same fault.
func FuzzProfileCanonStored(f *testing.F) {
	sent := ledger.AppendFloat8Sent
	packed, _ := profilepack.Pack(nil, nil, []float64{0, 5}, []float64{1, 2}, []float64{3, 4})
	f.Add(sent(nil, []float64{0, 5}), sent(nil, []float64{1, 2}), sent(nil, []float64{3, 4}), []byte(nil), uint8(1), uint8(0))
	f.Add(sent(nil, nil), sent(nil, nil), sent(nil, nil), []byte(nil), uint8(0), uint8(0))
	f.Add(sent(nil, []float64{0}), sent(nil, []float64{1}), sent(nil, []float64{3, 4}), []byte(nil), uint8(2), uint8(0))
	f.Add([]byte(nil), []byte(nil), []byte(nil), packed, uint8(1), uint8(1))
	f.Fuzz(func(t *testing.T, ts, press, strain, series []byte, ng, form uint8) {
		gauges := make([]string, ng%4)
		for i := range gauges {
			gauges[i] = fmt.Sprint("g", i)
		}
		// form's bits make a column NULL: 1 the three as sent, 2 the
		// packed series.
		if form&1 != 0 {
			ts, press, strain = nil, nil, nil
		}
		if form&2 != 0 {
			series = nil
		}
		direct, dWhy, decoded, why := ledger.ProfileCanonBothWays([16]byte{9}, 1, gauges, ts, press, strain, series)
		if dWhy != why || !bytes.Equal(direct, decoded) {
			t.Fatalf("direct (%d bytes, %q) and decoded (%d bytes, %q) differ", len(direct), dWhy, len(decoded), why)
		}
	})
}
