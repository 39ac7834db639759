package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"hulltally/reports/sign"
)

// keyRun runs a 'key' command in-process with home as HULLTALLY_HOME
// (the key commands are wired by adding keyCmd to the root here, as
// main's rootCmd does once registered).
func keyRun(t *testing.T, home string, args ...string) (string, string, int) {
	t.Helper()
	t.Setenv("HULLTALLY_HOME", home)
	var out, errb bytes.Buffer
	a := &app{out: &out, errOut: &errb}
	root := a.rootCmd()
	root.AddCommand(a.keyCmd())
	wireUsage(root)
	root.SetArgs(args)
	if cmd, err := root.ExecuteContextC(context.Background()); err != nil {
		a.fail(cmd, err)
	}
	return out.String(), errb.String(), a.exit
}

func TestKeyCommands(t *testing.T) {
	home := t.TempDir()
	os.Chmod(home, 0o700)
	if _, errs, code := keyRun(t, home, "key", "init"); code != exitInput || !strings.Contains(errs, "org") {
		t.Fatalf("init without --org: exit %d %s", code, errs)
	}
	out, errs, code := keyRun(t, home, "key", "init", "--org", "Deep Ocean Works", "--years", "3")
	if code != 0 {
		t.Fatalf("init: exit %d %s", code, errs)
	}
	kf := filepath.Join(home, "keys", sign.KeyFile)
	s, err := sign.LoadFile(kf)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out, s.Fingerprint()) || !strings.Contains(out, "O=Deep Ocean Works") {
		t.Errorf("init output %q", out)
	}
	if fi, _ := os.Stat(kf); fi.Mode().Perm() != 0o600 {
		t.Errorf("key mode %v", fi.Mode().Perm())
	}
	if fi, _ := os.Stat(filepath.Dir(kf)); fi.Mode().Perm() != 0o700 {
		t.Errorf("keys folder mode %v", fi.Mode().Perm())
	}
	before, _ := os.ReadFile(kf)
	if _, errs, code := keyRun(t, home, "key", "init", "--org", "Other"); code != exitInput || !strings.Contains(errs, "already exists") {
		t.Fatalf("second init: exit %d %s", code, errs)
	}
	if after, _ := os.ReadFile(kf); !bytes.Equal(before, after) {
		t.Fatal("the key was overwritten")
	}
	out, _, code = keyRun(t, home, "key", "show")
	if code != 0 || !strings.Contains(out, s.Fingerprint()) || !strings.Contains(out, s.Cert.NotAfter.Format("2006-01-02")) {
		t.Errorf("show: exit %d %q", code, out)
	}
	pub := filepath.Join(t.TempDir(), "pub.pem")
	if _, errs, code := keyRun(t, home, "key", "export", "-o", pub); code != 0 {
		t.Fatalf("export: exit %d %s", code, errs)
	}
	k, cert, err := sign.LoadPublic(pub)
	if err != nil || !k.Equal(s.Public()) || cert == nil {
		t.Fatalf("exported: %v", err)
	}
	// A home others can write is refused.
	bad := t.TempDir()
	os.Chmod(bad, 0o777)
	if _, errs, code := keyRun(t, bad, "key", "init", "--org", "X"); code != exitInput || !strings.Contains(errs, "written by other users") {
		t.Fatalf("world-writable home: exit %d %s", code, errs)
	}
}

// TestSignedReportCLI: without a key the report is written unsigned and
// says so (unless --require-signature); with one it is signed and
// verifies offline — with no database reachable — and online; a forged,
// an altered and an unsigned report are refused with exit 1.
func TestSignedReportCLI(t *testing.T) {
	e := newEnv(t)
	os.Chmod(e.home, 0o700)
	dir := t.TempDir()
	unsigned := filepath.Join(dir, "u.pdf")
	var w struct {
		Signed bool `json:"signed"`
	}
	out, errs, code := e.run("report", "hull", "EX-C4000-01", "-o", unsigned, "--json")
	if code != 0 || !strings.Contains(out, `"signed": false`) || !strings.Contains(errs, "NOT SIGNED") {
		t.Fatalf("unsigned report: exit %d\n%s%s", code, out, errs)
	}
	refused := filepath.Join(dir, "r.pdf")
	if _, errs, code := e.run("report", "hull", "EX-C4000-01", "-o", refused, "--require-signature"); code != exitInput || !strings.Contains(errs, "require-signature") {
		t.Fatalf("--require-signature without a key: exit %d %s", code, errs)
	}
	if _, err := os.Stat(refused); err == nil {
		t.Fatal("--require-signature wrote a file")
	}

	if err := sign.Init(filepath.Join(e.home, "keys"), "Deep Ocean Works", 10); err != nil {
		t.Fatal(err)
	}
	op, _ := sign.Load(filepath.Join(e.home, "keys"))
	pub := filepath.Join(dir, "operator.pem")
	os.WriteFile(pub, op.ExportPEM(), 0o644)
	signed := filepath.Join(dir, "s.pdf")
	e.jsonOK(&w, "report", "hull", "EX-C4000-01", "-o", signed, "--require-signature")
	if !w.Signed {
		t.Fatal("the report was not signed")
	}

	// Offline: no database reachable, an empty home (nothing to start).
	off := &env{t: t, url: "postgres://nobody@127.0.0.1:1/none", home: t.TempDir()}
	out = off.ok("report", "verify", signed, "--key", pub, "--offline")
	if !strings.Contains(out, "verified offline") || !strings.Contains(out, "Deep Ocean Works") {
		t.Errorf("offline: %q", out)
	}
	if ents, _ := os.ReadDir(off.home); len(ents) != 0 {
		t.Errorf("offline verify created %v in the home", ents)
	}
	if out := e.ok("report", "verify", signed, "--key", pub); !strings.Contains(out, "report verified") {
		t.Errorf("online: %q", out)
	}

	sb, _ := os.ReadFile(signed)
	ub, _ := os.ReadFile(unsigned)
	fd := filepath.Join(t.TempDir(), "keys")
	if err := sign.Init(fd, "Deep Ocean Works", 10); err != nil {
		t.Fatal(err)
	}
	forger, _ := sign.Load(fd)
	fp := string(bytes.SplitN(bytes.SplitN(ub, []byte("fingerprint="), 2)[1], []byte(")"), 2)[0])
	forged, err := sign.SignPDF(ub, forger, sign.Meta{Fingerprint: fp})
	if err != nil {
		t.Fatal(err)
	}
	altered := bytes.Clone(sb)
	altered[bytes.Index(altered, []byte("stream\n"))+100] ^= 0x20
	for _, tc := range []struct {
		name, want string
		b          []byte
	}{
		{"forged", "signed by another key", forged},
		{"altered", "does not verify", altered},
		{"unsigned", "no signature", ub},
	} {
		p := filepath.Join(dir, tc.name+".pdf")
		os.WriteFile(p, tc.b, 0o644)
		for _, x := range []*env{off, e} {
			args := []string{"report", "verify", p, "--key", pub}
			if x == off {
				args = append(args, "--offline")
			}
			out, errs, code := x.run(args...)
			if code != exitFailed || !strings.Contains(out, "NOT AUTHENTIC") || !strings.Contains(out, tc.want) {
				t.Errorf("%s %v: exit %d\n%s%s", tc.name, args, code, out, errs)
			}
		}
	}
	if _, errs, code := off.run("report", "verify", signed, "--offline"); code != exitInput || !strings.Contains(errs, "--key") {
		t.Errorf("--offline without --key: exit %d %s", code, errs)
	}
}
