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

	"github.com/google/uuid"
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
	// Tokens and disabling only for people: refused as input, not failed.
	var ie *ledger.InputError
	for what, err := range map[string]error{
		"a token for no one":         func() error { _, err := owner.CreateToken(ctx, "nobody-here", 1, ""); return err }(),
		"a token for a group":        func() error { _, err := owner.CreateToken(ctx, "hulltally_maintenance", 1, ""); return err }(),
		"disabling no one":           owner.DisablePerson(ctx, "nobody-here"),
		"disabling the owner's role": owner.DisablePerson(ctx, owner.Identity().Name),
	} {
		if !errors.As(err, &ie) {
			t.Errorf("%s: %v, want refused as input", what, err)
		}
	}
}

// TestRolesResistRawSQL: what a person with a database login could try
// with raw SQL, each found by review of migration 012 and closed by 014:
// an admin granting itself a group or a server privilege, or changing
// another person's password; a person acting as their group (records
// naming no one); shadowing a function the triggers call; an operator
// writing the fleet summary, a re-assessment, damage rows for an earlier
// dive, evidence outside a dive's logging, or a correction of another
// field. Every one must be refused by the database.
func TestRolesResistRawSQL(t *testing.T) {
	ctx := context.Background()
	cfg := testConfig(t)
	owner, err := ledger.Open(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	defer owner.Close()
	addExampleHull(t, owner)
	d, err := owner.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := owner.RebuildFleetSummary(ctx, time.Now().UTC(), 0); err != nil {
		t.Fatal(err)
	}
	admin, _ := asPerson(t, owner, cfg.Database.URL, ledger.RoleAdmin)
	op, opName := asPerson(t, owner, cfg.Database.URL, ledger.RoleOperator)
	mt, _ := asPerson(t, owner, cfg.Database.URL, ledger.RoleMaintenance)

	refused := func(who *ledger.Ledger, what, sql string, args ...any) {
		t.Helper()
		_, err := who.Pool().Exec(ctx, sql, args...)
		if !ledger.IsNotPermitted(err) {
			t.Fatalf("%s: %v, want refused by the database (42501)", what, err)
		}
	}
	refused(admin, "an admin granting itself maintenance", `GRANT hulltally_maintenance TO CURRENT_USER`)
	refused(admin, "an admin granting itself pg_execute_server_program", `GRANT pg_execute_server_program TO CURRENT_USER`)
	refused(admin, "an admin changing an operator's password", `ALTER ROLE `+pgx.Identifier{opName}.Sanitize()+` PASSWORD 'x'`)
	refused(admin, "an admin making a role by itself", `CREATE ROLE x_made_by_admin LOGIN`)
	refused(admin, "an admin writing a token of its own making", `INSERT INTO api_tokens (id, person, token_sha256, created_at, created_by, expires_at)
		VALUES (gen_random_uuid(), $1, decode(repeat('ab', 32), 'hex'), now(), 'somebody-else', now() + interval '100 years')`, opName)
	tok, err := admin.CreateToken(ctx, opName, 1, "test")
	if err != nil || tok.CreatedBy == "" || tok.ExpiresAt.Sub(tok.CreatedAt) != 24*time.Hour {
		t.Fatalf("an admin's token through the function: %v %+v", err, tok)
	}
	if err := admin.RevokeToken(ctx, tok.ID); err != nil {
		t.Fatal(err)
	}
	refused(admin, "an admin clearing a revocation", `UPDATE api_tokens SET revoked_at = NULL`)
	refused(mt, "an inspection as the maintenance group", `SET ROLE hulltally_maintenance; INSERT INTO inspections (id, hull_id, at, method, result, findings, actor, recorded_at)
		SELECT gen_random_uuid(), id, now(), 'visual', 'pass', '', 'hulltally_maintenance', now() FROM hulls LIMIT 1`)
	refused(op, "a person creating a function in the schema", `CREATE FUNCTION public.pg_has_role(name, oid, text) RETURNS boolean LANGUAGE sql AS 'SELECT true'`)
	refused(op, "an operator writing the fleet summary", `UPDATE fleet_summary SET status = 'fit'`)
	refused(op, "an operator deleting the fleet summary", `DELETE FROM fleet_summary`)
	refused(op, "an operator's re-assessment", `INSERT INTO assessments (id, hull_id, hull_revision, kind, config_hash, config_json, reason, actor, recorded_at)
		SELECT gen_random_uuid(), id, 1, 'reassess', decode(repeat('00', 32), 'hex'), '{}', 'forged', $1, now() FROM hulls LIMIT 1`, opName)
	refused(op, "an operator's damage rows for an earlier dive", `WITH a AS (INSERT INTO assessments (id, hull_id, hull_revision, kind, config_hash, config_json, reason, actor, recorded_at)
			SELECT gen_random_uuid(), id, 1, 'dive', decode(repeat('00', 32), 'hex'), '{}', 'forged', $1, now() FROM hulls LIMIT 1 RETURNING id, hull_id)
		INSERT INTO assessment_damage (assessment_id, hull_id, component, basis, factor, curve, rupture_curve, dive_ids, cyclic, sustained)
		SELECT a.id, a.hull_id, 'laminate', 'lame', -6.5, 'c', '', ARRAY[$2::uuid], ARRAY[0.0], ARRAY[0.0] FROM a`, opName, d.ID)
	refused(op, "an operator's evidence revision outside a dive's logging", `INSERT INTO evidence_revisions (dive_id, hull_id, evidence_json, reason, cause, recorded_at)
		SELECT dive_id, hull_id, evidence_json, 'forged', 'forged', now() FROM dive_evidence LIMIT 1`)
	refused(op, "an operator's correction of another field", `INSERT INTO corrections (id, hull_id, target_kind, target_key, field, value_json, reason, actor, recorded_at)
		SELECT gen_random_uuid(), hull_id, 'dive', id::text, 'latitude', '0', 'forged', $1, now() FROM dives LIMIT 1`, opName)

	// The summary the owner wrote is still read, and still says hold or
	// whatever the ledger says: a person's write only removes it.
	before, err := owner.Fleet(ctx, time.Now().UTC())
	if err != nil || len(before) != 1 {
		t.Fatalf("fleet: %v %d", err, len(before))
	}
	day := strings.ReplaceAll(goodDive, "2026-05-01", "2026-05-02")
	if _, err := op.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d2.csv", day)}); err != nil {
		t.Fatalf("the operator's own dive: %v", err)
	}
	var rows int
	if err := owner.Pool().QueryRow(ctx, "SELECT count(*) FROM fleet_summary").Scan(&rows); err != nil || rows != 0 {
		t.Fatalf("after a person's dive the summary holds %d rows (%v), want the hull's row removed", rows, err)
	}
	after, err := op.Fleet(ctx, time.Now().UTC())
	if err != nil || len(after) != 1 || after[0].Derived {
		t.Fatalf("the fleet after a person's dive: %v %+v, want the hull evaluated from the ledger", err, after)
	}
}

// TestOwnerRecordsCarryItsLogin: the owner of the tables (the command line
// on the managed cluster, the service's own connection) may no longer
// name anyone as a record's actor. The adversarial inputs: a free-text
// name through every write path that takes an actor (refused as input,
// nothing stored), and the same through raw SQL (refused by the database,
// migration 018). A name equal to the login is accepted, and a blank one
// takes the login.
func TestOwnerRecordsCarryItsLogin(t *testing.T) {
	ctx := context.Background()
	cfg := testConfig(t)
	owner, err := ledger.Open(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	defer owner.Close()
	addExampleHull(t, owner)
	me := owner.Identity().Name
	r, err := owner.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive), Operator: "Pilot P."})
	if err != nil {
		t.Fatal(err)
	}
	at := time.Now().UTC().Add(-time.Hour)
	sp := exampleSpec(t)
	voids := 0
	for what, write := range map[string]func(actor string) (string, error){
		"hull revision": func(a string) (string, error) {
			rec, err := owner.AddHull(ctx, sp, ledger.AddHullOptions{Actor: a, Revise: true, Reason: "re-issued"})
			if err != nil {
				return "", err
			}
			return rec.Actor, nil
		},
		"inspection": func(a string) (string, error) {
			in, err := owner.RecordInspection(ctx, serial, ledger.Inspection{At: at, Method: "visual", Result: "pass", Actor: a})
			if err != nil {
				return "", err
			}
			return in.Actor, nil
		},
		"proof test": func(a string) (string, error) {
			p, err := owner.RecordProofTest(ctx, serial, ledger.ProofTest{At: at, PressureMPa: 50, Result: "pass", Actor: a})
			if err != nil {
				return "", err
			}
			return p.Actor, nil
		},
		"decision": func(a string) (string, error) {
			d, err := owner.RecordDecision(ctx, serial, ledger.Decision{At: at, Kind: ledger.DecisionWithdraw, Reason: "lay-up", Actor: a})
			if err != nil {
				return "", err
			}
			return d.Actor, nil
		},
		"correction": func(a string) (string, error) {
			c, err := owner.CorrectDive(ctx, r.ID.String(), "site", "North Bay", "typed the wrong site", a)
			if err != nil {
				return "", err
			}
			return c.Actor, nil
		},
		"void": func(a string) (string, error) {
			voids++ // a dive of its own each time, a year earlier
			d, err := owner.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, fmt.Sprintf("v%d.csv", voids), strings.ReplaceAll(goodDive, "2026-", fmt.Sprintf("%d-", 2026-voids)))})
			if err != nil {
				return "", err
			}
			v, err := owner.VoidDive(ctx, d.ID.String(), "logged to the wrong hull", a)
			if err != nil {
				return "", err
			}
			return v.Actor, nil
		},
		"assessment": func(a string) (string, error) {
			if _, err := owner.Assess(ctx, ledger.AssessOptions{Hull: serial, Actor: a, Reason: "again"}); err != nil {
				return "", err
			}
			var got string
			err := owner.Pool().QueryRow(ctx, "SELECT actor FROM assessments ORDER BY seq DESC LIMIT 1").Scan(&got)
			return got, err
		},
	} {
		t.Run(what, func(t *testing.T) {
			var ie *ledger.InputError
			if got, err := write("Chief Eng."); !errors.As(err, &ie) {
				t.Fatalf("the owner naming %q: actor %q, err %v; want refused as input", "Chief Eng.", got, err)
			}
			for _, a := range []string{"", me} {
				if got, err := write(a); err != nil || got != me {
					t.Fatalf("actor %q given: recorded %q, err %v; want %q", a, got, err, me)
				}
			}
		})
	}
	var n int
	if err := owner.Pool().QueryRow(ctx, `SELECT (SELECT count(*) FROM inspections WHERE actor <> current_user) + (SELECT count(*) FROM proof_tests WHERE actor <> current_user)
		+ (SELECT count(*) FROM decisions WHERE actor <> current_user) + (SELECT count(*) FROM hull_revisions WHERE actor <> current_user)
		+ (SELECT count(*) FROM corrections WHERE actor <> current_user) + (SELECT count(*) FROM assessments WHERE actor <> current_user)`).Scan(&n); err != nil || n != 0 {
		t.Fatalf("records whose actor is not the owner's login: %d (%v)", n, err)
	}
	// The database's own word, with the application bypassed.
	for _, sql := range []string{
		`INSERT INTO inspections (id, hull_id, at, method, result, findings, actor, recorded_at)
			SELECT gen_random_uuid(), id, now(), 'visual', 'pass', '', 'Chief Eng.', now() FROM hulls LIMIT 1`,
		`INSERT INTO decisions (id, hull_id, at, kind, actor, reason, recorded_at)
			SELECT gen_random_uuid(), id, now(), 'withdraw', 'Chief Eng.', 'lay-up', now() FROM hulls LIMIT 1`,
		`INSERT INTO dive_voids (id, hull_id, dive_id, reason, actor, recorded_at)
			SELECT gen_random_uuid(), hull_id, id, 'forged', 'Chief Eng.', now() FROM dives WHERE id NOT IN (SELECT dive_id FROM dive_voids) LIMIT 1`,
	} {
		if _, err := owner.Pool().Exec(ctx, sql); !ledger.IsNotPermitted(err) || !strings.Contains(err.Error(), "identity") {
			t.Fatalf("the owner's raw insert naming someone else as the actor: %v, want refused by the database\n%s", err, sql)
		}
	}
	// A role in the owner's group that cannot sign in, reached by SET
	// ROLE: its name is one nobody signed in as, and the database refuses
	// it as an actor and as who logged a dive.
	ghost := "ghost-" + strings.ReplaceAll(uuid.NewString()[:8], "-", "")
	var tablesOwner string
	if err := owner.Pool().QueryRow(ctx, "SELECT relowner::regrole::text FROM pg_class WHERE oid = 'public.hulls'::regclass").Scan(&tablesOwner); err != nil {
		t.Fatal(err)
	}
	if _, err := owner.Pool().Exec(ctx, "CREATE ROLE "+pgx.Identifier{ghost}.Sanitize()+" NOLOGIN IN ROLE "+tablesOwner); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		_, _ = owner.Pool().Exec(context.Background(), "DROP ROLE IF EXISTS "+pgx.Identifier{ghost}.Sanitize())
	})
	for _, sql := range []string{
		`INSERT INTO inspections (id, hull_id, at, method, result, findings, actor, recorded_at)
			SELECT gen_random_uuid(), id, now(), 'visual', 'pass', '', current_user, now() FROM hulls LIMIT 1`,
		`INSERT INTO dives SELECT * FROM jsonb_populate_record(NULL::dives,
			(SELECT to_jsonb(d) || jsonb_build_object('id', gen_random_uuid(), 'recorded_by', current_user) FROM dives d LIMIT 1))`,
	} {
		err := pgx.BeginFunc(ctx, owner.Pool(), func(tx pgx.Tx) error {
			if _, err := tx.Exec(ctx, "SET LOCAL ROLE "+pgx.Identifier{ghost}.Sanitize()); err != nil {
				return err
			}
			_, err := tx.Exec(ctx, sql)
			return err
		})
		if !ledger.IsNotPermitted(err) || !strings.Contains(err.Error(), "cannot sign in") {
			t.Fatalf("a record made as %s, a NOLOGIN role in the owner's group: %v, want refused by the database", ghost, err)
		}
	}
	if res, err := owner.Verify(ctx); err != nil || !res.OK {
		t.Fatalf("verify: %v %+v", err, res.FirstBroken)
	}
}
