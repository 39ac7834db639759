package main

import (
	"crypto/rand"
	"encoding/hex"
	"encoding/json"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestPeopleCLI: an admin (the owner here) adds people; each signs in
// with their own password and the database holds them to their role. An
// operator logs a dive but cannot add a hull (exit 1, "not permitted",
// nothing stored); a maintenance person's inspection carries their name,
// and naming someone else is refused (exit 2); an inspector reads and
// verifies and cannot inspect; a disabled person cannot sign in.
func TestPeopleCLI(t *testing.T) {
	e := newEnv(t)
	b := make([]byte, 3)
	_, _ = rand.Read(b)
	suffix := hex.EncodeToString(b)
	as := func(name, password string) *env {
		u, err := url.Parse(e.url)
		if err != nil {
			t.Fatal(err)
		}
		q := u.Query()
		q.Set("user", name)
		q.Set("password", password)
		// A space as %20: pgx does not read "+" in a URL's query as one.
		u.RawQuery, u.User = strings.ReplaceAll(q.Encode(), "+", "%20"), nil
		return &env{t: t, url: u.String(), home: e.home}
	}
	add := func(name, role string) *env {
		var p struct{ Name, Role, Password string }
		e.jsonOK(&p, "person", "add", name, "--role", role)
		if p.Name != name || p.Role != role || len(p.Password) < 20 {
			t.Fatalf("person add: %+v", p)
		}
		t.Cleanup(func() { e.run("person", "disable", name) })
		return as(name, p.Password)
	}
	op := add("op-"+suffix, "operator")
	mt := add("mt-"+suffix, "maintenance")
	in := add("in-"+suffix, "inspector")

	// The password from standard input.
	c := e.cmd("person", "add", "op2-"+suffix, "--role", "operator", "--password-stdin")
	c.Stdin = strings.NewReader("correct horse battery\n")
	if out, errs, code := e.capture(c); code != 0 || strings.Contains(out, "password (shown once") {
		t.Fatalf("person add --password-stdin: exit %d\n%s%s", code, out, errs)
	}
	op2 := as("op2-"+suffix, "correct horse battery")
	op2.ok("fleet")
	if _, errs, code := as("op2-"+suffix, "wrong horse battery").run("fleet"); code == 0 || !strings.Contains(errs, "password") {
		t.Fatalf("a wrong password: exit %d %s", code, errs)
	}

	dive := filepath.Join(t.TempDir(), "d.csv")
	os.WriteFile(dive, []byte("time,depth_m\n2026-05-01T08:00:00Z,0\n2026-05-01T08:10:00Z,500\n2026-05-01T08:20:00Z,0\n"), 0o644)
	op.ok("dive", "log", "--hull", "EX-C4000-01", "--lat", "45", dive)

	hulls := e.count("hulls")
	spec, err := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		t.Fatal(err)
	}
	other := filepath.Join(t.TempDir(), "h.yaml")
	os.WriteFile(other, []byte(strings.Replace(string(spec), "serial: EX-C4000-01", "serial: EX-OTHER-01", 1)), 0o644)
	_, errs, code := op.run("hull", "add", "-f", other)
	if code != 1 || !strings.Contains(errs, "not permitted: op-"+suffix+" (operator)") || !strings.Contains(errs, "nothing was stored") {
		t.Fatalf("hull add as an operator: exit %d %s", code, errs)
	}
	out, _, code := op.run("hull", "add", "-f", other, "--json")
	var doc struct{ Error struct{ Kind string } }
	if code != 1 || json.Unmarshal([]byte(out), &doc) != nil || doc.Error.Kind != "not_permitted" {
		t.Fatalf("hull add --json as an operator: exit %d %s", code, out)
	}
	if e.count("hulls") != hulls {
		t.Fatal("a refused hull was stored")
	}

	var rec struct{ Actor string }
	mt.jsonOK(&rec, "inspect", "EX-C4000-01", "--method", "visual", "--result", "pass")
	if rec.Actor != "mt-"+suffix {
		t.Fatalf("inspection actor %q, want the person signed in", rec.Actor)
	}
	if _, errs, code := mt.run("inspect", "EX-C4000-01", "--method", "visual", "--result", "pass", "--actor", "I. Nspector"); code != 2 || !strings.Contains(errs, "signed in as mt-"+suffix) {
		t.Fatalf("inspection naming someone else: exit %d %s", code, errs)
	}
	// The owner too: a typed name is refused and nothing is stored; the
	// owner's records carry its own login.
	inspections := e.count("inspections")
	if _, errs, code := e.run("decide", "EX-C4000-01", "--withdraw", "--reason", "lay-up", "--actor", "Chief Eng."); code != 2 || !strings.Contains(errs, "signed in as") {
		t.Fatalf("the owner naming someone else: exit %d %s", code, errs)
	}
	if _, errs, code := e.run("inspect", "EX-C4000-01", "--method", "visual", "--result", "pass", "--actor", "I. Nspector"); code != 2 || !strings.Contains(errs, "signed in as") || e.count("inspections") != inspections {
		t.Fatalf("the owner naming someone else: exit %d %s", code, errs)
	}
	e.jsonOK(&rec, "inspect", "EX-C4000-01", "--method", "visual", "--result", "pass")
	if rec.Actor == "" || rec.Actor == "I. Nspector" || strings.HasPrefix(rec.Actor, "mt-") {
		t.Fatalf("the owner's inspection carries %q, want the owner's login", rec.Actor)
	}

	in.ok("verify")
	in.ok("fleet")
	if _, errs, code := in.run("inspect", "EX-C4000-01", "--method", "visual", "--result", "pass"); code != 1 || !strings.Contains(errs, "not permitted") {
		t.Fatalf("inspection by an inspector: exit %d %s", code, errs)
	}

	var list struct {
		People []struct {
			Name, Role string
			Disabled   bool
		}
	}
	e.jsonOK(&list, "person", "list")
	roles := map[string]string{}
	for _, p := range list.People {
		roles[p.Name] = p.Role
	}
	if roles["op-"+suffix] != "operator" || roles["mt-"+suffix] != "maintenance" || roles["in-"+suffix] != "inspector" {
		t.Fatalf("person list: %+v", list)
	}
	e.ok("person", "disable", "in-"+suffix)
	if _, _, code := in.run("fleet"); code == 0 {
		t.Fatal("a disabled person signed in")
	}
	if _, errs, code := op.run("person", "add", "x-"+suffix, "--role", "admin"); code != 1 || !strings.Contains(errs, "not permitted") {
		t.Fatalf("person add by an operator: exit %d %s", code, errs)
	}
}
