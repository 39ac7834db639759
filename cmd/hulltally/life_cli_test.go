package main

// End-to-end tests, through the built binary, of remaining life, proof
// tests, collapse clearance and the implosion statement. Every expected
// value is derived here, by hand or by an independent computation with
// its derivation beside it; testdata/life/README.md lists where each
// comes from.

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"
)

const lifeSerial = "EX-C4000-01"

// Figures of the example hull (testdata/hulls/example-cylinder.yaml).
const (
	exInnerRadiusM = 0.50
	exWallM        = 0.09
	exLengthM      = 2.0
	exRatedDepthM  = 4000.0
	exProofMPa     = 50.0
	exCollapseMPa  = 88.0
	exEndRingF     = -9.5 // designer's factor of end-ring-fwd, MPa/MPa
)

// Defaults of configs/hulltally.yaml and configs/rules.yaml.
const (
	cfgAllowable  = 0.3 // fatigue.allowable (combine: add)
	cfgLimitRatio = 1.0 // rule damage-against-allowable, hold at 1.0
	cfgWindow     = 10  // fatigue.window
)

// lifeProfile writes a 0 → peak → 0 record sampled every 5 s (inside the
// data-quality limits: interval 10 s, gaps 60 s): three surface samples,
// a 60-step ramp, 60 samples at the peak, a 60-step ramp down and three
// surface samples. col is depth_m or pressure_mpa.
func lifeProfile(t *testing.T, dir, name string, start time.Time, col string, peak float64) string {
	t.Helper()
	var b strings.Builder
	fmt.Fprintf(&b, "time,%s\n", col)
	var vals []float64
	vals = append(vals, 0, 0, 0)
	for i := 1; i <= 60; i++ {
		vals = append(vals, peak*float64(i)/60)
	}
	for i := 0; i < 60; i++ {
		vals = append(vals, peak)
	}
	for i := 59; i >= 0; i-- {
		vals = append(vals, peak*float64(i)/60)
	}
	vals = append(vals, 0, 0)
	for i, v := range vals {
		fmt.Fprintf(&b, "%s,%.4f\n", start.Add(time.Duration(i)*5*time.Second).Format(time.RFC3339), v)
	}
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// lifeLog logs a depth dive of the example hull at latitude 45 and returns
// its id.
func (e *env) lifeLog(t *testing.T, start time.Time, depth float64) string {
	t.Helper()
	p := lifeProfile(t, t.TempDir(), "d.csv", start, "depth_m", depth)
	var d map[string]any
	e.jsonOK(&d, "dive", "log", "--hull", lifeSerial, "--lat", "45", p)
	if d["duplicate"] != false {
		t.Fatalf("dive of %s logged as a duplicate: %v", start, d)
	}
	return d["dive_id"].(string)
}

// lifeFit records a passing inspection and a passing proof test, so that
// the hull is not on hold for want of them.
func (e *env) lifeFit() {
	e.ok("inspect", lifeSerial, "--method", "visual", "--result", "pass")
	e.ok("prooftest", lifeSerial, "--pressure", "50", "--result", "pass")
}

// fnum reads a JSON number; a string ("inf", "nan") or anything else fails.
func fnum(t *testing.T, what string, v any) float64 {
	t.Helper()
	f, ok := v.(float64)
	if !ok {
		t.Fatalf("%s: want a number, got %T %v", what, v, v)
	}
	return f
}

func writeConfig(t *testing.T, body string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "cfg.yaml")
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// --- UNESCO 1983 depth and pressure, written here independently ---------

// unescoDepth is the depth in m for a sea pressure p in dbar at latitude
// lat in degrees: UNESCO 1983 (Fofonoff & Millard, UNESCO Technical
// Papers in Marine Science 44, "depth" algorithm; coefficients as
// published there, recalled from memory):
//
//	g(φ, p) = 9.780318·(1 + (5.2788e-3 + 2.36e-5·x)·x) + 1.092e-6·p, x = sin²φ
//	z = ((((−1.82e-15·p + 2.279e-10)·p − 2.2512e-5)·p + 9.72659)·p) / g
func unescoDepth(p, lat float64) float64 {
	x := math.Sin(lat * math.Pi / 180)
	x *= x
	g := 9.780318*(1+(5.2788e-3+2.36e-5*x)*x) + 1.092e-6*p
	return ((((-1.82e-15*p+2.279e-10)*p-2.2512e-5)*p + 9.72659) * p) / g
}

// unescoMPa inverts unescoDepth by bisection (the product uses Newton):
// the gauge pressure in MPa at depth z m and latitude lat.
func unescoMPa(z, lat float64) float64 {
	lo, hi := 0.0, 20000.0 // dbar; depth is increasing in p on this range
	for i := 0; i < 200; i++ {
		mid := (lo + hi) / 2
		if unescoDepth(mid, lat) < z {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2 / 100 // 100 dbar per MPa
}

func TestLifeUnescoCheckValue(t *testing.T) {
	// UNESCO 1983 check value (from memory): p = 10000 dbar at latitude
	// 30° gives 9712.653 m.
	if z := unescoDepth(10000, 30); math.Abs(z-9712.653) > 0.001 {
		t.Fatalf("unescoDepth(10000 dbar, 30°) = %.4f m, want 9712.653", z)
	}
}

// --- Case 1: remaining life at the MEAN of the recent window ------------

// TestLifeRecentMeanNotMedian logs two very deep dives and then ten
// recent dives, four deep and six shallow. The remaining life must be
// projected at the MEAN damage per dive of the last ten dives (Miner sums
// add: the mean is the rate), not the median (which here is a shallow
// dive's damage and would hide the deep minority), and not over all
// twelve dives.
func TestLifeRecentMeanNotMedian(t *testing.T) {
	e := newEnv(t)
	e.lifeFit()
	// A horizon far above any figure here, so that the projections are
	// figures, not "more than".
	cfg := writeConfig(t, "fatigue:\n  life_horizon: 1000000000000\n")
	depths := []float64{3900, 3900, // outside the window of ten
		3500, 300, 300, 3500, 300, 300, 3500, 300, 300, 3500}
	ids := make([]string, len(depths))
	for i, z := range depths {
		ids[i] = e.lifeLog(t, time.Date(2026, 5, 1+i, 8, 0, 0, 0, time.UTC), z)
	}
	// Per-dive damage as dive show reports it, as ratio of the allowable
	// per component: (cyclic + sustained) / allowable (combine: add).
	perDive := make([]map[string]float64, len(ids))
	comps := []string{"laminate", "end-ring-fwd"}
	for i, id := range ids {
		var d map[string]any
		e.jsonOK(&d, "--config", cfg, "dive", "show", id)
		dm := d["damage"].(map[string]any)
		perDive[i] = map[string]float64{}
		for _, c := range comps {
			cd, ok := dm[c].(map[string]any)
			if !ok {
				t.Fatalf("dive %d (%v m): no damage for %s: %v", i, depths[i], c, dm)
			}
			perDive[i][c] = (fnum(t, c+" cyclic", cd["cyclic"]) + fnum(t, c+" sustained", cd["sustained"])) / cfgAllowable
		}
	}
	var show map[string]any
	e.jsonOK(&show, "--config", cfg, "hull", "show", lifeSerial)
	// The proof test of lifeFit was recorded without samples: it is charged
	// as one cycle to its pressure with proof.hold_min at it, reported per
	// component as proof_tests (its value is checked in the ledger test
	// TestProofTestWithoutSamplesCharged); it is part of the damage now.
	proofNow := map[string]float64{}
	for _, x := range show["components"].([]any) {
		m := x.(map[string]any)
		if pt, ok := m["proof_tests"].(map[string]any); ok {
			proofNow[m["name"].(string)] = (fnum(t, "proof cyclic", pt["cyclic"]) + fnum(t, "proof sustained", pt["sustained"])) / cfgAllowable
		}
	}
	// Hand projection: for each component, now = the proof test plus Σ
	// over all 12 dives, mean = Σ over the last 10 / 10, left = (limit −
	// now) / mean; the figure is the smallest left, floored.
	project := func(rate func(c string) float64) float64 {
		best := math.Inf(1)
		for _, c := range comps {
			now := proofNow[c]
			for _, d := range perDive {
				now += d[c]
			}
			if r := rate(c); r > 0 {
				best = math.Min(best, (cfgLimitRatio-now)/r)
			}
		}
		return best
	}
	recent := perDive[len(perDive)-cfgWindow:]
	meanLeft := project(func(c string) float64 {
		s := 0.0
		for _, d := range recent {
			s += d[c]
		}
		return s / float64(len(recent))
	})
	medianLeft := project(func(c string) float64 {
		v := make([]float64, 0, len(recent))
		for _, d := range recent {
			v = append(v, d[c])
		}
		sort.Float64s(v)
		return (v[4] + v[5]) / 2
	})
	allLeft := project(func(c string) float64 {
		s := 0.0
		for _, d := range perDive {
			s += d[c]
		}
		return s / float64(len(perDive))
	})
	wantMean := math.Floor(meanLeft)
	t.Logf("hand projection: mean of last 10 %.6f dives, median %.6g, mean of all 12 %.6f", meanLeft, medianLeft, allLeft)
	if !(medianLeft > 10*meanLeft) {
		t.Fatalf("test set-up: the median projection %.6g is not much larger than the mean's %.6g; deepen the deep dives", medianLeft, meanLeft)
	}
	if math.Floor(allLeft) == wantMean {
		t.Fatalf("test set-up: the window does not change the figure (%v)", wantMean)
	}

	if show["status"] == "hold" {
		t.Fatalf("hull on hold, no remaining life to check: %v", show["status_reasons"])
	}
	for _, k := range []string{"remaining_at_recent_mean", "remaining_at_design_dive", "remaining_limit_ratio", "remaining_basis"} {
		if _, ok := show[k]; !ok {
			t.Fatalf("hull show --json lacks %s", k)
		}
	}
	if lr := fnum(t, "remaining_limit_ratio", show["remaining_limit_ratio"]); lr != cfgLimitRatio {
		t.Errorf("remaining_limit_ratio %v, want the damage rule's hold level %v", lr, cfgLimitRatio)
	}
	if show["remaining_at_recent_mean"] == nil {
		t.Fatalf("remaining_at_recent_mean is null (%v: %v)", show["remaining_status"], show["remaining_reason"])
	}
	gotMean := fnum(t, "remaining_at_recent_mean", show["remaining_at_recent_mean"])
	// Floor of the quotient; floating-point order may take one dive off,
	// never add one.
	if gotMean != wantMean && !(gotMean == wantMean-1 && meanLeft-wantMean < 1e-6) {
		t.Errorf("remaining_at_recent_mean = %.0f, want ⌊%.6f⌋ = %.0f from the mean damage of the last %d dives (median would give %.0f, all 12 dives %.0f)",
			gotMean, meanLeft, wantMean, cfgWindow, math.Floor(medianLeft), math.Floor(allLeft))
	}
	if show["remaining_at_design_dive"] == nil || show["remaining_dives"] == nil {
		t.Fatalf("remaining_at_design_dive %v, remaining_dives %v (%v)", show["remaining_at_design_dive"], show["remaining_dives"], show["remaining_reason"])
	}
	gotDesign := fnum(t, "remaining_at_design_dive", show["remaining_at_design_dive"])
	// The design dive: one cycle to the rated depth's pressure (latitude
	// 90) with fatigue.design_bottom_time_min = 60 min at it, derived from
	// the curves by handDiveRatio; projected from the same damage now.
	_, perDesign := handDiveRatio(unescoMPa(exRatedDepthM, 90), 60*60)
	designLeft := project(func(c string) float64 { return perDesign[c] })
	if want := math.Floor(designLeft); gotDesign != want && !(gotDesign == want-1 && designLeft-want < 1e-6) {
		t.Errorf("remaining_at_design_dive = %.0f, want ⌊%.6f⌋ = %.0f from one design dive (rated depth, 60 min)", gotDesign, designLeft, want)
	}
	gotDives := fnum(t, "remaining_dives", show["remaining_dives"])
	if gotDives != math.Min(gotMean, gotDesign) {
		t.Errorf("remaining_dives %.0f is not the smaller of remaining_at_recent_mean %.0f and remaining_at_design_dive %.0f", gotDives, gotMean, gotDesign)
	}
	t.Logf("hull show: remaining_at_recent_mean %.0f, remaining_at_design_dive %.0f, remaining_dives %.0f (%v)", gotMean, gotDesign, gotDives, show["remaining_basis"])
	wantBasis := "recent_mean"
	if gotDesign < gotMean {
		wantBasis = "design_dive"
	}
	if show["remaining_basis"] != wantBasis || show["remaining_more_than"] != false || show["remaining_status"] != "estimated" {
		t.Errorf("remaining_basis %v (want %s), remaining_more_than %v, remaining_status %v", show["remaining_basis"], wantBasis, show["remaining_more_than"], show["remaining_status"])
	}
	if gotMean >= math.Floor(medianLeft)/10 {
		t.Errorf("remaining_at_recent_mean %.0f is not much smaller than the median projection %.0f", gotMean, math.Floor(medianLeft))
	}
}

// --- Case 2: void on hold, "more than" beyond the horizon ---------------

// TestLifeVoidOnHold: a hull with a remaining life that is then put on
// hold (a dive beyond its rated depth) shows no figure anywhere: null
// with status void_evidence_open and a reason in the JSON, "void" in the
// text tables.
func TestLifeVoidOnHold(t *testing.T) {
	e := newEnv(t)
	e.lifeFit()
	for i := 0; i < 3; i++ {
		e.lifeLog(t, time.Date(2026, 6, 1+i, 8, 0, 0, 0, time.UTC), 2000)
	}
	var before map[string]any
	e.jsonOK(&before, "hull", "show", lifeSerial)
	if before["status"] == "hold" || before["remaining_dives"] == nil {
		t.Fatalf("set-up: a fit hull with three dives should show a figure: status %v, remaining %v (%v)", before["status"], before["remaining_dives"], before["remaining_reason"])
	}
	e.lifeLog(t, time.Date(2026, 6, 10, 8, 0, 0, 0, time.UTC), 4100) // beyond the rated 4000 m

	t.Run("hull show --json", func(t *testing.T) {
		var s map[string]any
		e.jsonOK(&s, "hull", "show", lifeSerial)
		if s["status"] != "hold" {
			t.Fatalf("status %v after a dive beyond the rated depth", s["status"])
		}
		if s["remaining_dives"] != nil || s["remaining_at_recent_mean"] != nil || s["remaining_at_design_dive"] != nil || s["remaining_more_than"] != false {
			t.Errorf("a hull on hold shows a figure: remaining_dives %v, at recent mean %v, at design dive %v, more than %v",
				s["remaining_dives"], s["remaining_at_recent_mean"], s["remaining_at_design_dive"], s["remaining_more_than"])
		}
		if s["remaining_status"] != "void_evidence_open" {
			t.Errorf("remaining_status %v, want void_evidence_open", s["remaining_status"])
		}
		if r, _ := s["remaining_reason"].(string); !strings.Contains(r, "on hold") {
			t.Errorf("remaining_reason %q does not say the hull is on hold", r)
		}
	})
	t.Run("fleet --json", func(t *testing.T) {
		var fl map[string]any
		e.jsonOK(&fl, "fleet")
		rows := fl["hulls"].([]any)
		if len(rows) != 1 {
			t.Fatalf("fleet: %v", rows)
		}
		r := rows[0].(map[string]any)
		if r["remaining_dives"] != nil || r["remaining"] != "void" {
			t.Errorf("fleet row: remaining_dives %v, remaining %v; want null and void", r["remaining_dives"], r["remaining"])
		}
		// The issue asks for the status and its reason in fleet --json
		// too, as in hull show --json.
		if r["remaining_status"] != "void_evidence_open" {
			t.Errorf("fleet --json row has remaining_status %v, want void_evidence_open (fields: %v)", r["remaining_status"], keys(r))
		}
		if rs, _ := r["remaining_reason"].(string); !strings.Contains(rs, "on hold") {
			t.Errorf("fleet --json row has remaining_reason %q, want the reason the figure is void (fields: %v)", rs, keys(r))
		}
	})
	t.Run("text", func(t *testing.T) {
		for _, args := range [][]string{{"hull", "list"}, {"fleet"}} {
			out := e.ok(args...)
			row := lineWith(out, lifeSerial)
			if !strings.Contains(row, "void") {
				t.Errorf("%s: the hull's row does not say void:\n%s", strings.Join(args, " "), out)
			}
		}
		out := e.ok("hull", "show", lifeSerial)
		if l := lineWith(out, "remaining dives:"); !strings.Contains(l, "void") || !strings.Contains(l, "on hold") {
			t.Errorf("hull show: %q", l)
		}
	})
}

// TestLifeBeyondHorizon: with fatigue.life_horizon set to 5, a fit hull
// whose life is far longer shows "more than 5", never a figure to count
// down from.
func TestLifeBeyondHorizon(t *testing.T) {
	e := newEnv(t)
	e.lifeFit()
	cfg := writeConfig(t, "fatigue:\n  life_horizon: 5\n")
	for i := 0; i < 3; i++ {
		e.lifeLog(t, time.Date(2026, 7, 1+i, 8, 0, 0, 0, time.UTC), 1000)
	}
	var s map[string]any
	e.jsonOK(&s, "--config", cfg, "hull", "show", lifeSerial)
	if s["status"] == "hold" {
		t.Fatalf("set-up: hull on hold: %v", s["status_reasons"])
	}
	if s["remaining_more_than"] != true || s["remaining_dives"] != 5.0 || s["remaining_status"] != "beyond_horizon" {
		t.Errorf("beyond the horizon of 5: remaining_dives %v, remaining_more_than %v, remaining_status %v (%v)",
			s["remaining_dives"], s["remaining_more_than"], s["remaining_status"], s["remaining_reason"])
	}
	var fl map[string]any
	e.jsonOK(&fl, "--config", cfg, "fleet")
	if r := fl["hulls"].([]any)[0].(map[string]any); r["remaining"] != "more than 5" {
		t.Errorf("fleet --json remaining %v, want \"more than 5\"", r["remaining"])
	}
	for _, args := range [][]string{{"hull", "list"}, {"fleet"}} {
		out := e.ok(append([]string{"--config", cfg}, args...)...)
		if row := lineWith(out, lifeSerial); !strings.Contains(row, "more than 5") {
			t.Errorf("%s: the hull's row does not say \"more than 5\":\n%s", strings.Join(args, " "), out)
		}
	}
	out := e.ok("--config", cfg, "hull", "show", lifeSerial)
	if l := lineWith(out, "remaining dives:"); !strings.Contains(l, "more than 5") {
		t.Errorf("hull show: %q", l)
	}
}

// --- Case 3: proof tests --------------------------------------------------

func (e *env) proofTests(t *testing.T) int {
	t.Helper()
	var s map[string]any
	e.jsonOK(&s, "hull", "show", lifeSerial)
	return len(s["maintenance"].(map[string]any)["proof_tests"].([]any))
}

// TestLifeProofBelowSpecRefused: a passing proof test at 5 MPa on a hull
// whose proof pressure is 50 MPa is refused and nothing is stored.
func TestLifeProofBelowSpecRefused(t *testing.T) {
	e := newEnv(t)
	_, errs, code := e.run("prooftest", lifeSerial, "--pressure", "5", "--result", "pass")
	// 50 × (1 − 0.02) = 49 MPa is the lowest passing test pressure
	// (proof.tolerance 0.02).
	if code != 2 || !strings.Contains(errs, "proof pressure") {
		t.Errorf("passing proof test at 5 MPa: exit %d, %q; want exit 2 naming the proof pressure", code, errs)
	}
	if n := e.proofTests(t); n != 0 {
		t.Errorf("%d proof tests stored after a refused one", n)
	}
	// The boundary: 49 MPa is within the tolerance and is accepted.
	e.ok("prooftest", lifeSerial, "--pressure", "49", "--result", "pass")
	if n := e.proofTests(t); n != 1 {
		t.Errorf("%d proof tests after one at 49 MPa", n)
	}
}

// TestLifeProofSamplesDisagreeRefused: a test recorded at 50 MPa whose
// samples peak at 10 MPa contradicts its own data: refused, and neither
// the proof test nor the dive of its samples is stored.
func TestLifeProofSamplesDisagreeRefused(t *testing.T) {
	e := newEnv(t)
	p := lifeProfile(t, t.TempDir(), "p10.csv", time.Date(2026, 3, 1, 8, 0, 0, 0, time.UTC), "pressure_mpa", 10)
	_, errs, code := e.run("prooftest", lifeSerial, "--pressure", "50", "--result", "pass", "--samples", p)
	if code != 2 || !strings.Contains(errs, "peak") {
		t.Errorf("proof test at 50 MPa with samples peaking at 10 MPa: exit %d, %q; want exit 2 naming the samples' peak", code, errs)
	}
	if n := e.proofTests(t); n != 0 {
		t.Errorf("%d proof tests stored", n)
	}
	if n := e.count("dives"); n != 0 {
		t.Errorf("%d dives stored from the refused proof test's samples", n)
	}
	var s map[string]any
	e.jsonOK(&s, "hull", "show", lifeSerial)
	if s["dive_count"] != 0.0 {
		t.Errorf("hull show dive_count %v", s["dive_count"])
	}
}

// TestLifeProofOvershootHolds: a proof test whose samples reach 55 MPa,
// 1.1 × the proof pressure (beyond 1.03, the hold level of the
// proof-overshoot rule), leaves the hull on hold even with a passing
// inspection on record, and the flag says how near collapse it came:
// 55 / 88 = 0.625. It is listed as a proof test, not as a dive beyond the
// rated depth, and raises no beyond-rated-depth flag.
func TestLifeProofOvershootHolds(t *testing.T) {
	e := newEnv(t)
	e.ok("inspect", lifeSerial, "--method", "visual", "--result", "pass", "--at", "2026-02-01T08:00:00Z")
	p := lifeProfile(t, t.TempDir(), "p55.csv", time.Date(2026, 3, 1, 8, 0, 0, 0, time.UTC), "pressure_mpa", 55)
	e.ok("prooftest", lifeSerial, "--pressure", "55", "--result", "pass", "--samples", p)
	var s map[string]any
	e.jsonOK(&s, "hull", "show", lifeSerial)
	if s["status"] != "hold" {
		t.Errorf("status %v after a proof test 10 %% over the proof pressure; want hold", s["status"])
	}
	var over map[string]any
	for _, f := range s["flags"].([]any) {
		m := f.(map[string]any)
		switch m["rule"] {
		case "proof-overshoot":
			over = m
		case "beyond-rated-depth":
			t.Errorf("a proof test raised the beyond-rated-depth flag: %v", m)
		}
	}
	if over == nil {
		t.Fatalf("no proof-overshoot flag: %v", s["flags"])
	}
	// Value: peak / proof = 55 / 50 = 1.1.
	if v := fnum(t, "proof-overshoot value", over["value"]); math.Abs(v-55.0/50.0) > 1e-3 || over["level"] != "hold" {
		t.Errorf("proof-overshoot flag: value %v (want 1.1), level %v (want hold)", over["value"], over["level"])
	}
	if d, _ := over["detail"].(string); !strings.Contains(d, "0.625 of the collapse pressure 88.000 MPa") {
		t.Errorf("proof-overshoot detail %q does not say 0.625 of the collapse pressure 88 MPa", d)
	}
	held := false
	for _, r := range s["status_reasons"].([]any) {
		m := r.(map[string]any)
		if m["code"] == "proof-overshoot" && m["state"] == "hold" {
			held = true
		}
	}
	if !held {
		t.Errorf("no hold reason from proof-overshoot: %v", s["status_reasons"])
	}
	var dl map[string]any
	e.jsonOK(&dl, "dive", "list", "--hull", lifeSerial)
	ds := dl["dives"].([]any)
	if len(ds) != 1 {
		t.Fatalf("dive list: %v", ds)
	}
	d := ds[0].(map[string]any)
	if d["proof_test"] != true || d["beyond_rated"] != false {
		t.Errorf("the proof test's dive: proof_test %v (want true), beyond_rated %v (want false), max depth %v m", d["proof_test"], d["beyond_rated"], d["max_depth_m"])
	}
	out := e.ok("dive", "list", "--hull", lifeSerial)
	if !strings.Contains(out, "proof test") || strings.Contains(out, "BEYOND RATED") {
		t.Errorf("dive list text:\n%s", out)
	}
}

// TestLifeFailedProofCounts: a failed proof test with samples still loads
// the hull: it counts for damage and is part of the reference pressure
// of the next dive.
func TestLifeFailedProofCounts(t *testing.T) {
	e := newEnv(t)
	p := lifeProfile(t, t.TempDir(), "p50.csv", time.Date(2026, 3, 1, 8, 0, 0, 0, time.UTC), "pressure_mpa", 50)
	e.ok("prooftest", lifeSerial, "--pressure", "50", "--result", "fail", "--samples", p)
	var s map[string]any
	e.jsonOK(&s, "hull", "show", lifeSerial)
	if s["dive_count"] != 1.0 {
		t.Errorf("dive_count %v after a failed proof test with samples, want 1", s["dive_count"])
	}
	if r := fnum(t, "governing_ratio", s["governing_ratio"]); !(r > 0) {
		t.Errorf("governing_ratio %v after a 50 MPa test, want > 0", r)
	}
	for _, c := range s["components"].([]any) {
		m := c.(map[string]any)
		if fnum(t, "cyclic_damage", m["cyclic_damage"]) <= 0 {
			t.Errorf("component %v: cyclic damage %v after a 50 MPa cycle", m["name"], m["cyclic_damage"])
		}
	}
	pts := s["maintenance"].(map[string]any)["proof_tests"].([]any)
	if len(pts) != 1 || pts[0].(map[string]any)["result"] != "fail" {
		t.Errorf("proof tests: %v", pts)
	}
	// The next dive, shallow: its reference is the 50 MPa of the test.
	var d map[string]any
	dp := lifeProfile(t, t.TempDir(), "d.csv", time.Date(2026, 3, 5, 8, 0, 0, 0, time.UTC), "depth_m", 1000)
	e.jsonOK(&d, "dive", "log", "--hull", lifeSerial, "--lat", "45", dp)
	ev, ok := d["evidence"].(map[string]any)
	if !ok {
		t.Fatalf("dive log --json has no evidence: %v", d)
	}
	if ref := fnum(t, "reference_pressure_mpa", ev["reference_pressure_mpa"]); math.Abs(ref-50) > 1e-6 {
		t.Errorf("reference_pressure_mpa %v of the dive after a failed 50 MPa proof test, want 50 (%v)", ref, ev["reference_source"])
	}
	e.jsonOK(&s, "hull", "show", lifeSerial)
	if s["dive_count"] != 2.0 {
		t.Errorf("dive_count %v, want 2", s["dive_count"])
	}
}

// --- Case 4: collapse and the predicted damage of a planned dive --------

// TestLifeClearCollapse: a planned depth whose pressure reaches 0.9 × the
// collapse pressure (88 → 79.2 MPa, rule collapse-fraction) is no-go with
// a reason naming the collapse pressure.
func TestLifeClearCollapse(t *testing.T) {
	e := newEnv(t)
	e.lifeFit()
	p := unescoMPa(8000, 90)
	if !(p > 0.9*exCollapseMPa) {
		t.Fatalf("set-up: 8000 m is %.3f MPa, not above 0.9 × 88", p)
	}
	out, errs, code := e.run("clear", lifeSerial, "--depth", "8000", "--json")
	var c map[string]any
	if err := json.Unmarshal([]byte(out), &c); err != nil {
		t.Fatalf("%v\n%s%s", err, out, errs)
	}
	if code != 3 || c["go"] != false {
		t.Fatalf("clear 8000 m: exit %d go %v", code, c["go"])
	}
	if got := fnum(t, "planned_pressure_mpa", c["planned_pressure_mpa"]); math.Abs(got-p) > 1e-6 {
		t.Errorf("planned_pressure_mpa %.6f, want %.6f (UNESCO 1983 at latitude 90)", got, p)
	}
	if fnum(t, "collapse_pressure_mpa", c["collapse_pressure_mpa"]) != exCollapseMPa {
		t.Errorf("collapse_pressure_mpa %v", c["collapse_pressure_mpa"])
	}
	found := false
	for _, r := range c["reasons"].([]any) {
		m := r.(map[string]any)
		txt := fmt.Sprint(m["text"])
		if m["no_go"] == true && strings.Contains(txt, "collapse pressure 88.000 MPa") {
			found = true
		}
	}
	if !found {
		t.Errorf("no no-go reason naming the collapse pressure 88 MPa: %v", c["reasons"])
	}
	// Just below the hold level, within the rating: no collapse reason
	// holds it (3000 m ≈ 30 MPa).
	out, _, _ = e.run("clear", lifeSerial, "--depth", "3000", "--json")
	json.Unmarshal([]byte(out), &c)
	for _, r := range c["reasons"].([]any) {
		m := r.(map[string]any)
		if m["no_go"] == true && strings.Contains(fmt.Sprint(m["text"]), "collapse") {
			t.Errorf("3000 m is no-go for collapse: %v", m["text"])
		}
	}
}

// lameHoopInner is the Lamé hoop stress at the inner surface of a thick
// cylinder per MPa of external pressure: −2b²/(b² − a²) (Timoshenko,
// Strength of Materials, thick-walled cylinder; from memory).
func lameHoopInner(a, b float64) float64 { return -2 * b * b / (b*b - a*a) }

// handDiveRatio is the damage, as the largest ratio of the allowable over
// the example hull's components, of one pressure cycle 0 → p → 0 (range p,
// mean p/2, count 1) plus holdS seconds at p, from configs/curves.yaml
// with goodman, DFF 1, combine add, allowable 0.3.
func handDiveRatio(p, holdS float64) (float64, map[string]float64) {
	out := map[string]float64{}
	// Laminate: Lamé factor f (a = 0.50 m, b = 0.59 m).
	f := lameHoopInner(exInnerRadiusM, exInnerRadiusM+exWallM)
	{
		// carbon-epoxy-cc-illustrative: log-linear, S_ult 900 MPa, b 0.07,
		// reference_ratio 0, compressive strength 900 MPa.
		amp, mean := math.Abs(f)*p/2, math.Abs(f*p/2)
		aeq := amp / (1 - mean/900)       // goodman, compressive mean
		s := 2 * aeq / (1 + aeq/900)      // equivalent 0 → peak stress at R = ∞
		n := math.Pow(10, (1-s/900)/0.07) // S/S_ult = 1 − b·log10 N
		cyc := 1 / n
		// carbon-epoxy-rupture-compression-illustrative:
		// log10 t_r[h] = 28 − 30·σ/900.
		tr := math.Pow(10, 28-30*math.Abs(f*p)/900)
		sus := holdS / 3600 / tr
		out["laminate"] = (cyc + sus) / cfgAllowable
	}
	{
		// end-ring-fwd: designer's factor −9.5 on
		// ti-6al-4v-machined-illustrative: power law, m1 4, log a1
		// 16.20412 to 1e7 cycles, m2 5, log a2 18.50515 beyond;
		// strengths 895 MPa; no rupture curve.
		amp, mean := math.Abs(exEndRingF)*p/2, math.Abs(exEndRingF*p/2)
		aeq := amp / (1 - mean/895)
		s := 2 * aeq // power law: equivalent range
		n := math.Pow(10, 16.20412-4*math.Log10(s))
		if n > 1e7 {
			n = math.Pow(10, 18.50515-5*math.Log10(s))
		}
		out["end-ring-fwd"] = 1 / n / cfgAllowable
	}
	return math.Max(out["laminate"], out["end-ring-fwd"]), out
}

// TestLifeClearPrediction: for a hull with no dives, the predicted damage
// of a planned dive is that of one cycle from the surface to the planned
// pressure with the bottom time at it, derived here from the curves and
// the transfer factors. The clearance also states the implosion hazard
// at the planned pressure.
func TestLifeClearPrediction(t *testing.T) {
	e := newEnv(t)
	for _, tc := range []struct{ depth, bottom float64 }{{3000, 60}, {1500, 0}, {3900, 240}} {
		out, errs, _ := e.run("clear", lifeSerial, "--depth", fmt.Sprint(tc.depth), "--bottom-time", fmt.Sprint(tc.bottom), "--json")
		var c map[string]any
		if err := json.Unmarshal([]byte(out), &c); err != nil {
			t.Fatalf("%v\n%s%s", err, out, errs)
		}
		p := unescoMPa(tc.depth, 90)
		if got := fnum(t, "planned_pressure_mpa", c["planned_pressure_mpa"]); math.Abs(got-p) > 1e-6 {
			t.Errorf("%v m: planned_pressure_mpa %.6f, want %.6f", tc.depth, got, p)
		}
		want, per := handDiveRatio(p, tc.bottom*60)
		got := fnum(t, "predicted_damage_ratio", c["predicted_damage_ratio"])
		if math.Abs(got-want) > 1e-9*want {
			t.Errorf("%v m, %v min: predicted_damage_ratio %.10g, want %.10g (per component %v; basis %v)", tc.depth, tc.bottom, got, want, per, c["prediction_basis"])
		}
		imp, ok := c["implosion"].(map[string]any)
		if !ok {
			t.Fatalf("clearance has no implosion: %v", c)
		}
		if ip := fnum(t, "implosion pressure_mpa", imp["pressure_mpa"]); math.Abs(ip-p) > 1e-6 {
			t.Errorf("%v m: implosion at %.6f MPa, want the planned %.6f", tc.depth, ip, p)
		}
	}
}

// --- Case 5: implosion hazard at the rated depth -------------------------

// TestLifeImplosion checks hull show's implosion figures against a hand
// calculation from the example spec's geometry: a cylinder, a = 0.50 m,
// L = 2.0 m, no end_closure in the spec → hemispherical heads assumed
// (the larger volume, the safe side): V = π a² L + 4/3 π a³.
func TestLifeImplosion(t *testing.T) {
	e := newEnv(t)
	var s map[string]any
	e.jsonOK(&s, "hull", "show", lifeSerial)
	imp, ok := s["implosion"].(map[string]any)
	if !ok {
		t.Fatalf("hull show --json has no implosion: %v", keys(s))
	}
	for _, k := range []string{"internal_volume_m3", "pressure_mpa", "energy_mj", "tnt_equivalent_kg", "collapse_time_ms"} {
		if _, ok := imp[k]; !ok {
			t.Errorf("implosion lacks %s", k)
		}
	}
	a, L := exInnerRadiusM, exLengthM
	V := math.Pi*a*a*L + 4.0/3.0*math.Pi*a*a*a // = 2π/3 ≈ 2.0944 m³
	// p: the rated depth at latitude 90 (UNESCO 1983, the most pressure
	// per metre).
	p := unescoMPa(exRatedDepthM, 90)
	// K: TEOS-10 adiabatic bulk modulus of seawater (SA 35.16504 g/kg,
	// CT 2 °C), GPa at dbar, linear between the tabled points (the table
	// of fatigue/implosion).
	tab := [][2]float64{{0, 2.185}, {1000, 2.245}, {4000, 2.436}, {6000, 2.573}, {10000, 2.859}}
	dbar := p * 100
	var K float64
	for i := 1; i < len(tab); i++ {
		if dbar <= tab[i][0] {
			K = tab[i-1][1] + (tab[i][1]-tab[i-1][1])*(dbar-tab[i-1][0])/(tab[i][0]-tab[i-1][0])
			break
		}
	}
	E := p*V + p*p*V/(2*K*1000) // MPa·m³ = MJ; K in MPa
	TNT := E / 4.184            // 4.184 MJ per kg of TNT (convention)
	R := math.Cbrt(3 * V / (4 * math.Pi))
	tms := 0.915 * R * math.Sqrt(1027.97/(p*1e6)) * 1000 // Rayleigh (1917), surface density
	t.Logf("hand: V %.6f m³, p %.6f MPa, K %.6f GPa, E %.6f MJ, TNT %.6f kg, R %.6f m, t %.6f ms", V, p, K, E, TNT, R, tms)
	check := func(name string, want, tol float64) {
		t.Helper()
		got := fnum(t, name, imp[name])
		if math.Abs(got-want) > tol*math.Abs(want) {
			t.Errorf("implosion %s = %.9g, want %.9g", name, got, want)
		}
	}
	check("internal_volume_m3", V, 1e-12)
	check("pressure_mpa", p, 1e-8)
	check("energy_mj", E, 1e-8)
	check("tnt_equivalent_kg", TNT, 1e-8)
	check("collapse_time_ms", tms, 1e-8)
	if imp["end_closure"] != "hemispherical" {
		t.Errorf("end_closure %v, want hemispherical assumed", imp["end_closure"])
	}
	// Orders of magnitude, for the reader: about 87 MJ, 21 kg TNT, 3.6 ms.
	if E < 80 || E > 95 || tms < 3 || tms > 4.5 {
		t.Errorf("implausible: %v MJ, %v ms", E, tms)
	}
}

// --- Case 6: a tensile component on a compression curve ------------------

// TestLifeTensileOnCompressionRefused: testdata/life/tensile-on-compression.yaml
// gives the laminate a designer's factor of +3.0 MPa/MPa (tension under
// external pressure) on the compression-compression laminate curve and the
// compression rupture curve: refused at hull add, naming the component,
// and nothing stored.
func TestLifeTensileOnCompressionRefused(t *testing.T) {
	e := newEnv(t)
	_, errs, code := e.run("hull", "add", "-f", "../../testdata/life/tensile-on-compression.yaml")
	if code != 2 || !strings.Contains(errs, "laminate") {
		t.Errorf("hull add with a tensile factor on a compression curve: exit %d, stderr %q; want exit 2 naming component laminate", code, errs)
	}
	var l map[string]any
	e.jsonOK(&l, "hull", "list")
	for _, h := range l["hulls"].([]any) {
		if h.(map[string]any)["serial"] == "EX-TENS-01" {
			// Say what the stored hull does to the rest of the tool.
			_, showErr, showCode := e.run("hull", "show", "EX-TENS-01")
			_, fleetErr, fleetCode := e.run("fleet")
			t.Errorf("the hull EX-TENS-01 was stored; afterwards hull show exits %d (%s) and fleet exits %d (%s)",
				showCode, strings.TrimSpace(showErr), fleetCode, strings.TrimSpace(fleetErr))
		}
	}
}

// --- Case 7: the statements in text --------------------------------------

// TestLifeTextStatements: hull show prints the implosion statement; clear
// prints the collapse pressure.
func TestLifeTextStatements(t *testing.T) {
	e := newEnv(t)
	out := e.ok("hull", "show", lifeSerial)
	for _, want := range []string{"implosion hazard at the rated depth", "internal volume 2.094 m³", "kg TNT", "collapse in about", "hemispherical heads"} {
		if !strings.Contains(out, want) {
			t.Errorf("hull show text lacks %q:\n%s", want, out)
		}
	}
	out, _, _ = e.run("clear", lifeSerial, "--depth", "3000")
	for _, want := range []string{"collapse pressure 88.000 MPa", "implosion hazard at the planned depth 3000 m"} {
		if !strings.Contains(out, want) {
			t.Errorf("clear text lacks %q:\n%s", want, out)
		}
	}
}

func lineWith(out, s string) string {
	for _, l := range strings.Split(out, "\n") {
		if strings.Contains(l, s) {
			return l
		}
	}
	return ""
}

func keys(m map[string]any) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}
