package demo_test

import (
	"bytes"
	"context"
	"crypto/rand"
	"encoding/hex"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
	"hulltally/ledger/demo"
	"hulltally/ledger/ledgertest"
)

var srv *ledgertest.Server

func TestMain(m *testing.M) { os.Exit(ledgertest.Main(m, &srv)) }

func TestDemoRunsTwice(t *testing.T) {
	l := srv.Open(t)
	ctx := context.Background()
	o := demo.Options{Dir: t.TempDir(), DivesPerHull: 4, SampleHz: 0.1}
	first, err := demo.Run(ctx, l, o)
	if err != nil {
		t.Fatal(err)
	}
	if first.Hulls != 3 || first.HullsAdded != 3 || first.Logged != 12 || first.Duplicates != 0 {
		t.Fatalf("first run %+v", first)
	}
	again, err := demo.Run(ctx, l, o)
	if err != nil {
		t.Fatal(err)
	}
	if again.HullsAdded != 0 || again.Logged != 0 || again.Duplicates != 12 {
		t.Fatalf("second run %+v", again)
	}
	hs, err := l.Hulls(ctx)
	if err != nil || len(hs) != 3 {
		t.Fatalf("%v %v", hs, err)
	}
	for _, s := range hs {
		h, err := l.Hull(ctx, s.Serial)
		if err != nil {
			t.Fatal(err)
		}
		d, err := l.HullDamage(ctx, h)
		if err != nil {
			t.Fatal(err)
		}
		want := 4
		if s.Serial == "CSC-QUI-03" {
			want = 5 // its proof test's samples are logged as a dive too
		}
		if d.DiveCount != want || !(d.GoverningRatio > 0) || d.RemainingDives == nil {
			t.Errorf("%s: %+v", s.Serial, d)
		}
	}
	if v, err := l.Verify(ctx); err != nil || !v.OK {
		t.Fatalf("verify %v %+v", err, v)
	}
}

// TestConcurrentDemos: two demos writing the same folder at once never
// collide on a temporary file name, leave no temporary file behind, and
// every dive file is whole (the same bytes a lone run writes).
func TestConcurrentDemos(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	o := demo.Options{Dir: dir, DivesPerHull: 3, SampleHz: 0.1}
	var wg sync.WaitGroup
	errs := make([]error, 2)
	for i := range errs {
		l := srv.Open(t) // each demo its own ledger: only the files are shared
		wg.Add(1)
		go func() {
			defer wg.Done()
			_, errs[i] = demo.Run(ctx, l, o)
		}()
	}
	wg.Wait()
	for i, err := range errs {
		if err != nil {
			t.Fatalf("demo %d: %v", i, err)
		}
	}
	var left []string
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if strings.Contains(d.Name(), ".tmp") {
			left = append(left, p)
		}
		return nil
	})
	if err != nil || len(left) != 0 {
		t.Fatalf("temporary files left: %v %v", left, err)
	}
	// The files are whole: a fresh ledger logs them all, and a lone run in
	// a fresh folder writes the same bytes.
	lone := t.TempDir()
	if _, err := demo.Run(ctx, srv.Open(t), demo.Options{Dir: lone, DivesPerHull: 3, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"CSC-ORN-01/dive-001.csv", "CSC-ORN-01/dive-003-ae.csv", "CSC-QUI-03/proof-test.csv", "CSC-VES-02.yaml"} {
		a, errA := os.ReadFile(filepath.Join(dir, name))
		b, errB := os.ReadFile(filepath.Join(lone, name))
		if errA != nil || errB != nil || !bytes.Equal(a, b) || len(a) == 0 {
			t.Errorf("%s: concurrent and lone runs differ (%d vs %d bytes; %v %v)", name, len(a), len(b), errA, errB)
		}
	}
}

// TestDemoAsItsPeople: given people to act as, the demo's maintenance
// records carry the maintenance person's name and its dives the
// operator's (never a typed name), and the owner has noted every hull so
// the fleet summary stands and verify is clean.
func TestDemoAsItsPeople(t *testing.T) {
	owner := srv.Open(t)
	ctx := context.Background()
	b := make([]byte, 4)
	_, _ = rand.Read(b)
	as := func(role ledger.Role) (*ledger.Ledger, string) {
		name := "demo-test-" + string(role) + "-" + hex.EncodeToString(b)
		if _, err := owner.AddPerson(ctx, name, role, ""); err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() {
			_, _ = owner.Pool().Exec(context.Background(), "DROP OWNED BY "+pgx.Identifier{name}.Sanitize())
			_, _ = owner.Pool().Exec(context.Background(), "DROP ROLE IF EXISTS "+pgx.Identifier{name}.Sanitize())
		})
		l, err := owner.As(ctx, name, 2)
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(l.Close)
		return l, name
	}
	maint, mName := as(ledger.RoleMaintenance)
	ops, oName := as(ledger.RoleOperator)
	if _, err := demo.Run(ctx, owner, demo.Options{Dir: t.TempDir(), DivesPerHull: 3, SampleHz: 0.1, Maintenance: maint, Operator: ops}); err != nil {
		t.Fatal(err)
	}
	var bad []string
	rows, err := owner.Pool().Query(ctx, `SELECT 'hull_revisions', actor FROM hull_revisions UNION ALL SELECT 'inspections', actor FROM inspections
		UNION ALL SELECT 'proof_tests', actor FROM proof_tests UNION ALL SELECT 'dives', recorded_by FROM dives`)
	if err != nil {
		t.Fatal(err)
	}
	counts := map[string]int{}
	for rows.Next() {
		var table, who string
		if err := rows.Scan(&table, &who); err != nil {
			t.Fatal(err)
		}
		counts[table]++
		want := mName
		if table == "dives" {
			want = oName
		}
		if who != want && !(table == "dives" && who == mName) { // a proof test's samples are logged by maintenance
			bad = append(bad, table+": "+who)
		}
	}
	if rows.Err() != nil || len(bad) > 0 || counts["inspections"] != 3 || counts["proof_tests"] != 3 || counts["dives"] != 10 {
		t.Fatalf("records %v, not made by the demo's people: %v (%v)", counts, bad, rows.Err())
	}
	var withSummary int
	if err := owner.Pool().QueryRow(ctx, "SELECT count(*) FROM fleet_summary").Scan(&withSummary); err != nil || withSummary != 3 {
		t.Fatalf("hulls with a fleet summary: %d (%v), want 3", withSummary, err)
	}
	if v, err := owner.Verify(ctx); err != nil || !v.OK {
		t.Fatalf("verify: %v %+v", err, v)
	}
}
