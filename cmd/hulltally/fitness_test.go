package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// dive writes a 0 -> depth -> 0 dive on day (1..28) of May 2026 with the
// example hull's strain gauges and an AE file, and logs it.
func (e *env) logDive(t *testing.T, day int, depth float64) {
	t.Helper()
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("time,depth_m,strain_hoop1_ue,strain_axial1_ue\n")
	for m := 0; m <= 120; m++ {
		z := depth * float64(m) / 40
		switch {
		case m > 80:
			z = depth * float64(120-m) / 40
		case m > 40:
			z = depth
		}
		p := z / 99.5 // about 1 MPa per 99.5 m
		ts := time.Date(2026, 5, day, 8, 0, 0, 0, time.UTC).Add(time.Duration(m) * 30 * time.Second)
		fmt.Fprintf(&b, "%s,%.2f,%.1f,%.1f\n", ts.Format(time.RFC3339), z, -120*p, -50*p)
	}
	s := filepath.Join(dir, "d.csv")
	os.WriteFile(s, []byte(b.String()), 0o644)
	h := filepath.Join(dir, "h.csv")
	os.WriteFile(h, []byte("time,channel,amplitude_db,energy,counts,duration_us,rise_us\n"), 0o644)
	e.ok("dive", "log", "--hull", "EX-C4000-01", "--lat", "45", "--ae", h, s)
}

func (e *env) status(t *testing.T) (string, []any) {
	t.Helper()
	var show map[string]any
	e.jsonOK(&show, "hull", "show", "EX-C4000-01")
	return show["status"].(string), show["status_reasons"].([]any)
}

func TestHoldClearsOnlyWithInspectionAndDecision(t *testing.T) {
	e := newEnv(t)
	e.ok("prooftest", "EX-C4000-01", "--pressure", "50", "--result", "pass", "--at", "2026-04-01T08:00:00Z")
	e.ok("inspect", "EX-C4000-01", "--method", "visual", "--result", "pass", "--at", "2026-04-02T08:00:00Z")
	for d := 1; d <= 4; d++ {
		e.logDive(t, d, 2000)
	}
	// 4100 m on a hull rated 4000 m: hold.
	e.logDive(t, 5, 4100)
	if st, _ := e.status(t); st != "hold" {
		t.Fatalf("status after a dive beyond the rated depth: %s", st)
	}
	// A return-to-service decision without a later inspection clears nothing.
	e.ok("decide", "EX-C4000-01", "--return-to-service", "--reason", "looks fine")
	if st, _ := e.status(t); st != "hold" {
		t.Fatalf("status after a decision without an inspection: %s", st)
	}
	// A failed inspection clears nothing either.
	e.ok("inspect", "EX-C4000-01", "--method", "ultrasonic", "--result", "fail", "--findings", "indication at mid-length")
	if st, _ := e.status(t); st != "hold" {
		t.Fatalf("status after a failed inspection: %s", st)
	}
	// A passing inspection, then a named decision with a reason: cleared.
	e.ok("inspect", "EX-C4000-01", "--method", "ultrasonic", "--result", "pass", "--findings", "indication re-examined: surface scratch")
	if st, _ := e.status(t); st != "hold" {
		t.Fatalf("status after the inspection alone: %s", st)
	}
	e.ok("decide", "EX-C4000-01", "--return-to-service", "--reason", "inspected after the deep dive, no damage found")
	st, reasons := e.status(t)
	if st == "hold" || st == "withdrawn" {
		t.Fatalf("status after inspection and decision: %s %v", st, reasons)
	}
	// Withdrawal by decision, and back.
	e.ok("decide", "EX-C4000-01", "--withdraw", "--reason", "end of season lay-up")
	if st, _ := e.status(t); st != "withdrawn" {
		t.Fatalf("status after withdrawal: %s", st)
	}
	_, errs, code := e.run("decide", "EX-C4000-01", "--return-to-service")
	if code != 2 || !strings.Contains(errs, "reason") {
		t.Fatalf("decision without a reason: exit %d %s", code, errs)
	}
	var show map[string]any
	e.jsonOK(&show, "hull", "show", "EX-C4000-01")
	m := show["maintenance"].(map[string]any)
	if len(m["inspections"].([]any)) != 3 || len(m["decisions"].([]any)) != 3 || len(m["proof_tests"].([]any)) != 1 {
		t.Fatalf("maintenance: %v", m)
	}
	if h := show["status_history"].([]any); len(h) < 3 {
		t.Fatalf("status history: %v", h)
	}
	e.ok("verify")
}

func TestClearance(t *testing.T) {
	e := newEnv(t)
	e.ok("prooftest", "EX-C4000-01", "--pressure", "50", "--result", "pass", "--at", "2026-04-01T08:00:00Z")
	e.ok("inspect", "EX-C4000-01", "--method", "visual", "--result", "pass", "--at", "2026-04-02T08:00:00Z")
	for d := 1; d <= 4; d++ {
		e.logDive(t, d, 2000)
	}
	clear := func(args ...string) (map[string]any, int) {
		out, errs, code := e.run(append([]string{"clear", "EX-C4000-01", "--json"}, args...)...)
		var c map[string]any
		if err := json.Unmarshal([]byte(out), &c); err != nil {
			t.Fatalf("clear %v: %v\n%s%s", args, err, out, errs)
		}
		return c, code
	}
	c, code := clear("--depth", "2500", "--bottom-time", "90")
	if code != 0 || c["go"] != true || len(c["reasons"].([]any)) == 0 {
		t.Fatalf("go case: exit %d %v", code, c)
	}
	c, code = clear("--depth", "4200")
	if code != 3 || c["go"] != false {
		t.Fatalf("beyond rated depth: exit %d %v", code, c)
	}
	// A dive beyond the rated depth puts the hull on hold: no-go for any dive.
	e.logDive(t, 5, 4100)
	c, code = clear("--depth", "1000")
	if code != 3 || c["go"] != false || c["status"] != "hold" {
		t.Fatalf("hull on hold: exit %d %v", code, c)
	}
	_, _, code = e.run("clear", "EX-C4000-01")
	if code != 2 {
		t.Fatalf("clear without --depth: exit %d", code)
	}
}

func TestClearanceDamageExceedsWhatIsLeft(t *testing.T) {
	e := newEnv(t)
	// A hull whose end ring already carries almost its whole allowable
	// from an earlier record: any further dive is no-go.
	spec, _ := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	s := strings.Replace(string(spec), "serial: EX-C4000-01", "serial: EX-OLD-02", 1)
	s = strings.Replace(s, "    curve: ti-6al-4v-machined-illustrative", "    curve: ti-6al-4v-machined-illustrative\n    prior_damage:\n      cyclic: 0.29999999\n      sustained: 0\n      source: earlier paper log (test)", 1)
	p := filepath.Join(t.TempDir(), "old.yaml")
	os.WriteFile(p, []byte(s), 0o644)
	e.ok("hull", "add", "-f", p)
	e.ok("prooftest", "EX-OLD-02", "--pressure", "50", "--result", "pass", "--at", "2026-04-01T08:00:00Z")
	out, _, code := e.run("clear", "EX-OLD-02", "--depth", "3000", "--json")
	var c map[string]any
	json.Unmarshal([]byte(out), &c)
	if code != 3 || c["go"] != false {
		t.Fatalf("exit %d %v", code, c)
	}
	found := false
	for _, r := range c["reasons"].([]any) {
		m := r.(map[string]any)
		if m["no_go"] == true && strings.Contains(fmt.Sprint(m["text"]), "damage") {
			found = true
		}
	}
	if !found {
		t.Fatalf("no damage reason among %v", c["reasons"])
	}
}

func TestFleetMostUrgentFirst(t *testing.T) {
	e := newEnv(t)
	spec, _ := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	p := filepath.Join(t.TempDir(), "b.yaml")
	os.WriteFile(p, []byte(strings.Replace(string(spec), "serial: EX-C4000-01", "serial: EX-B-02", 1)), 0o644)
	e.ok("hull", "add", "-f", p)
	for _, s := range []string{"EX-C4000-01", "EX-B-02"} {
		e.ok("prooftest", s, "--pressure", "50", "--result", "pass", "--at", "2026-04-01T08:00:00Z")
		e.ok("inspect", s, "--method", "visual", "--result", "pass", "--at", "2026-04-02T08:00:00Z")
	}
	e.logDive(t, 1, 4100) // EX-C4000-01 beyond its rated depth
	var fl map[string]any
	e.jsonOK(&fl, "fleet")
	hs := fl["hulls"].([]any)
	if len(hs) != 2 || hs[0].(map[string]any)["serial"] != "EX-C4000-01" || hs[0].(map[string]any)["status"] != "hold" {
		t.Fatalf("fleet: %v", hs)
	}
	for _, k := range []string{"status", "damage_percent_of_allowable", "remaining_dives", "last_dive", "open_flags"} {
		if _, ok := hs[0].(map[string]any)[k]; !ok {
			t.Errorf("fleet row lacks %s", k)
		}
	}
}
