package main

import (
	"context"
	"encoding/binary"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger/profilepack"
)

// asSent is the binary form PostgreSQL sends a one-dimensional float8[]
// in (array_send), written here from memory of the protocol (12- or
// 20-byte header, then each value's length, 8, and its eight big-endian
// bytes; float8's type oid 701), independently of the ledger's own
// writer, which TestProfileBytesAsSent checks against the server's
// array_send: the form profiles were stored in before migration 020.
func asSent(vals []byte) []byte {
	n := len(vals) / 8
	if n == 0 {
		return []byte{0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 2, 189} // no dimensions, no NULLs, float8 (701)
	}
	b := binary.BigEndian.AppendUint32(nil, 1)
	b = binary.BigEndian.AppendUint32(b, 0)
	b = binary.BigEndian.AppendUint32(b, 701)
	b = binary.BigEndian.AppendUint32(b, uint32(n))
	b = binary.BigEndian.AppendUint32(b, 1)
	for i := 0; i < n; i++ {
		b = binary.BigEndian.AppendUint32(b, 8)
		b = append(b, vals[8*i:8*i+8]...)
	}
	return b
}

// TestDBMigratePacksProfilesCLI: after an upgrade, hulltally db migrate
// packs the profiles stored before migration 020 and says how many; the
// chain does not move and verify holds; a second run packs none.
func TestDBMigratePacksProfilesCLI(t *testing.T) {
	e := newEnv(t)
	e.logDive(t, 3, 300)
	e.logDive(t, 4, 200)
	// verified is verify's JSON: ok, and every hull's chain head.
	verified := func() string {
		t.Helper()
		var v struct {
			OK    bool              `json:"ok"`
			Heads map[string]string `json:"heads"`
		}
		e.jsonOK(&v, "verify")
		if !v.OK || len(v.Heads) != 1 {
			t.Fatalf("verify: ok %v, %d heads", v.OK, len(v.Heads))
		}
		for _, h := range v.Heads {
			return h
		}
		return ""
	}
	headBefore := verified()
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, e.url)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	// Store both profiles as hulltally stored them before migration 020.
	rows, err := conn.Query(ctx, "SELECT dive_id, series FROM dive_profiles")
	if err != nil {
		t.Fatal(err)
	}
	type old struct {
		id                string
		ts, press, strain []byte
	}
	var olds []old
	for rows.Next() {
		var id string
		var series []byte
		if err := rows.Scan(&id, &series); err != nil {
			t.Fatal(err)
		}
		u, _, _, err := profilepack.Unpack(series, nil, nil)
		if err != nil || u.N == 0 || u.M == 0 {
			t.Fatalf("stored profile of dive %s: %d points, %d strain values, %v", id, u.N, u.M, err)
		}
		olds = append(olds, old{id, asSent(u.Values[:8*u.N]), asSent(u.Values[8*u.N : 16*u.N]), asSent(u.Values[16*u.N:])})
	}
	if err := rows.Err(); err != nil || len(olds) != 2 {
		t.Fatalf("%d profiles read, %v", len(olds), err)
	}
	err = pgx.BeginFunc(ctx, conn, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, "ALTER TABLE dive_profiles DISABLE TRIGGER dive_profiles_append_only"); err != nil {
			return err
		}
		for _, o := range olds {
			if _, err := tx.Exec(ctx, "UPDATE dive_profiles SET series = NULL, time_s = $2, pressure_mpa = $3, strain_ue = $4 WHERE dive_id = $1", o.id, o.ts, o.press, o.strain); err != nil {
				return err
			}
		}
		_, err := tx.Exec(ctx, "ALTER TABLE dive_profiles ENABLE TRIGGER dive_profiles_append_only")
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	// Read as stored before 020: the same chain, verified, with a note.
	if got := verified(); got != headBefore {
		t.Fatalf("verify of profiles as sent: head %s, want %s", got, headBefore)
	}
	if out := e.ok("verify"); !strings.Contains(out, "note: 2 dive profiles are still stored as before migration 020") {
		t.Fatalf("verify does not note the profiles still as sent:\n%s", out)
	}
	out := e.ok("db", "migrate")
	if !strings.Contains(out, "packed 2 dive profiles stored before migration 020") {
		t.Fatalf("db migrate did not say it packed the two profiles:\n%s", out)
	}
	var packed int
	if err := conn.QueryRow(ctx, "SELECT count(*) FROM dive_profiles WHERE series IS NOT NULL AND time_s IS NULL").Scan(&packed); err != nil || packed != 2 {
		t.Fatalf("%d profiles packed in the table, want 2 (%v)", packed, err)
	}
	if got := verified(); got != headBefore {
		t.Fatalf("verify after packing: head %s, want %s", got, headBefore)
	}
	if out := e.ok("verify"); strings.Contains(out, "note:") {
		t.Fatalf("verify after packing still notes profiles as sent:\n%s", out)
	}
	var again struct {
		Profiles struct{ Packed, Unreadable *int } `json:"profiles"`
	}
	e.jsonOK(&again, "db", "migrate")
	if again.Profiles.Packed == nil || *again.Profiles.Packed != 0 || again.Profiles.Unreadable == nil || *again.Profiles.Unreadable != 0 {
		t.Fatalf("db migrate --json again: %+v, want 0 packed and 0 unreadable", again.Profiles)
	}
}
