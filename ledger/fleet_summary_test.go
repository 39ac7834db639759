package ledger_test

import (
	"context"
	"encoding/json"
	"slices"
	"strings"
	"testing"
	"time"

	"hulltally/ledger"
)

// entryOf is a hull's fleet entry at a moment, and the same hull
// evaluated from the ledger at that moment.
func entryOf(t *testing.T, l *ledger.Ledger, at time.Time) (ledger.FleetEntry, *ledger.Fitness) {
	t.Helper()
	ctx := context.Background()
	es, err := l.Fleet(ctx, at)
	if err != nil {
		t.Fatal(err)
	}
	if len(es) != 1 || es[0].Serial != serial {
		t.Fatalf("fleet entries %+v", es)
	}
	h, err := l.Hull(ctx, serial)
	if err != nil {
		t.Fatal(err)
	}
	f, err := l.FitnessAt(ctx, h, at)
	if err != nil {
		t.Fatal(err)
	}
	return es[0], f
}

// sameAsLedger fails when the entry's figures are not the evaluation's.
// A hull-level flag is dated at the evaluation that raised it: the
// summary's at its writing, the ledger's at the moment asked; those dates
// are left out of the comparison.
func sameAsLedger(t *testing.T, what string, e ledger.FleetEntry, f *ledger.Fitness) {
	t.Helper()
	js := func(v any) string { b, _ := json.Marshal(v); return string(b) }
	undated := func(rs []ledger.Reason, at time.Time) string {
		out := slices.Clone(rs)
		for i := range out {
			if out[i].At != nil && out[i].At.Equal(at) {
				out[i].At = nil
			}
		}
		return js(out)
	}
	if e.Status != f.Status || undated(e.Reasons, e.EvaluatedAt) != undated(f.Reasons, f.EvaluatedAt) || e.Damage.Governing != f.Damage.Governing ||
		js(e.Damage.GoverningRatio) != js(f.Damage.GoverningRatio) || js(e.Damage.RemainingDives) != js(f.Damage.RemainingDives) ||
		e.Damage.RemainingStatus != f.Damage.RemainingStatus || js(e.LastDive) != js(f.LastDive) {
		t.Fatalf("%s: fleet entry (derived %v) %s %s ratio %v remaining %v/%s, the ledger says %s %s ratio %v remaining %v/%s", what, e.Derived,
			e.Status, js(e.Reasons), e.Damage.GoverningRatio, js(e.Damage.RemainingDives), e.Damage.RemainingStatus,
			f.Status, js(f.Reasons), f.Damage.GoverningRatio, js(f.Damage.RemainingDives), f.Damage.RemainingStatus)
	}
}

func hasReason(rs []ledger.Reason, code string) bool {
	return slices.ContainsFunc(rs, func(r ledger.Reason) bool { return r.Code == code && r.State != "fit" })
}

// TestFleetSummaryFollowsWrites: after every write the fleet view reads
// the hull from its summary, with the ledger's figures; verify finds
// every row in use agreeing.
func TestFleetSummaryFollowsWrites(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	lat := 30.0
	check := func(what string) {
		t.Helper()
		e, f := entryOf(t, l, time.Now().UTC())
		if !e.Derived {
			t.Fatalf("%s: the hull was evaluated, not read from its summary", what)
		}
		sameAsLedger(t, what, e, f)
		sc := summaryCheck(t, l)
		if sc.Current != 1 || len(sc.Disagree) != 0 {
			t.Fatalf("%s: summary check %+v", what, sc)
		}
	}
	check("hull added")
	if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive), AE: writeFile(t, "h.csv", goodHits), Latitude: &lat}); err != nil {
		t.Fatal(err)
	}
	check("dive logged")
	if _, err := l.RecordInspection(ctx, serial, ledger.Inspection{At: time.Now().UTC().Add(-time.Hour), Method: "ultrasonic", Result: "fail", Findings: "delamination"}); err != nil {
		t.Fatal(err)
	}
	check("failed inspection")
	if e, _ := entryOf(t, l, time.Now().UTC()); e.Status != "hold" {
		t.Fatalf("after a failed inspection the fleet says %s", e.Status)
	}
}

// TestFleetSummaryNotUsedWhenTimeMoves is the adversarial case of a
// derived verdict: a hull whose inspection falls due with the time alone
// must not be read from a summary written before it fell due.
func TestFleetSummaryNotUsedWhenTimeMoves(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	now := time.Now().UTC()
	// The shipped rules watch at 292 days since the last passing
	// inspection (configs/rules.yaml, inspection-due-by-days).
	if _, err := l.RecordInspection(ctx, serial, ledger.Inspection{At: now.AddDate(0, 0, -280), Method: "visual", Result: "pass"}); err != nil {
		t.Fatal(err)
	}
	e, f := entryOf(t, l, time.Now().UTC())
	if !e.Derived || hasReason(e.Reasons, "inspection-due-by-days") {
		t.Fatalf("now: derived %v, reasons %+v", e.Derived, e.Reasons)
	}
	sameAsLedger(t, "now", e, f)
	later := now.AddDate(0, 0, 13)
	e, f = entryOf(t, l, later)
	if e.Derived {
		t.Fatal("13 days later, past the inspection's watch level, the fleet still read the summary written before")
	}
	if !hasReason(e.Reasons, "inspection-due-by-days") {
		t.Fatalf("13 days later the inspection is due, but the reasons are %+v", e.Reasons)
	}
	sameAsLedger(t, "13 days later", e, f)
}

// TestFleetSummaryNeverBetter: a summary row that no longer stands for
// its hull — a record added since, another configuration, a status
// better than the one noted — is not used; one altered in place with its
// head kept is caught by the check verify makes.
func TestFleetSummaryNeverBetter(t *testing.T) {
	ctx := context.Background()
	cfg := testConfig(t)
	l, err := ledger.Open(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(l.Close)
	addExampleHull(t, l)
	if _, err := l.RecordInspection(ctx, serial, ledger.Inspection{At: time.Now().UTC().Add(-time.Hour), Method: "ultrasonic", Result: "fail", Findings: "crack"}); err != nil {
		t.Fatal(err)
	}
	if e, _ := entryOf(t, l, time.Now().UTC()); !e.Derived || e.Status != "hold" {
		t.Fatalf("setup: derived %v status %s", e.Derived, e.Status)
	}
	db := l.Pool()
	exec := func(sql string) {
		t.Helper()
		if _, err := db.Exec(ctx, sql); err != nil {
			t.Fatal(err)
		}
	}
	exec("CREATE TABLE saved_summary AS SELECT * FROM fleet_summary")
	restore := func() {
		exec("DELETE FROM fleet_summary")
		exec("INSERT INTO fleet_summary SELECT * FROM saved_summary")
	}

	// A status better than the one the chained history noted.
	exec(`UPDATE fleet_summary SET status = 'fit', summary_json = jsonb_set(summary_json::jsonb, '{status}', '"fit"')::text`)
	if e, f := entryOf(t, l, time.Now().UTC()); e.Derived || e.Status != "hold" {
		t.Fatalf("summary flipped to fit: derived %v status %s", e.Derived, e.Status)
	} else {
		sameAsLedger(t, "flipped", e, f)
	}
	restore()

	// A status that is none of the four, printed upper-cased as FIT
	// (found by review).
	exec(`UPDATE fleet_summary SET status = 'Fit', summary_json = jsonb_set(summary_json::jsonb, '{status}', '"Fit"')::text`)
	if e, _ := entryOf(t, l, time.Now().UTC()); e.Derived || e.Status != "hold" {
		t.Fatalf("summary set to Fit: derived %v status %s", e.Derived, e.Status)
	}
	restore()

	// A record added to the chain since the row was written.
	exec("UPDATE fleet_summary SET chain_seq = chain_seq - 1")
	if e, _ := entryOf(t, l, time.Now().UTC()); e.Derived {
		t.Fatal("a row written before the hull's last record was used")
	}
	restore()

	// Another configuration (here a proof tolerance) reads none of the
	// rows written under this one.
	cfg2 := *cfg
	cfg2.Proof.Tolerance = cfg.Proof.Tolerance / 2
	l2, err := ledger.Open(ctx, &cfg2)
	if err != nil {
		t.Fatal(err)
	}
	defer l2.Close()
	if e, _ := entryOf(t, l2, time.Now().UTC()); e.Derived {
		t.Fatal("a row written under another configuration was used")
	}
	if e, _ := entryOf(t, l, time.Now().UTC()); !e.Derived {
		t.Fatal("the row restored was not used")
	}

	// Altered in place, head and status kept: used by a read, and caught
	// by the check verify makes.
	exec(`UPDATE fleet_summary SET summary_json = jsonb_set(summary_json::jsonb, '{governing_ratio}', '0.001')::text`)
	sc := summaryCheck(t, l)
	if len(sc.Disagree) != 1 || sc.Disagree[0].Serial != serial || !strings.Contains(sc.Disagree[0].Stored, `"governing_ratio":0.001`) {
		t.Fatalf("altered summary: check %+v", sc)
	}
	// Verify makes the same check in its workers (two hulls, two at once).
	addSecondHull(t, l)
	res, err := l.VerifyWith(ctx, ledger.VerifyOptions{FleetSummary: true, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if fs := res.FleetSummary; res.OK || !strings.Contains(res.Problem, "fleet rebuild") || fs == nil || fs.Hulls != 2 || fs.Current != 2 ||
		len(fs.Disagree) != 1 || fs.Disagree[0].Serial != serial {
		t.Fatalf("verify with an altered summary: ok %v, problem %q, summary %+v", res.OK, res.Problem, res.FleetSummary)
	}
	// A rebuild writes it afresh.
	if n, err := l.RebuildFleetSummary(ctx, time.Now().UTC().Truncate(time.Microsecond), 0); err != nil || n != 2 {
		t.Fatalf("rebuild: %d, %v", n, err)
	}
	if sc := summaryCheck(t, l); sc.Current != 2 || len(sc.Disagree) != 0 {
		t.Fatalf("after rebuild: %+v", sc)
	}
}

// TestFleetSummaryRace: an evaluation overtaken by a write (made after
// its snapshot) writes neither the status nor the summary: it may be
// better than the hull now. The later writer's own note stands.
func TestFleetSummaryRace(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	err := l.EvaluateAcross(ctx, serial, time.Now().UTC(), func() error {
		_, err := l.RecordInspection(ctx, serial, ledger.Inspection{At: time.Now().UTC().Add(-time.Hour), Method: "ultrasonic", Result: "fail", Findings: "crack"})
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	h, err := l.Hull(ctx, serial)
	if err != nil {
		t.Fatal(err)
	}
	hist, err := l.StatusHistory(ctx, h)
	if err != nil {
		t.Fatal(err)
	}
	if n := len(hist); n == 0 || hist[n-1].Status != "hold" {
		t.Fatalf("status history %+v: the overtaken evaluation was noted last", hist)
	}
	e, f := entryOf(t, l, time.Now().UTC())
	if !e.Derived || e.Status != "hold" {
		t.Fatalf("fleet after the race: derived %v status %s", e.Derived, e.Status)
	}
	sameAsLedger(t, "after the race", e, f)
}

// TestFleetSummaryForgottenOnInsert: a record inserted straight into the
// database, behind the application and its chain (a failed inspection
// here), takes the hull's summary away: the fleet shows the hull as the
// ledger has it, with the new record among the reasons.
func TestFleetSummaryForgottenOnInsert(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	if e, _ := entryOf(t, l, time.Now().UTC()); !e.Derived {
		t.Fatal("setup: the hull was not read from its summary")
	}
	h, err := l.Hull(ctx, serial)
	if err != nil {
		t.Fatal(err)
	}
	at := time.Now().UTC().Add(-time.Minute)
	if _, err := l.Pool().Exec(ctx, `INSERT INTO inspections (id, hull_id, at, method, findings, result, actor, recorded_at)
		VALUES (gen_random_uuid(), $1, $2, 'visual', 'inserted behind the chain', 'fail', current_user, $2)`, h.ID, at); err != nil {
		t.Fatal(err)
	}
	e, f := entryOf(t, l, time.Now().UTC())
	if e.Derived {
		t.Fatal("a summary written before the inserted inspection was used")
	}
	if !slices.ContainsFunc(e.Reasons, func(r ledger.Reason) bool { return strings.Contains(r.Text, "inserted behind the chain") }) {
		t.Fatalf("the inserted inspection is not among the reasons: %+v", e.Reasons)
	}
	sameAsLedger(t, "after the insert", e, f)
}

// summaryCheck is verify's check of the fleet summary (the chains must
// hold; the check is what the caller asserts on).
func summaryCheck(t *testing.T, l *ledger.Ledger) *ledger.SummaryCheck {
	t.Helper()
	res, err := l.VerifyWith(context.Background(), ledger.VerifyOptions{FleetSummary: true})
	if err != nil {
		t.Fatal(err)
	}
	if res.FirstBroken != nil || len(res.Guards) > 0 || res.FleetSummary == nil {
		t.Fatalf("verify: %+v", res)
	}
	return res.FleetSummary
}
