package ledger_test

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"net/url"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
)

// asPerson adds a person of the role (with a generated password) and
// opens the same ledger signed in as them.
func asPerson(t *testing.T, owner *ledger.Ledger, dbURL string, role ledger.Role) (*ledger.Ledger, string) {
	t.Helper()
	b := make([]byte, 4)
	_, _ = rand.Read(b)
	name := "p-" + string(role) + "-" + hex.EncodeToString(b)
	p, err := owner.AddPerson(context.Background(), name, role, "")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		_, _ = owner.Pool().Exec(context.Background(), "DROP OWNED BY "+pgx.Identifier{name}.Sanitize())
		_, _ = owner.Pool().Exec(context.Background(), "DROP ROLE IF EXISTS "+pgx.Identifier{name}.Sanitize())
	})
	if len(p.Password) < 20 {
		t.Fatalf("generated password %q: too short", p.Password)
	}
	u, err := url.Parse(dbURL)
	if err != nil {
		t.Fatal(err)
	}
	q := u.Query()
	q.Set("user", name)
	q.Set("password", p.Password)
	u.RawQuery, u.User = q.Encode(), nil
	cfg := testConfig(t)
	wrong := *u
	q.Set("password", p.Password+"x")
	wrong.RawQuery = q.Encode()
	cfg.Database.URL = wrong.String()
	if l, err := ledger.Open(context.Background(), cfg); err == nil {
		l.Close()
		t.Fatalf("%s signed in with a wrong password", name)
	}
	cfg.Database.URL = u.String()
	l, err := ledger.Open(context.Background(), cfg)
	if err != nil {
		t.Fatalf("opening as %s: %v", name, err)
	}
	t.Cleanup(l.Close)
	return l, name
}

// TestRolesTheDatabaseEnforces: each role may do what migration 012 gives
// it and nothing else, and a refusal stores nothing. The adversarial
// cases: a write the role may not make (refused by the database with
// SQLSTATE 42501, whatever the application does), a record naming
// someone else as its actor (refused by the application and, through raw
// SQL, by the database), and an edit or removal of a record by any role.
func TestRolesTheDatabaseEnforces(t *testing.T) {
	ctx := context.Background()
	cfg := testConfig(t)
	owner, err := ledger.Open(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	defer owner.Close()
	addExampleHull(t, owner)
	if id := owner.Identity(); !id.Owner || id.Role != "" {
		t.Fatalf("the owner's identity %+v", id)
	}
	if _, err := owner.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)}); err != nil {
		t.Fatal(err)
	}

	type can struct{ logDive, addHull, inspect, decide, addPerson bool }
	cases := []struct {
		role ledger.Role
		can  can
	}{
		{ledger.RoleInspector, can{}},
		{ledger.RoleOperator, can{logDive: true}},
		{ledger.RoleMaintenance, can{logDive: true, addHull: true, inspect: true, decide: true}},
		{ledger.RoleAdmin, can{addPerson: true}},
	}
	day := 2
	for _, tc := range cases {
		t.Run(string(tc.role), func(t *testing.T) {
			l, name := asPerson(t, owner, cfg.Database.URL, tc.role)
			if id := l.Identity(); id.Name != name || id.Owner || id.Role != tc.role {
				t.Fatalf("identity %+v, want %s as %s", id, name, tc.role)
			}
			// Every role reads and verifies.
			if _, err := l.Fleet(ctx, time.Now()); err != nil {
				t.Fatalf("reading the fleet: %v", err)
			}
			if res, err := l.Verify(ctx); err != nil || !res.OK {
				t.Fatalf("verify: %v %+v", err, res.FirstBroken)
			}
			try := func(what string, allowed bool, f func() error) {
				t.Helper()
				before := rowCounts(t, owner)
				err := f()
				switch {
				case allowed && err != nil:
					t.Fatalf("%s as %s: %v", what, tc.role, err)
				case !allowed && err == nil:
					t.Fatalf("%s as %s was allowed", what, tc.role)
				case !allowed && !ledger.IsNotPermitted(err):
					t.Fatalf("%s as %s: %v, want the database's refusal (42501)", what, tc.role, err)
				case !allowed:
					if after := rowCounts(t, owner); fmt.Sprint(after) != fmt.Sprint(before) {
						t.Fatalf("%s as %s was refused but stored rows: %v, before %v", what, tc.role, after, before)
					}
				}
			}
			day++
			dive := strings.ReplaceAll(goodDive, "2026-05-01", fmt.Sprintf("2026-05-%02d", day))
			try("logging a dive", tc.can.logDive, func() error {
				_, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", dive)})
				return err
			})
			try("adding a hull", tc.can.addHull, func() error {
				h := exampleSpec(t)
				h.Serial = "RT-" + strings.ToUpper(string(tc.role))
				_, err := l.AddHull(ctx, h, ledger.AddHullOptions{})
				return err
			})
			try("recording an inspection", tc.can.inspect, func() error {
				_, err := l.RecordInspection(ctx, serial, ledger.Inspection{At: time.Now().UTC().Add(-time.Hour), Method: "visual", Result: "pass"})
				return err
			})
			try("recording a decision", tc.can.decide, func() error {
				_, err := l.RecordDecision(ctx, serial, ledger.Decision{At: time.Now().UTC().Add(-time.Minute), Kind: ledger.DecisionWithdraw, Reason: "test"})
				return err
			})
			try("adding a person", tc.can.addPerson, func() error {
				_, err := l.AddPerson(ctx, "p-made-by-"+name, ledger.RoleInspector, "")
				if err == nil {
					_, _ = owner.Pool().Exec(ctx, "DROP ROLE "+pgx.Identifier{"p-made-by-" + name}.Sanitize())
				}
				return err
			})
			// No role edits or removes a record, even where it may insert.
			for _, sql := range []string{"UPDATE dives SET site = 'x'", "DELETE FROM audit_chain", "UPDATE inspections SET result = 'pass'"} {
				if _, err := l.Pool().Exec(ctx, sql); !ledger.IsNotPermitted(err) {
					t.Fatalf("%s as %s: %v, want refused", sql, tc.role, err)
				}
			}
			if tc.can.inspect {
				// The actor is the person: blank takes it, another name is
				// refused by the application, and by the database when the
				// application is bypassed.
				in, err := l.RecordInspection(ctx, serial, ledger.Inspection{At: time.Now().UTC().Add(-time.Hour), Method: "visual", Result: "pass"})
				if err != nil || in.Actor != name {
					t.Fatalf("inspection with no actor given: %v, actor %q, want %q", err, in.Actor, name)
				}
				_, err = l.RecordInspection(ctx, serial, ledger.Inspection{At: time.Now().UTC().Add(-time.Hour), Method: "visual", Result: "pass", Actor: "I. Nspector"})
				var ie *ledger.InputError
				if !errors.As(err, &ie) {
					t.Fatalf("an inspection naming someone else: %v, want refused", err)
				}
				_, err = l.Pool().Exec(ctx, `INSERT INTO inspections (id, hull_id, at, method, result, findings, actor, recorded_at)
					SELECT gen_random_uuid(), id, now(), 'visual', 'pass', '', 'I. Nspector', now() FROM hulls LIMIT 1`)
				if !ledger.IsNotPermitted(err) || !strings.Contains(err.Error(), "identity") {
					t.Fatalf("raw insert naming someone else as the actor: %v, want refused by the database", err)
				}
			}
		})
	}
	if res, err := owner.Verify(ctx); err != nil || !res.OK {
		t.Fatalf("verify after every role: %v %+v", err, res.FirstBroken)
	}
}
