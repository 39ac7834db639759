package fitness

import (
	"fmt"
	"math/rand/v2"
	"reflect"
	"testing"
	"time"
)

// verdictAt evaluates the facts at a moment, with every time equal to the
// moment of evaluation written as "now" (a hull-level flag is dated at the
// evaluation that raised it), so that two evaluations can be compared.
func verdictAt(r *Rules, f HullFacts, ds []Decision, at time.Time) Verdict {
	f.Now = at
	v := Status(Evaluate(r, f), ds, Records{Inspections: f.Inspections, ProofTests: f.ProofTests}, at)
	for i := range v.Reasons {
		if v.Reasons[i].At.Equal(at) {
			v.Reasons[i].At = time.Time{}
		}
	}
	return v
}

// randomHull is a hull whose records, dives and decisions lie around t0,
// some of them after it (dated or recorded later), with inspections and
// proof tests that pass or fail near the shipped rules' intervals.
func randomHull(rng *rand.Rand) (HullFacts, []Decision) {
	f := goodHull()
	f.Inspections, f.ProofTests = nil, nil
	around := func(spanDays float64) time.Time {
		return t0.Add(day((rng.Float64()*2 - 1) * spanDays))
	}
	results := []Result{ResultPass, ResultPass, ResultPass, ResultFail, ResultIncomplete}
	for range rng.IntN(4) {
		at := around(400)
		rec := at
		if rng.IntN(3) == 0 {
			rec = at.Add(day(rng.Float64() * 30))
		}
		f.Inspections = append(f.Inspections, Inspection{At: at, RecordedAt: rec, Method: "visual", Result: results[rng.IntN(len(results))], Actor: "A. Inspector"})
	}
	for range rng.IntN(3) {
		at := around(2000)
		f.ProofTests = append(f.ProofTests, ProofTest{At: at, RecordedAt: at.Add(day(rng.Float64() * 5)), PressureMPa: 12.5, Result: results[rng.IntN(len(results))], Actor: "B. Tester"})
	}
	for i := range rng.IntN(3) {
		d := goodDive(fmt.Sprintf("x%d", i), around(60))
		if rng.IntN(2) == 0 {
			d.MaxDepthM = 1100 // beyond the rated depth: a hold
		}
		f.Dives = append(f.Dives, d)
	}
	var ds []Decision
	for range rng.IntN(3) {
		at := around(60)
		ds = append(ds, Decision{At: at, RecordedAt: at.Add(time.Hour), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "inspected"})
	}
	return f, ds
}

// TestStableUntilHolds is the adversarial test of a derived copy of a
// verdict: at every moment before StableUntil the verdict must be the one
// evaluated at f.Now (else a copy would show a hull as it no longer is,
// perhaps better). Random hulls with records on both sides of f.Now and
// inspections near the interval; moments drawn up to the bound, and just
// before it.
func TestStableUntilHolds(t *testing.T) {
	r := shipped(t)
	rng := rand.New(rand.NewPCG(1, 2))
	bounded, open, never := 0, 0, 0
	for i := range 3000 {
		f, ds := randomHull(rng)
		until, b := StableUntil(r, f, ds)
		want := verdictAt(r, f, ds, f.Now)
		horizon := f.Now.Add(day(3000))
		switch {
		case !b:
			open++
		case !until.After(f.Now):
			never++
			continue
		default:
			bounded++
			horizon = until
		}
		span := horizon.Sub(f.Now)
		for k := range 8 {
			at := f.Now.Add(time.Duration(rng.Float64() * float64(span)))
			if k == 0 {
				at = horizon.Add(-time.Microsecond)
			}
			if got := verdictAt(r, f, ds, at); !reflect.DeepEqual(got, want) {
				t.Fatalf("hull %d: stable until %s (bounded %v), but at %s the verdict is\n%s\nnot\n%s", i, until, b, at, got, want)
			}
		}
	}
	// The draw must exercise every branch, or the test proves little.
	if bounded < 100 || open < 10 || never < 100 {
		t.Fatalf("draw too narrow: %d bounded, %d open, %d never stable", bounded, open, never)
	}
	t.Logf("%d bounded, %d open, %d never stable", bounded, open, never)
}

// TestStableUntilCases are the moments a copy must end at, worked by hand
// from the shipped rules (inspection watch at 292 days, hold at 365).
func TestStableUntilCases(t *testing.T) {
	r := shipped(t)
	f := goodHull() // passing inspection 10 days before t0, proof test 200 days before
	until, b := StableUntil(r, f, nil)
	if want := t0.Add(-day(10) + day(292) - time.Millisecond); !b || !until.Equal(want) {
		t.Errorf("good hull: stable until %s (bounded %v), want the inspection's watch level at %s", until, b, want)
	}
	// An inspection recorded after now comes into force at its recording.
	g := goodHull()
	g.Inspections = append(g.Inspections, Inspection{At: t0.Add(-day(1)), RecordedAt: t0.Add(day(2)), Method: "visual", Result: ResultFail, Actor: "A"})
	if until, _ := StableUntil(r, g, nil); !until.Equal(t0.Add(day(2))) {
		t.Errorf("late-recorded inspection: stable until %s, want %s", until, t0.Add(day(2)))
	}
	// An inspection overdue: the flag's value grows, no copy holds.
	o := goodHull()
	o.Inspections[0].At = t0.Add(-day(300))
	if until, b := StableUntil(r, o, nil); !b || until.After(t0) {
		t.Errorf("inspection overdue: stable until %s (bounded %v), want never", until, b)
	}
	// No time known: never stable.
	z := goodHull()
	z.Now = time.Time{}
	if until, b := StableUntil(r, z, nil); !b || !until.IsZero() {
		t.Errorf("no time: stable until %s (bounded %v), want never", until, b)
	}
	// Without days-since rules and nothing dated later: stable until the
	// facts change.
	var noDays Rules
	for _, rule := range r.Rules {
		if rule.Measure != MeasureDaysSinceInspection && rule.Measure != MeasureDaysSinceProofTest {
			noDays.Rules = append(noDays.Rules, rule)
		}
	}
	if until, b := StableUntil(&noDays, goodHull(), nil); b {
		t.Errorf("no days-since rule: stable until %s, want unbounded", until)
	}
}
