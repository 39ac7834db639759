package main

// End-to-end review tests through the hulltally binary and a real
// PostgreSQL: each feeds the input that would make a hull look better than
// it is (a spec revision, a void and re-log, a proof test without samples,
// a yo-yo dive, a mislabelled gauge column, one high sample, a backdated
// dive, a setting that does not parse) and asserts the safe outcome.
// testdata/review/README.md says where each expected value comes from.
//
// The dive and hits files are written with the helpers of
// evidence_cli_test.go (writeSamples, writeHits, stdKnots, …).

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
)

const (
	revUprated   = "../../testdata/review/example-uprated-4300.yaml"
	revNoAE      = "../../testdata/review/example-no-ae.yaml"
	revQualified = "../../testdata/review/example-qualified-4-cycles.yaml"
)

// deepKnots is a dive to 4100 m (rated 4000 m) at 2 m/s with a 20-minute
// hold, sampled in depth_m (as in TestAdversarialSlowClockAfterClearing).
var deepKnots = []knot{{0, 0}, {60, 0}, {2110, 4100}, {3310, 4100}, {5360, 0}, {5420, 0}}

// runEnv runs the binary with extra environment variables; it returns
// stdout, stderr and the exit code.
func (e *env) runEnv(extra []string, args ...string) (string, string, int) {
	e.t.Helper()
	c := e.cmd(args...)
	c.Env = append(c.Env, extra...)
	return e.capture(c)
}

// scaleColumn multiplies every value of a column of a written samples
// file by f (the column's values are printed with three decimals).
func scaleColumn(t *testing.T, path, col string, f float64) {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimRight(string(data), "\n"), "\n")
	idx := -1
	var out []string
	for _, ln := range lines {
		if strings.HasPrefix(ln, "#") {
			out = append(out, ln)
			continue
		}
		fs := strings.Split(ln, ",")
		if idx < 0 {
			for i, h := range fs {
				if h == col {
					idx = i
				}
			}
			if idx < 0 {
				t.Fatalf("%s: no column %s", path, col)
			}
			out = append(out, ln)
			continue
		}
		v, err := strconv.ParseFloat(fs[idx], 64)
		if err != nil {
			t.Fatal(err)
		}
		fs[idx] = fmt.Sprintf("%.3f", v*f)
		out = append(out, strings.Join(fs, ","))
	}
	if err := os.WriteFile(path, []byte(strings.Join(out, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
}

// gaugeOf returns the evidence of one strain gauge of a dive.
func gaugeOf(t *testing.T, ev map[string]any, name string) map[string]any {
	t.Helper()
	gs, _ := ev["gauges"].([]any)
	for _, g := range gs {
		if m := g.(map[string]any); m["gauge"] == name {
			return m
		}
	}
	t.Fatalf("gauge %s not in evidence.gauges: %v", name, ev["gauges"])
	return nil
}

// Case 1a. A dive to 4100 m on the example hull (rated 4000 m) holds it
// (beyond-rated-depth: 4100 / 4000 = 1.025 > 1.0). The spec is then
// revised to rated_depth_m 4300 (testdata/review/example-uprated-4300.yaml,
// the example with only that change; 4300 m is 43.92 MPa at latitude 90°,
// within the design pressure of 44 MPa). The old dive was judged against
// the revision in force when it was made: its hold stays. Control: a new
// dive to 4100 m after the revision is not beyond the rating.
func TestReviewSpecRevisionKeepsOldDiveHold(t *testing.T) {
	e := newEnv(t)
	e.makeFit(advHull)
	dir := t.TempDir()
	d := e.logJSON("--hull", advHull, "--ae", writeHits(t, dir, "h.csv", advDay(5), surfaceChecks()),
		writeSamples(t, dir, "deep.csv", advDay(5), deepKnots, sampleOpts{loadCol: "depth_m", step: 4}))
	id := d["dive_id"].(string)
	show := e.hullJSON(advHull)
	if d["beyond_rated"] != true || flagLevel(show, "beyond-rated-depth", id) != "hold" {
		t.Fatalf("dive to 4100 m before the revision: beyond_rated %v; flags:\n%s", d["beyond_rated"], dumpFlags(show))
	}
	e.ok("hull", "add", "-f", revUprated, "--revise", "--reason", "uprated")
	show = e.hullJSON(advHull)
	if show["rated_depth_m"] != 4300.0 {
		t.Fatalf("after the revision: rated_depth_m %v, want 4300", show["rated_depth_m"])
	}
	if lv := flagLevel(show, "beyond-rated-depth", id); lv != "hold" || show["status"] != "hold" {
		t.Errorf("after uprating to 4300 m: the 4100 m dive made under the 4000 m rating has beyond-rated-depth %q, hull status %v; want hold and hold; flags:\n%s",
			lv, show["status"], dumpFlags(show))
	}
	if one := e.showDive(id); one["beyond_rated"] != true {
		t.Errorf("after uprating: dive show of the old dive says beyond_rated %v, want true", one["beyond_rated"])
	}
	// Control: the revision is in force for dives made after it.
	d2 := e.logJSON("--hull", advHull, "--ae", writeHits(t, dir, "h2.csv", advDay(10), surfaceChecks()),
		writeSamples(t, dir, "deep2.csv", advDay(10), deepKnots, sampleOpts{loadCol: "depth_m", step: 4}))
	show = e.hullJSON(advHull)
	if d2["beyond_rated"] != false || flagLevel(show, "beyond-rated-depth", d2["dive_id"].(string)) != "" {
		t.Errorf("control: a 4100 m dive after uprating to 4300 m: beyond_rated %v, flag %q; want false and none",
			d2["beyond_rated"], flagLevel(show, "beyond-rated-depth", d2["dive_id"].(string)))
	}
	if lv := flagLevel(show, "beyond-rated-depth", id); lv != "hold" {
		t.Errorf("after a later dive: the old dive's beyond-rated-depth flag %q, want hold; flags:\n%s", lv, dumpFlags(show))
	}
}

// Case 1b. A dive logged without a hits file is missing both AE channels
// (missing-evidence value 2: two channels, both strain gauges present).
// A revision that removes the AE channels
// (testdata/review/example-no-ae.yaml) cannot drop what the dive was
// missing: the flag stays with value 2.
func TestReviewSpecRevisionKeepsMissingEvidence(t *testing.T) {
	e := newEnv(t)
	e.makeFit(advHull)
	dir := t.TempDir()
	d := e.logJSON("--hull", advHull, writeSamples(t, dir, "s.csv", advDay(5), stdKnots(30), sampleOpts{}))
	id := d["dive_id"].(string)
	show := e.hullJSON(advHull)
	fs := flagsOf(show, "missing-evidence", id)
	if len(fs) == 0 || fs[0]["value"] != 2.0 {
		t.Fatalf("dive without hits before the revision: missing-evidence %v, want value 2; flags:\n%s", fs, dumpFlags(show))
	}
	e.ok("hull", "add", "-f", revNoAE, "--revise", "--reason", "acoustic-emission system removed")
	show = e.hullJSON(advHull)
	fs = flagsOf(show, "missing-evidence", id)
	if len(fs) == 0 || fs[0]["value"] != 2.0 {
		t.Errorf("after a revision without AE channels: missing-evidence flag of the old dive %v, want it kept with value 2; flags:\n%s", fs, dumpFlags(show))
	}
	if show["status"] == "fit" {
		t.Errorf("after the revision: hull fit with the old dive's missing evidence open")
	}
}

// Case 2. A dive with hold emission continuing (33 hits in the hold, 21
// after settling > hold_max_hits_after_settle 5, as in
// TestAdversarialHoldEmissionContinues) holds the hull. After `dive void`
// the hull stays on hold: the void dive's flags stay, with a data-quality
// finding dive_voided. The same samples with a comment line added,
// logged on the same hull with a hits file of sensor checks only, are
// refused (exit 2) naming the void dive; nothing is stored.
func TestReviewVoidAndRelog(t *testing.T) {
	e := newEnv(t)
	e.makeFit(advHull)
	dir := t.TempDir()
	start := advDay(5)
	rows := surfaceChecks()
	for i := 0; i < 12; i++ {
		rows = append(rows, aeRow{1490 + 4*float64(i), 1, 60, 50, ""})
	}
	for j := 0; j <= 20; j++ {
		rows = append(rows, aeRow{1560 + 60*float64(j), 1 + j%2, 60, 50, ""})
	}
	d := e.logJSON("--hull", advHull, "--ae", writeHits(t, dir, "h.csv", start, rows),
		writeSamples(t, dir, "s.csv", start, stdKnots(30), sampleOpts{}))
	id := d["dive_id"].(string)
	show := e.hullJSON(advHull)
	if flagLevel(show, "hold-hits-after-settle", id) != "hold" || show["status"] != "hold" {
		t.Fatalf("before the void: status %v; flags:\n%s", show["status"], dumpFlags(show))
	}
	e.ok("dive", "void", id, "--reason", "re-export of the logger file")
	show = e.hullJSON(advHull)
	voided := false
	for _, f := range flagsOf(show, "data-quality", id) {
		voided = voided || strings.Contains(fmt.Sprint(f["detail"]), "dive_voided")
	}
	if !voided {
		t.Errorf("right after the void: no data-quality flag with dive_voided for %s; flags:\n%s", id, dumpFlags(show))
	}
	if show["status"] != "hold" || flagLevel(show, "hold-hits-after-settle", id) != "hold" {
		t.Errorf("right after the void: status %v, hold-hits-after-settle %q; want hold and hold (a void closes nothing by itself); flags:\n%s",
			show["status"], flagLevel(show, "hold-hits-after-settle", id), dumpFlags(show))
	}
	s2 := writeSamples(t, dir, "s-again.csv", start, stdKnots(30), sampleOpts{comment: "re-exported, clean"})
	h2 := writeHits(t, dir, "h-checks.csv", start, surfaceChecks())
	out, errs, code := e.run("dive", "log", "--lat", "45", "--hull", advHull, "--ae", h2, s2)
	if code != 2 || !strings.Contains(out+errs, id) {
		t.Errorf("re-log of the void dive's samples with checks-only hits on the same hull: exit %d, want 2 naming %s\n%s%s", code, id, out, errs)
	}
	t.Logf("re-log refused: exit %d: %s", code, strings.TrimSpace(errs))
	if n := e.count("dives"); n != 1 {
		t.Errorf("%d dives after the refused re-log, want 1", n)
	}
	if st := e.hullJSON(advHull)["status"]; st != "hold" {
		t.Errorf("after the refused re-log: status %v, want hold", st)
	}
}

// Case 3. A passing proof test recorded without samples at 60 MPa (spec
// proof pressure 50 MPa, tolerance 2 %): 60 / 50 = 1.2 > the
// proof-overshoot hold level 1.03 (configs/rules.yaml), so the hull is on
// hold even with a passing inspection after it. The test is charged for
// damage as one cycle to 60 MPa with proof.hold_min (30 min) at it:
// components[].proof_tests has count 1 and cyclic damage > 0.
func TestReviewProofWithoutSamplesOvershoot(t *testing.T) {
	e := newEnv(t)
	e.ok("prooftest", advHull, "--pressure", "60", "--result", "pass", "--at", "2026-04-01T08:00:00Z")
	e.ok("inspect", advHull, "--method", "visual", "--result", "pass", "--at", "2026-04-02T08:00:00Z")
	show := e.hullJSON(advHull)
	fs := flagsOf(show, "proof-overshoot", "")
	lv := flagLevel(show, "proof-overshoot", "")
	if lv != "hold" || show["status"] != "hold" {
		t.Errorf("proof test at 60 MPa without samples: proof-overshoot %q, status %v; want hold and hold; flags:\n%s", lv, show["status"], dumpFlags(show))
	}
	for _, f := range fs {
		if v, ok := f["value"].(float64); !ok || !near(v, 1.2, 1e-9) {
			t.Errorf("proof-overshoot value %v, want 1.2 (60 / 50)", f["value"])
		}
	}
	comps, _ := show["components"].([]any)
	if len(comps) != 2 {
		t.Fatalf("components %v", show["components"])
	}
	for _, c := range comps {
		m := c.(map[string]any)
		pt, ok := m["proof_tests"].(map[string]any)
		if !ok {
			t.Errorf("component %v: no proof_tests (the test's load is not charged): %v", m["name"], m)
			continue
		}
		cy, _ := pt["cyclic"].(float64)
		if pt["count"] != 1.0 || !(cy > 0) {
			t.Errorf("component %v: proof_tests %v, want count 1 and cyclic > 0", m["name"], pt)
		}
		if tot, _ := m["cyclic_damage"].(float64); tot < cy {
			t.Errorf("component %v: cyclic_damage %v below the proof test's %v (not included in the totals)", m["name"], m["cyclic_damage"], cy)
		}
	}
	if mp, _ := show["max_pressure_ever_mpa"].(float64); mp < 60 {
		t.Errorf("max_pressure_ever_mpa %v, want ≥ 60 (the proof test's recorded pressure)", show["max_pressure_ever_mpa"])
	}
}

// Case 4. A yo-yo dive: 0 → 30 → 0 → 30 → 0 → 30 → 0 MPa at 0.02 MPa/s
// with 60 s holds at each turn. Rainflow of the reversals 0,30,0,30,0,30,0:
// two full cycles of 30 MPa and a residue of two half cycles: 3 cycles,
// each ≥ 0.1 × the design pressure 44 MPa. On the example spec with
// qualified_pressure_cycles 4 (testdata/review/example-qualified-4-cycles.yaml,
// recorded as a revision before any dive): one dive is 3 / 4 = 0.75
// (below the watch at 0.8), two are 6 / 4 = 1.5 ≥ 1.0: design-cycles-used
// holds the hull. Counting one cycle per dive (2 / 4 = 0.5) would not.
func TestReviewYoyoDesignCycles(t *testing.T) {
	e := newEnv(t)
	e.ok("hull", "add", "-f", revQualified, "--revise", "--reason", "qualification record: 4 pressure cycles")
	e.makeFit(advHull)
	k := []knot{{0, 0}, {60, 0}}
	tt := 60.0
	for i := 0; i < 3; i++ {
		tt += 1500
		k = append(k, knot{tt, 30})
		tt += 60
		k = append(k, knot{tt, 30})
		tt += 1500
		k = append(k, knot{tt, 0})
		tt += 60
		k = append(k, knot{tt, 0})
	}
	dir := t.TempDir()
	for i, day := range []int{5, 8} {
		start := advDay(day)
		d := e.logJSON("--hull", advHull, "--ae", writeHits(t, dir, fmt.Sprintf("h%d.csv", i), start, surfaceChecks()),
			writeSamples(t, dir, fmt.Sprintf("yoyo%d.csv", i), start, k, sampleOpts{}))
		n := 0.0
		for _, c := range e.showDive(d["dive_id"].(string))["pressure_cycles"].([]any) {
			m := c.(map[string]any)
			if m["range_mpa"].(float64) >= 4.4 {
				n += m["count"].(float64)
			}
		}
		if !near(n, 3, 1e-9) {
			t.Errorf("yo-yo dive %d: %v pressure cycles of at least 4.4 MPa, want 3", i, n)
		}
		show := e.hullJSON(advHull)
		lv := flagLevel(show, "design-cycles-used", "")
		switch {
		case i == 0 && lv == "hold":
			t.Errorf("after one yo-yo dive (3 of 4 cycles): design-cycles-used already hold; flags:\n%s", dumpFlags(show))
		case i == 1 && lv != "hold":
			t.Errorf("after two yo-yo dives (6 cycles ≥ 4 qualified): design-cycles-used %q, want hold; flags:\n%s", lv, dumpFlags(show))
		}
		if i == 1 {
			for _, f := range flagsOf(show, "design-cycles-used", "") {
				if v, ok := f["value"].(float64); ok && f["level"] == "hold" && !near(v, 1.5, 1e-9) {
					t.Errorf("design-cycles-used value %v, want 1.5 (6 / 4)", v)
				}
			}
			if show["status"] != "hold" {
				t.Errorf("after two yo-yo dives: status %v, want hold", show["status"])
			}
		}
	}
}

// Case 5. A gauge logger's readings written into a pressure_abs_mpa
// column: the surface reads 0.000 MPa absolute, below half an atmosphere
// (0.0507 MPa): finding pressure_below_atmospheric and a data-quality flag.
func TestReviewAbsoluteColumnBelowAtmospheric(t *testing.T) {
	e := newEnv(t)
	e.makeFit(advHull)
	dir := t.TempDir()
	s := writeSamples(t, dir, "abs.csv", advDay(5), stdKnots(30), sampleOpts{loadCol: "pressure_abs_mpa"})
	out, errs, code := e.run("dive", "log", "--lat", "45", "--hull", advHull, "--ae",
		writeHits(t, dir, "h.csv", advDay(5), surfaceChecks()), "--json", s)
	if code != 0 {
		t.Fatalf("dive log of a pressure_abs_mpa record reading 0.000 at the surface: exit %d, want it recorded with a finding\n%s%s", code, out, errs)
	}
	var logged map[string]any
	if err := json.Unmarshal([]byte(out), &logged); err != nil {
		t.Fatalf("dive log --json: %v\n%s", err, out)
	}
	id, _ := logged["dive_id"].(string)
	d := e.showDive(id)
	codes := findingCodes(evOf(t, d))
	if !hasString(codes, "pressure_below_atmospheric") {
		t.Errorf("absolute column reading 0.000 at the surface: findings %v, want pressure_below_atmospheric", codes)
	}
	show := e.hullJSON(advHull)
	found := false
	for _, f := range flagsOf(show, "data-quality", id) {
		found = found || strings.Contains(fmt.Sprint(f["detail"]), "pressure_below_atmospheric")
	}
	if !found {
		t.Errorf("no data-quality flag naming pressure_below_atmospheric for the dive; flags:\n%s", dumpFlags(show))
	}
}

// Case 6. A 20-minute hold at 30 MPa whose first sample reads 32 MPa
// (one high sample at 1560 s), and a 60 dB hit every minute through the
// hold (1560 + 60 j s, j = 0..20: 21 hits). Against the highest sample,
// 0.95 × 32 = 30.4 MPa would leave that one sample as the "hold" and push
// the emission out of judgement. The sustained peak (held for 60 s) is
// 30 MPa: the hold is the samples ≥ 28.5 MPa (from 1485 s), settling ends
// at 1545 s, all 21 hits are after it: 21 > 5 is significant and
// hold-hits-after-settle holds the hull.
func TestReviewSingleHighSampleHold(t *testing.T) {
	e := newEnv(t)
	e.makeFit(advHull)
	dir := t.TempDir()
	start := advDay(5)
	k := []knot{{0, 0}, {60, 0}, {1555, 29.9}, {1560, 32}, {1565, 30}, {2760, 30}, {4260, 0}, {4320, 0}}
	rows := surfaceChecks()
	for j := 0; j <= 20; j++ {
		rows = append(rows, aeRow{1560 + 60*float64(j), 1 + j%2, 60, 50, ""})
	}
	d := e.logJSON("--hull", advHull, "--ae", writeHits(t, dir, "h.csv", start, rows), writeSamples(t, dir, "s.csv", start, k, sampleOpts{}))
	id := d["dive_id"].(string)
	if mp, _ := d["max_pressure_mpa"].(float64); !near(mp, 32, 1e-9) {
		t.Errorf("max_pressure_mpa %v, want 32 (the high sample still counts as the dive's peak)", d["max_pressure_mpa"])
	}
	ev := evOf(t, d)
	he, ok := ev["hold_emission"].(map[string]any)
	if !ok {
		t.Fatalf("no hold_emission: %v", ev)
	}
	if he["hits"] != 21.0 || he["hits_after_settle"] != 21.0 || he["absolute_judged"] != true || he["significant"] != true {
		t.Errorf("hold emission %v; want 21 hits, 21 after settling, absolute judged, significant (the hold against the sustained 30 MPa)", he)
	}
	show := e.hullJSON(advHull)
	if lv := flagLevel(show, "hold-hits-after-settle", id); lv != "hold" || d["status_after"] != "hold" {
		t.Errorf("hold-hits-after-settle %q, status after %v; want hold and hold; flags:\n%s", lv, d["status_after"], dumpFlags(show))
	}
}

// Case 7. Dives on 5, 8 and 11 May at hoop1 −120 µε/MPa set the baseline
// (the mean of the first baseline_dives 3 recorded). A dive on 14 May at
// −127 µε/MPa is 127 / 120 − 1 = 5.83 % softer ≥ the compliance-change
// hold level 0.05: hold. A dive dated 2 May (before all) at −127 is then
// logged late. Were the baseline the first three by date, it would be
// (−127 − 120 − 120) / 3 = −122.33 and the 14 May dive's change 3.8 %
// (a watch only). The baseline dives are the first recorded, and a
// re-judgement never closes a flag: the 14 May dive's hold remains.
func TestReviewBackdatedDiveKeepsComplianceHold(t *testing.T) {
	e := newEnv(t)
	e.makeFit(advHull)
	dir := t.TempDir()
	logDay := func(day int, slope float64) map[string]any {
		t.Helper()
		start := advDay(day)
		s := writeSamples(t, dir, fmt.Sprintf("s%d.csv", day), start, stdKnots(30), sampleOpts{})
		if slope != -120 {
			scaleColumn(t, s, "strain_hoop1_ue", slope/-120)
		}
		return e.logJSON("--hull", advHull, "--ae", writeHits(t, dir, fmt.Sprintf("h%d.csv", day), start, surfaceChecks()), s)
	}
	for _, day := range []int{5, 8, 11} {
		logDay(day, -120)
	}
	late := logDay(14, -127)
	lid := late["dive_id"].(string)
	want := 127.0/120 - 1
	g := gaugeOf(t, evOf(t, late), "hoop1")
	if cc, ok := g["compliance_change"].(float64); !ok || !near(math.Abs(cc), want, 2e-3) {
		t.Errorf("14 May dive: hoop1 compliance_change %v, want %.4f (baseline %v)", g["compliance_change"], want, g["baseline_ue_per_mpa"])
	}
	show := e.hullJSON(advHull)
	if lv := flagLevel(show, "compliance-change", lid); lv != "hold" {
		t.Fatalf("14 May dive at −127 against −120: compliance-change %q, want hold; flags:\n%s", lv, dumpFlags(show))
	}
	back := logDay(2, -127)
	t.Logf("backdated dive re-judged %v", back["rejudged"])
	show = e.hullJSON(advHull)
	if lv := flagLevel(show, "compliance-change", lid); lv != "hold" || show["status"] != "hold" {
		t.Errorf("after a dive dated before all: the 14 May dive's compliance-change %q, status %v; want hold and hold; flags:\n%s",
			lv, show["status"], dumpFlags(show))
	}
	g = gaugeOf(t, evOf(t, e.showDive(lid)), "hoop1")
	if cc, ok := g["compliance_change"].(float64); !ok || !near(math.Abs(cc), want, 2e-3) {
		t.Errorf("14 May dive after the backdated dive: hoop1 compliance_change %v (baseline %v, %v), want %.4f: the baseline dives are the first recorded",
			g["compliance_change"], g["baseline_ue_per_mpa"], evOf(t, e.showDive(lid))["baseline_source"], want)
	}
}

// Case 8. evidence.min_amplitude_db set through the environment to a
// value that is not a number (abc) or outside its range (141 dB_AE: the
// setting is bounded to (0, 100]; amplitudes themselves to 0–140) makes
// every command exit 2 with a message naming the key.
func TestReviewConfigMinAmplitudeRefused(t *testing.T) {
	e := newEnv(t)
	for _, val := range []string{"abc", "141"} {
		for _, args := range [][]string{{"hull", "list"}, {"hull", "show", advHull}, {"fleet"}, {"verify"}, {"hull", "list", "--json"}} {
			out, errs, code := e.runEnv([]string{"HULLTALLY_EVIDENCE_MIN_AMPLITUDE_DB=" + val}, args...)
			msg := strings.ToLower(out + errs)
			if args[0] == "verify" {
				t.Logf("%s: exit %d: %s", val, code, strings.TrimSpace(out+errs))
			}
			if code != 2 || !strings.Contains(msg, "min_amplitude_db") {
				t.Errorf("HULLTALLY_EVIDENCE_MIN_AMPLITUDE_DB=%s hulltally %s: exit %d, want 2 with a message naming min_amplitude_db:\n%s%s",
					val, strings.Join(args, " "), code, out, errs)
			}
		}
	}
}
