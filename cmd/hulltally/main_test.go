package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger/ledgertest"
	"hulltally/ledger/synth"
)

var (
	srv *ledgertest.Server
	bin string
)

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "htbin-")
	if err != nil {
		panic(err)
	}
	bin = filepath.Join(dir, "hulltally")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		fmt.Fprintf(os.Stderr, "building hulltally: %v\n%s", err, out)
		os.Exit(1)
	}
	code := ledgertest.Main(m, &srv)
	os.RemoveAll(dir)
	os.Exit(code)
}

type env struct {
	t    *testing.T
	url  string
	home string
}

func newEnv(t *testing.T) *env {
	e := &env{t: t, url: srv.NewDatabase(t, true), home: t.TempDir()}
	e.ok("hull", "add", "-f", "../../testdata/hulls/example-cylinder.yaml")
	return e
}

func (e *env) cmd(args ...string) *exec.Cmd {
	c := exec.Command(bin, args...)
	c.Env = append(os.Environ(), "HULLTALLY_DATABASE_URL="+e.url, "HULLTALLY_HOME="+e.home)
	return c
}

// run returns stdout, stderr and the exit code.
func (e *env) run(args ...string) (string, string, int) {
	e.t.Helper()
	return e.capture(e.cmd(args...))
}

// capture runs c and returns its stdout, stderr and exit code; a failure
// to run it at all fails the test.
func (e *env) capture(c *exec.Cmd) (string, string, int) {
	e.t.Helper()
	return runCmd(e.t, c)
}

// runCmd runs c and returns its stdout, stderr and exit code; a failure
// to run it at all fails the test.
func runCmd(t testing.TB, c *exec.Cmd) (string, string, int) {
	t.Helper()
	var out, errb bytes.Buffer
	c.Stdout, c.Stderr = &out, &errb
	err := c.Run()
	code := 0
	if ee, ok := err.(*exec.ExitError); ok {
		code = ee.ExitCode()
	} else if err != nil {
		t.Fatal(err)
	}
	return out.String(), errb.String(), code
}

func (e *env) ok(args ...string) string {
	e.t.Helper()
	out, errs, code := e.run(args...)
	if code != 0 {
		e.t.Fatalf("hulltally %s: exit %d\n%s%s", strings.Join(args, " "), code, out, errs)
	}
	return out
}

func (e *env) jsonOK(v any, args ...string) {
	e.t.Helper()
	out := e.ok(append(args, "--json")...)
	if err := json.Unmarshal([]byte(out), v); err != nil {
		e.t.Fatalf("hulltally %s --json: %v\n%s", strings.Join(args, " "), err, out)
	}
}

func (e *env) count(table string) int64 {
	e.t.Helper()
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, e.url)
	if err != nil {
		e.t.Fatal(err)
	}
	defer conn.Close(ctx)
	var n int64
	if err := conn.QueryRow(ctx, "SELECT count(*) FROM "+table).Scan(&n); err != nil {
		e.t.Fatal(err)
	}
	return n
}

func benchFile(t *testing.T, hours float64) (string, int) {
	p := filepath.Join(t.TempDir(), "long.csv")
	f, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	n, err := synth.BenchFile(f, hours, 100, 2, 3)
	if err != nil {
		t.Fatal(err)
	}
	f.Close()
	// The example hull's gauges are hoop1 and axial1.
	data, _ := os.ReadFile(p)
	data = bytes.Replace(data, []byte("strain_g1_ue,strain_g2_ue"), []byte("strain_hoop1_ue,strain_axial1_ue"), 1)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return p, n
}

func TestLogJSONAndDuplicate(t *testing.T) {
	e := newEnv(t)
	p := filepath.Join(t.TempDir(), "d.csv")
	os.WriteFile(p, []byte("time,depth_m\n2026-05-01T08:00:00Z,0\n2026-05-01T08:10:00Z,500\n2026-05-01T08:20:00Z,0\n"), 0o644)
	var d map[string]any
	e.jsonOK(&d, "dive", "log", "--hull", "EX-C4000-01", "--lat", "45", p)
	for _, k := range []string{"dive_id", "hull", "samples", "max_depth_m", "max_pressure_mpa", "duplicate"} {
		if _, ok := d[k]; !ok {
			t.Errorf("dive log --json lacks %q: %v", k, d)
		}
	}
	if d["duplicate"] != false || d["samples"].(float64) != 3 || d["max_depth_m"].(float64) != 500 {
		t.Fatalf("%v", d)
	}
	var again map[string]any
	e.jsonOK(&again, "dive", "log", "--hull", "EX-C4000-01", "--lat", "45", p)
	if again["duplicate"] != true || again["dive_id"] != d["dive_id"] {
		t.Fatalf("second log: %v", again)
	}
	out := e.ok("dive", "log", "--hull", "EX-C4000-01", "--lat", "45", p)
	if !strings.Contains(out, "already recorded") {
		t.Errorf("text output of a duplicate: %q", out)
	}
	var show map[string]any
	e.jsonOK(&show, "hull", "show", "EX-C4000-01")
	if show["serial"] != "EX-C4000-01" || show["rated_depth_m"].(float64) != 4000 || show["dive_count"].(float64) != 1 {
		t.Fatalf("hull show: %v", show)
	}
	var list map[string]any
	e.jsonOK(&list, "dive", "list", "--hull", "EX-C4000-01")
	if n := len(list["dives"].([]any)); n != 1 {
		t.Fatalf("dive list: %d dives", n)
	}
	var one map[string]any
	e.jsonOK(&one, "dive", "show", d["dive_id"].(string)[:8])
	if one["dive_id"] != d["dive_id"] {
		t.Fatalf("dive show: %v", one)
	}
	// 0 -> 500 m -> 0: the residue closes the dive's one big cycle as two
	// half cycles of the dive's peak gauge pressure.
	pc, ok := one["pressure_cycles"].([]any)
	if !ok || len(pc) != 2 {
		t.Fatalf("pressure_cycles: %v", one["pressure_cycles"])
	}
	c0 := pc[0].(map[string]any)
	if c0["count"].(float64) != 0.5 || math.Abs(c0["range_mpa"].(float64)-d["max_pressure_mpa"].(float64)) > 1e-9 {
		t.Fatalf("cycle %v, max pressure %v", c0, d["max_pressure_mpa"])
	}
	dmg := one["damage"].(map[string]any)
	for _, comp := range []string{"laminate", "end-ring-fwd"} {
		cd, ok := dmg[comp].(map[string]any)
		if !ok || cd["cyclic"].(float64) <= 0 {
			t.Fatalf("damage of %s: %v", comp, dmg)
		}
		if _, ok := cd["sustained"]; !ok {
			t.Fatalf("damage of %s lacks sustained: %v", comp, cd)
		}
	}
	comps := show["components"].([]any)
	if len(comps) != 2 {
		t.Fatalf("hull show components: %v", show["components"])
	}
	for _, c := range comps {
		m := c.(map[string]any)
		for _, k := range []string{"name", "cyclic_damage", "sustained_damage", "allowable"} {
			if _, ok := m[k]; !ok {
				t.Errorf("component lacks %s: %v", k, m)
			}
		}
	}
	for _, k := range []string{"governing_component", "remaining_dives", "max_pressure_mpa", "dive_count"} {
		if _, ok := show[k]; !ok {
			t.Errorf("hull show lacks %s", k)
		}
	}
	// The hull has no inspection or proof test on record, so it is on
	// hold: a remaining life would be a figure shown where it is void.
	if show["status"] != "hold" || show["remaining_dives"] != nil || show["remaining_status"] != "void_evidence_open" ||
		!strings.Contains(show["remaining_reason"].(string), "on hold") {
		t.Errorf("remaining on a hull on hold: %v %v %v (%v)", show["status"], show["remaining_dives"], show["remaining_status"], show["remaining_reason"])
	}
}

// TestAssessAfterCurveChange: an engineer changes the design fatigue
// factor; hulltally assess appends a new assessment and the old stays.
func TestAssessAfterCurveChange(t *testing.T) {
	e := newEnv(t)
	// An inspection and a proof test on record, so that the hull is not
	// on hold and its remaining life is shown.
	e.ok("inspect", "EX-C4000-01", "--method", "visual", "--result", "pass")
	e.ok("prooftest", "EX-C4000-01", "--pressure", "50", "--result", "pass")
	for i, depth := range []int{500, 800, 650} {
		p := filepath.Join(t.TempDir(), fmt.Sprintf("d%d.csv", i))
		os.WriteFile(p, []byte(fmt.Sprintf("time,depth_m\n2026-05-0%dT08:00:00Z,0\n2026-05-0%dT08:10:00Z,%d\n2026-05-0%dT08:20:00Z,0\n", i+1, i+1, depth, i+1)), 0o644)
		e.ok("dive", "log", "--hull", "EX-C4000-01", "--lat", "45", p)
	}
	var before map[string]any
	e.jsonOK(&before, "hull", "show", "EX-C4000-01")
	cfg := filepath.Join(t.TempDir(), "dff.yaml")
	os.WriteFile(cfg, []byte("fatigue:\n  design_fatigue_factor: 2\n"), 0o644)
	var res map[string]any
	e.jsonOK(&res, "--config", cfg, "assess", "--reason", "DFF 2 after review")
	as := res["assessments"].([]any)
	if len(as) != 1 || as[0].(map[string]any)["dives"].(float64) != 3 {
		t.Fatalf("assess: %v", res)
	}
	var after map[string]any
	e.jsonOK(&after, "--config", cfg, "hull", "show", "EX-C4000-01")
	b0 := before["components"].([]any)[1].(map[string]any)["cyclic_damage"].(float64)
	a0 := after["components"].([]any)[1].(map[string]any)["cyclic_damage"].(float64)
	if math.Abs(a0-2*b0) > 1e-12*a0 {
		t.Fatalf("cyclic damage %g after DFF 2, want 2 × %g", a0, b0)
	}
	if n := after["assessment"].(map[string]any)["assessments_on_record"].(float64); n != 4 {
		t.Fatalf("%v assessments on record, want 4 (3 at logging, 1 re-assessment)", n)
	}
	if before["remaining_dives"] == nil || after["remaining_dives"].(float64) >= before["remaining_dives"].(float64) {
		t.Fatalf("remaining dives %v -> %v", before["remaining_dives"], after["remaining_dives"])
	}
	e.ok("verify")
}

func TestExitCodes(t *testing.T) {
	e := newEnv(t)
	bad := filepath.Join(t.TempDir(), "bad.csv")
	os.WriteFile(bad, []byte("time,depth_m\n2026-05-01T08:00:00Z,abc\n"), 0o644)
	_, errs, code := e.run("dive", "log", "--hull", "EX-C4000-01", bad)
	if code != 2 || !strings.Contains(errs, "bad.csv:2:2") {
		t.Errorf("bad file: exit %d, %q", code, errs)
	}
	_, _, code = e.run("dive", "log", "--hull", "NOPE", bad)
	if code != 2 {
		t.Errorf("unknown hull: exit %d", code)
	}
	_, _, code = e.run("dive", "log", bad)
	if code != 2 {
		t.Errorf("missing --hull: exit %d", code)
	}
	var v map[string]any
	e.jsonOK(&v, "verify")
	// The hull, its revision and its first status (noted at hull add).
	if v["ok"] != true || v["records"].(float64) != 3 {
		t.Fatalf("verify: %v", v)
	}
	if _, ok := v["first_broken"]; !ok {
		t.Errorf("verify --json lacks first_broken")
	}
}

func TestVerifyFailsAfterTamper(t *testing.T) {
	e := newEnv(t)
	p := filepath.Join(t.TempDir(), "d.csv")
	os.WriteFile(p, []byte("time,depth_m,strain_hoop1_ue\n2026-05-01T08:00:00Z,0,0\n2026-05-01T08:10:00Z,500,-600.5\n2026-05-01T08:20:00Z,0,0.5\n"), 0o644)
	e.ok("dive", "log", "--hull", "EX-C4000-01", p)
	e.ok("verify")
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, e.url)
	if err != nil {
		t.Fatal(err)
	}
	// A rogue administrator disables the guard and edits one reading.
	for _, sql := range []string{
		"ALTER TABLE reading_blocks DISABLE TRIGGER reading_blocks_append_only",
		`UPDATE reading_blocks SET data = overlay(data placing '\x05'::bytea from length(data) for 1)`,
		"ALTER TABLE reading_blocks ENABLE TRIGGER reading_blocks_append_only",
	} {
		if _, err := conn.Exec(ctx, sql); err != nil {
			t.Fatal(err)
		}
	}
	conn.Close(ctx)
	out, _, code := e.run("verify", "--json")
	var v map[string]any
	json.Unmarshal([]byte(out), &v)
	if code != 1 || v["ok"] != false || v["first_broken"] == nil {
		t.Fatalf("verify after tamper: exit %d %v", code, v)
	}
}

// TestCrashMidLog kills a large dive log half-way with SIGKILL: nothing of
// that dive may be in the ledger, and logging the file again succeeds.
func TestCrashMidLog(t *testing.T) {
	e := newEnv(t)
	p, rows := benchFile(t, 2) // 720 000 samples
	c := e.cmd("dive", "log", "--hull", "EX-C4000-01", "--start", "2026-06-01T00:00:00Z", "--progress", p)
	stderr, err := c.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := c.Start(); err != nil {
		t.Fatal(err)
	}
	sc := bufio.NewScanner(stderr)
	killedAt := int64(-1)
	for sc.Scan() {
		line := sc.Text()
		if n, ok := strings.CutPrefix(line, "progress: "); ok {
			v, _ := strconv.ParseInt(strings.Fields(n)[0], 10, 64)
			if v >= int64(rows)/2 {
				c.Process.Signal(syscall.SIGKILL)
				killedAt = v
				break
			}
		}
	}
	err = c.Wait()
	if killedAt < 0 {
		t.Fatalf("the log finished before it could be killed (%v)", err)
	}
	if ws, ok := c.ProcessState.Sys().(syscall.WaitStatus); !ok || !ws.Signaled() {
		t.Fatalf("process was not killed: %v", c.ProcessState)
	}
	t.Logf("killed after %d of %d samples were stored", killedAt, rows)
	// The server notices the dropped connection and rolls back; give it
	// a moment, then nothing of the dive may be visible.
	deadline := time.Now().Add(10 * time.Second)
	for e.count("pg_stat_activity WHERE datname = current_database() AND state <> 'idle' AND pid <> pg_backend_pid()") > 0 && time.Now().Before(deadline) {
		time.Sleep(50 * time.Millisecond)
	}
	for _, tb := range []string{"dives", "reading_blocks", "ae_hits"} {
		if n := e.count(tb); n != 0 {
			t.Fatalf("%s has %d rows after the crash", tb, n)
		}
	}
	if n := e.count("audit_chain"); n != 3 {
		t.Fatalf("audit chain has %d records, want the hull's 3 (hull, revision, first status)", n)
	}
	var d map[string]any
	e.jsonOK(&d, "dive", "log", "--hull", "EX-C4000-01", "--start", "2026-06-01T00:00:00Z", p)
	if d["duplicate"] != false || int(d["samples"].(float64)) != rows {
		t.Fatalf("log after crash: %v", d)
	}
	e.ok("verify")
}

// TestTwoProcessesSameFile: two hulltally processes log the same file at
// once; exactly one dive results.
func TestTwoProcessesSameFile(t *testing.T) {
	e := newEnv(t)
	p, _ := benchFile(t, 0.5)
	var wg sync.WaitGroup
	outs := make([]map[string]any, 2)
	for i := range outs {
		wg.Add(1)
		go func(i int) {
			defer wg.Done()
			c := e.cmd("dive", "log", "--hull", "EX-C4000-01", "--start", "2026-06-01T00:00:00Z", "--json", p)
			out, err := c.Output()
			if err != nil {
				t.Errorf("process %d: %v", i, err)
				return
			}
			json.Unmarshal(out, &outs[i])
		}(i)
	}
	wg.Wait()
	if outs[0] == nil || outs[1] == nil {
		t.Fatal("a process failed")
	}
	if outs[0]["dive_id"] != outs[1]["dive_id"] || outs[0]["duplicate"] == outs[1]["duplicate"] {
		t.Fatalf("results: %v / %v", outs[0], outs[1])
	}
	if n := e.count("dives"); n != 1 {
		t.Fatalf("%d dives", n)
	}
}

// TestManagedCluster runs the tool with no database URL: it creates its
// own cluster under HULLTALLY_HOME, reports it, and stops it.
func TestManagedCluster(t *testing.T) {
	home, err := os.MkdirTemp("", "hthome-")
	if err != nil {
		t.Fatal(err)
	}
	os.Chmod(home, 0o755)
	defer os.RemoveAll(home)
	run := func(args ...string) (string, string, int) {
		c := exec.Command(bin, args...)
		c.Env = append(os.Environ(), "HULLTALLY_HOME="+home)
		c.Env = append(c.Env, "HULLTALLY_DATABASE_URL=")
		return runCmd(t, c)
	}
	defer run("db", "stop")
	out, errs, code := run("hull", "add", "-f", "../../testdata/hulls/example-cylinder.yaml")
	if code != 0 || !strings.Contains(errs, "created a PostgreSQL cluster in "+filepath.Join(home, "postgres")) {
		t.Fatalf("first use: exit %d\n%s%s", code, out, errs)
	}
	out, _, _ = run("db", "status", "--json")
	var st map[string]any
	if err := json.Unmarshal([]byte(out), &st); err != nil {
		t.Fatal(err, out)
	}
	if st["managed"] != true || st["running"] != true || !strings.Contains(st["url"].(string), "host=") {
		t.Fatalf("db status: %v", st)
	}
	if _, errs, code := run("hull", "list"); code != 0 || strings.Contains(errs, "created") {
		t.Fatalf("second use: exit %d %s", code, errs)
	}
	if out, _, code := run("db", "stop"); code != 0 || !strings.Contains(out, "stopped") {
		t.Fatalf("db stop: %d %s", code, out)
	}
	out, _, _ = run("db", "status", "--json")
	json.Unmarshal([]byte(out), &st)
	if st["running"] != false {
		t.Fatalf("after stop: %v", st)
	}
}

// TestCorrection: a correction is a new record that names what it
// corrects; the dive row itself is never edited.
func TestCorrection(t *testing.T) {
	e := newEnv(t)
	p := filepath.Join(t.TempDir(), "d.csv")
	os.WriteFile(p, []byte("time,depth_m\n2026-05-01T08:00:00Z,0\n2026-05-01T08:10:00Z,300\n2026-05-01T08:20:00Z,0\n"), 0o644)
	var d map[string]any
	e.jsonOK(&d, "dive", "log", "--hull", "EX-C4000-01", "--site", "Wrong Bay", p)
	id := d["dive_id"].(string)
	e.ok("dive", "correct", id[:8], "--field", "site", "--value", "Right Bay", "--reason", "typed the wrong site")
	var show map[string]any
	e.jsonOK(&show, "dive", "show", id)
	if show["site"] != "Right Bay" || len(show["corrections"].([]any)) != 1 {
		t.Fatalf("after correction: site %v, corrections %v", show["site"], show["corrections"])
	}
	if n := e.count("dives WHERE site = 'Wrong Bay'"); n != 1 {
		t.Fatalf("the original dive row changed (%d rows with the original site)", n)
	}
	_, errs, code := e.run("dive", "correct", id, "--field", "latitude", "--value", "10", "--reason", "x")
	if code != 2 || !strings.Contains(errs, "cannot be corrected") {
		t.Fatalf("latitude correction: exit %d %s", code, errs)
	}
	e.ok("verify")
}
