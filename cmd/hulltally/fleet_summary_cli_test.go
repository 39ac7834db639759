package main

import (
	"context"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
)

// TestFleetSummaryCommands: `fleet rebuild` writes every hull's summary;
// `verify` says how many hulls the fleet view reads from it and checks
// each against the ledger; a summary altered in place (its chain head
// kept, so a read would use it) fails verify, naming the hull, until a
// rebuild; the fleet view says what the ledger says throughout.
func TestFleetSummaryCommands(t *testing.T) {
	e := newEnv(t)
	e.lifeFit()
	e.lifeLog(t, time.Date(2026, 7, 1, 8, 0, 0, 0, time.UTC), 1000)

	var rb struct{ Written int }
	e.jsonOK(&rb, "fleet", "rebuild")
	if rb.Written != 1 {
		t.Fatalf("fleet rebuild wrote %d summaries, want 1", rb.Written)
	}
	var v struct {
		OK           bool
		FleetSummary struct {
			Hulls, Current int
			Disagree       []struct{ Serial string }
		} `json:"fleet_summary"`
	}
	e.jsonOK(&v, "verify")
	if !v.OK || v.FleetSummary.Hulls != 1 || v.FleetSummary.Current != 1 || len(v.FleetSummary.Disagree) != 0 {
		t.Fatalf("verify after rebuild: %+v", v)
	}
	before := e.ok("fleet")

	ctx := context.Background()
	conn, err := pgx.Connect(ctx, e.url)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	if _, err := conn.Exec(ctx, `UPDATE fleet_summary SET summary_json = jsonb_set(summary_json::jsonb, '{governing_ratio}', '0.5')::text`); err != nil {
		t.Fatal(err)
	}
	out, _, code := e.run("verify")
	if code != exitFailed || !strings.Contains(out, "FLEET SUMMARY DISAGREES for hull "+lifeSerial) || !strings.Contains(out, "fleet rebuild") {
		t.Fatalf("verify with an altered summary: exit %d\n%s", code, out)
	}
	// --chain-only leaves the summary out, and says so.
	if out := e.ok("verify", "--chain-only"); !strings.Contains(out, "fleet summary: not checked") {
		t.Fatalf("verify --chain-only:\n%s", out)
	}
	e.ok("fleet", "rebuild")
	if out := e.ok("verify"); !strings.Contains(out, "fleet summary: 1 of 1 hulls read from it") {
		t.Fatalf("verify after the rebuild:\n%s", out)
	}
	if after := e.ok("fleet"); after != before {
		t.Fatalf("fleet changed across the rebuild:\n%s\nthen\n%s", before, after)
	}
}
