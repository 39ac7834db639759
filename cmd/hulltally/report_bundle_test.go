package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestReportAgainstBundle: an inspector with only the operator's
// certificate, a report and a hull's bundle tells, with no database,
// whether the report is authentic, consistent with the hull's record and
// current: a report checked against the bundle exported with it is
// current (exit 0); against a bundle exported after another dive it is
// authentic and consistent but outdated (exit 1); against another hull's
// bundle it does not match (exit 1); a report signed by another key is
// not authentic (exit 1).
func TestReportAgainstBundle(t *testing.T) {
	e := newEnv(t)
	os.Chmod(e.home, 0o700)
	dir := t.TempDir()
	logDive := func(name, day string) {
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte("time,depth_m\n"+day+"T08:00:00Z,0\n"+day+"T08:00:05Z,5\n"+day+"T08:00:10Z,0\n"), 0o644)
		e.ok("dive", "log", "--hull", "EX-C4000-01", "--lat", "45", p)
	}
	logDive("d1.csv", "2026-05-01")
	e.ok("key", "init", "--org", "Deep Ocean Works")
	e.ok("checkpoint")
	cert := filepath.Join(dir, "operator.pem")
	e.ok("key", "export", "-o", cert)
	report := filepath.Join(dir, "hull.pdf")
	e.ok("report", "hull", "EX-C4000-01", "-o", report)
	now := filepath.Join(dir, "now.bundle")
	e.ok("export", "EX-C4000-01", "-o", now)

	out, errs, code := e.offline("report", "verify", report, "--key", cert, "--bundle", now)
	if code != 0 || !strings.Contains(out, "consistent with the hull's record and current") {
		t.Fatalf("report against its bundle: exit %d\n%s%s", code, out, errs)
	}

	// Another dive: a later bundle shows the report outdated.
	logDive("d2.csv", "2026-05-03")
	later := filepath.Join(dir, "later.bundle")
	e.ok("export", "EX-C4000-01", "-o", later)
	out, errs, code = e.offline("report", "verify", report, "--key", cert, "--bundle", later)
	if code != 1 || !strings.Contains(out, "REPORT OUTDATED") || !strings.Contains(out, "consistent with the hull's record, but outdated") {
		t.Fatalf("report against a later bundle: exit %d\n%s%s", code, out, errs)
	}

	// Another hull's bundle.
	other := strings.ReplaceAll(string(mustRead(t, "../../testdata/hulls/example-cylinder.yaml")), "EX-C4000-01", "EX-C4000-02")
	spec := filepath.Join(dir, "other.yaml")
	os.WriteFile(spec, []byte(other), 0o644)
	e.ok("hull", "add", "-f", spec)
	ob := filepath.Join(dir, "other.bundle")
	e.ok("export", "EX-C4000-02", "-o", ob)
	out, errs, code = e.offline("report", "verify", report, "--key", cert, "--bundle", ob)
	if code != 1 || !strings.Contains(out, "does not draw on hull EX-C4000-02") {
		t.Fatalf("report against another hull's bundle: exit %d\n%s%s", code, out, errs)
	}

	// A report checked with another operator's certificate.
	e2 := newEnv(t)
	os.Chmod(e2.home, 0o700)
	e2.ok("key", "init", "--org", "Deep Ocean Works")
	cert2 := filepath.Join(dir, "other-operator.pem")
	e2.ok("key", "export", "-o", cert2)
	out, errs, code = e.offline("report", "verify", report, "--key", cert2, "--bundle", now)
	if code != 1 || !strings.Contains(out, "REPORT NOT AUTHENTIC") {
		t.Fatalf("report with another key: exit %d\n%s%s", code, out, errs)
	}
}

func mustRead(t *testing.T, path string) []byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}
