package main

import (
	"bytes"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// offline runs hulltally with a database URL nothing listens on: a
// command that opened the ledger would fail.
func (e *env) offline(args ...string) (string, string, int) {
	e.t.Helper()
	c := exec.Command(bin, args...)
	c.Env = append(os.Environ(), "HULLTALLY_DATABASE_URL=postgres://nobody@127.0.0.1:1/none?connect_timeout=2", "HULLTALLY_HOME="+e.t.TempDir())
	return e.capture(c)
}

func TestExportVerifyBundleCLI(t *testing.T) {
	e := newEnv(t)
	os.Chmod(e.home, 0o700)
	dir := t.TempDir()
	p := filepath.Join(dir, "d.csv")
	os.WriteFile(p, []byte("time,depth_m\n2026-05-01T08:00:00Z,0\n2026-05-01T08:10:00Z,500\n2026-05-01T08:20:00Z,0\n"), 0o644)
	e.ok("dive", "log", "--hull", "EX-C4000-01", "--lat", "45", p)

	// No key: nothing is exported (a bundle is always signed).
	b := filepath.Join(dir, "ex.bundle")
	if _, _, code := e.run("export", "EX-C4000-01", "-o", b); code != exitInput {
		t.Fatalf("export without a key: exit %d", code)
	}
	if _, err := os.Stat(b); err == nil {
		t.Fatal("an unsigned bundle was written")
	}
	e.ok("key", "init", "--org", "Deep Ocean Works")
	e.ok("checkpoint")
	pub := filepath.Join(dir, "operator.pem")
	e.ok("key", "export", "-o", pub)
	if _, _, code := e.run("export", "NO-SUCH", "-o", b); code != exitInput {
		t.Fatalf("unknown hull: exit %d", code)
	}
	var sum struct {
		Path       string `json:"path"`
		Records    int64  `json:"records"`
		Checkpoint int64  `json:"checkpoint"`
	}
	e.jsonOK(&sum, "export", "EX-C4000-01", "-o", b)
	if sum.Path != b || sum.Records < 3 || sum.Checkpoint != 1 {
		t.Fatalf("export: %+v", sum)
	}
	gz := filepath.Join(dir, "ex.bundle.gz")
	e.ok("export", "EX-C4000-01", "-o", gz)

	// Verified with no database.
	for _, f := range []string{b, gz} {
		out, errs, code := e.offline("verify", "--bundle", f, "--key", pub)
		if code != 0 || !strings.Contains(out, "bundle verified: hull EX-C4000-01") || !strings.Contains(out, "checkpoint 1 holds") {
			t.Fatalf("verify --bundle %s: exit %d\n%s%s", f, code, out, errs)
		}
		// The damage re-computed from the bundle's own cycles agrees with
		// what its assessments record.
		if !strings.Contains(out, "damage re-computed from the bundle's cycles") || !strings.Contains(out, "every figure agrees") {
			t.Fatalf("verify --bundle %s: no agreeing damage re-computation in\n%s", f, out)
		}
	}
	var res struct {
		OK      bool  `json:"ok"`
		Records int64 `json:"records"`
	}
	out, _, code := e.offline("verify", "--bundle", b, "--key", pub, "--json")
	if code != 0 || json.Unmarshal([]byte(out), &res) != nil || !res.OK || res.Records != sum.Records {
		t.Fatalf("verify --bundle --json: exit %d %s", code, out)
	}

	// Another operator's key: refused, exit 1.
	home2 := t.TempDir()
	os.Chmod(home2, 0o700)
	other := filepath.Join(dir, "other.pem")
	c := exec.Command(bin, "key", "init", "--org", "Other", "--key", filepath.Join(home2, "k.pem"))
	c.Env = append(os.Environ(), "HULLTALLY_HOME="+home2)
	if o, err := c.CombinedOutput(); err != nil {
		t.Fatalf("%v %s", err, o)
	}
	c = exec.Command(bin, "key", "export", "--key", filepath.Join(home2, "k.pem"), "-o", other)
	c.Env = append(os.Environ(), "HULLTALLY_HOME="+home2)
	if o, err := c.CombinedOutput(); err != nil {
		t.Fatalf("%v %s", err, o)
	}
	out, _, code = e.offline("verify", "--bundle", b, "--key", other)
	if code != exitFailed || !strings.Contains(out, "BUNDLE REFUSED") || !strings.Contains(out, "another key") {
		t.Fatalf("other key: exit %d\n%s", code, out)
	}

	// One byte changed in a record's canonical bytes (inside its base64).
	data, _ := os.ReadFile(b)
	i := bytes.Index(data, []byte(`"kind":"dive"`))
	j := bytes.Index(data[i:], []byte(`"canon":"`)) + i + len(`"canon":"`) + 8
	bad := append([]byte(nil), data...)
	if bad[j] == 'A' {
		bad[j] = 'B'
	} else {
		bad[j] = 'A'
	}
	badFile := filepath.Join(dir, "bad.bundle")
	os.WriteFile(badFile, bad, 0o644)
	out, _, code = e.offline("verify", "--bundle", badFile, "--key", pub)
	if code != exitFailed || !strings.Contains(out, "record content does not match its hash") || !strings.Contains(out, "altered after it was signed") {
		t.Fatalf("altered bundle: exit %d\n%s", code, out)
	}
	// Not a bundle; usage errors.
	os.WriteFile(badFile, []byte("not a bundle\n"), 0o644)
	if out, _, code = e.offline("verify", "--bundle", badFile, "--key", pub); code != exitFailed || !strings.Contains(out, "not a hulltally bundle") {
		t.Fatalf("not a bundle: exit %d\n%s", code, out)
	}
	if _, _, code = e.offline("verify", "--bundle", b); code != exitInput {
		t.Fatalf("--bundle without --key: exit %d", code)
	}
	if _, _, code = e.offline("verify", "--bundle", b, "--key", pub, "--checkpoint", b); code != exitInput {
		t.Fatalf("--bundle with --checkpoint: exit %d", code)
	}
}
