package reports_test

import (
	"context"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
	"hulltally/ledger/demo"
	"hulltally/ledger/ledgertest"
	"hulltally/reports"
)

// TestFingerprintIgnoresPhysicalOrder: a report's fingerprint is computed
// from its content, so the content must not depend on the order in which
// the server happens to return rows. The same ledger is read twice, once
// with only index scans allowed (rows in key order: random dive ids) and
// once with only sequential scans (rows in the order they were written),
// as a migration, an upgrade or a bigger table can switch plans; a report
// made under one must match under the other (hull, dive and fleet
// reports). An unordered read of the
// counted cycles (found when migration 8 turned every issued report
// "outdated") fails here.
func TestFingerprintIgnoresPhysicalOrder(t *testing.T) {
	ctx := context.Background()
	url := srv.NewDatabase(t, true)
	cfg := ledgertest.Config(t, url)
	l, err := ledger.Open(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := demo.Run(ctx, l, demo.Options{Dir: t.TempDir(), DivesPerHull: 8, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	l.Close()
	at := time.Now().UTC()
	serials := []string{"CSC-ORN-01", "CSC-VES-02", "CSC-QUI-03"}
	// fingerprints opens the ledger with the planner settings given for
	// every new connection to the database and builds each hull's report.
	fingerprints := func(settings ...string) map[string]string {
		conn, err := pgx.Connect(ctx, url)
		if err != nil {
			t.Fatal(err)
		}
		defer conn.Close(ctx)
		if _, err := conn.Exec(ctx, "DO $$ BEGIN EXECUTE format('ALTER DATABASE %I RESET ALL', current_database()); END $$"); err != nil {
			t.Fatal(err)
		}
		for _, s := range settings {
			if _, err := conn.Exec(ctx, "DO $$ BEGIN EXECUTE format('ALTER DATABASE %I SET "+s+" = off', current_database()); END $$"); err != nil {
				t.Fatal(err)
			}
		}
		l, err := ledger.Open(ctx, cfg)
		if err != nil {
			t.Fatal(err)
		}
		defer l.Close()
		out := map[string]string{}
		for _, serial := range serials {
			m, err := reports.BuildHull(ctx, l, serial, at)
			if err != nil {
				t.Fatal(err)
			}
			if len(m.Hulls[0].CycleRanges) < 8 {
				t.Fatalf("%s: %d cycles, too few to show an order", serial, len(m.Hulls[0].CycleRanges))
			}
			if out[serial], err = m.Fingerprint(); err != nil {
				t.Fatal(err)
			}
			// The report of the hull's newest dive.
			var dive string
			if err := l.Pool().QueryRow(ctx, `SELECT d.id::text FROM dives d JOIN hulls h ON h.id = d.hull_id WHERE h.serial = $1 ORDER BY d.start_time DESC LIMIT 1`, serial).Scan(&dive); err != nil {
				t.Fatal(err)
			}
			if m, err = reports.BuildDive(ctx, l, dive, at); err != nil {
				t.Fatal(err)
			}
			if out["dive of "+serial], err = m.Fingerprint(); err != nil {
				t.Fatal(err)
			}
		}
		m, err := reports.BuildFleet(ctx, l, at)
		if err != nil {
			t.Fatal(err)
		}
		if out["fleet"], err = m.Fingerprint(); err != nil {
			t.Fatal(err)
		}
		return out
	}
	byIndex := fingerprints("enable_seqscan", "enable_bitmapscan")
	bySeq := fingerprints("enable_indexscan", "enable_indexonlyscan", "enable_bitmapscan")
	if len(byIndex) != 2*len(serials)+1 {
		t.Fatalf("%d reports built, want %d", len(byIndex), 2*len(serials)+1)
	}
	for report, fp := range byIndex {
		if bySeq[report] != fp {
			t.Errorf("%s: fingerprint %s with index scans, %s with sequential scans", report, fp, bySeq[report])
		}
	}
}
