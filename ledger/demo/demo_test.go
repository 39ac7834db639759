package demo_test

import (
	"bytes"
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
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

// TestDemoAsItsPeople: given people signed in with their own passwords,
// the demo's maintenance records carry the maintenance person's name and
// its dives the operator's (the proof test's dive, maintenance's), each
// dive's assessment the name of who logged it, never a typed name; the
// owner has noted every hull so the fleet summary stands and verify is
// clean. Ledger.OpenAs refuses a wrong password and the owner.
func TestDemoAsItsPeople(t *testing.T) {
	owner := srv.Open(t)
	ctx := context.Background()
	b := make([]byte, 4)
	_, _ = rand.Read(b)
	as := func(role ledger.Role) (*ledger.Ledger, string) {
		name := "demo-test-" + string(role) + "-" + hex.EncodeToString(b)
		p, err := owner.AddPerson(ctx, name, role, "")
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() {
			_, _ = owner.Pool().Exec(context.Background(), "DROP OWNED BY "+pgx.Identifier{name}.Sanitize())
			_, _ = owner.Pool().Exec(context.Background(), "DROP ROLE IF EXISTS "+pgx.Identifier{name}.Sanitize())
		})
		if _, err := owner.OpenAs(ctx, name, p.Password+"x", 1); !errors.Is(err, ledger.ErrBadPassword) {
			t.Fatalf("%s with a wrong password: %v, want ErrBadPassword", name, err)
		}
		l, err := owner.OpenAs(ctx, name, p.Password, 2)
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(l.Close)
		return l, name
	}
	if _, err := owner.OpenAs(ctx, owner.Identity().Name, "anything", 1); !errors.Is(err, ledger.ErrBadPassword) {
		t.Fatalf("the owner through OpenAs: %v, want ErrBadPassword", err)
	}
	maint, mName := as(ledger.RoleMaintenance)
	ops, oName := as(ledger.RoleOperator)
	if _, err := demo.Run(ctx, owner, demo.Options{Dir: t.TempDir(), DivesPerHull: 3, SampleHz: 0.1, Maintenance: maint, Operator: ops}); err != nil {
		t.Fatal(err)
	}
	type who struct{ Table, Name string }
	rows, err := owner.Pool().Query(ctx, `SELECT 'hull_revisions', actor FROM hull_revisions UNION ALL SELECT 'inspections', actor FROM inspections
		UNION ALL SELECT 'proof_tests', actor FROM proof_tests
		UNION ALL SELECT CASE WHEN EXISTS (SELECT 1 FROM proof_tests p WHERE p.dive_id = d.id) THEN 'proof test dives' ELSE 'dives' END, recorded_by FROM dives d
		UNION ALL SELECT 'dive assessments by their logger', CASE WHEN a.actor = d.recorded_by THEN 'yes' ELSE a.actor END
			FROM assessments a JOIN assessment_damage x ON x.assessment_id = a.id AND x.hull_id = a.hull_id
			JOIN dives d ON d.hull_id = a.hull_id AND d.id = x.dive_ids[cardinality(x.dive_ids)]
			WHERE a.kind = 'dive'`)
	if err != nil {
		t.Fatal(err)
	}
	got, err := pgx.CollectRows(rows, pgx.RowToStructByPos[who])
	if err != nil {
		t.Fatal(err)
	}
	counts := map[who]int{}
	for _, w := range got {
		counts[w]++
	}
	want := map[who]int{
		{"hull_revisions", mName}: 3, {"inspections", mName}: 3, {"proof_tests", mName}: 3,
		{"proof test dives", mName}: 1, {"dives", oName}: 9,
	}
	for w, n := range counts {
		if w.Table == "dive assessments by their logger" {
			if w.Name != "yes" {
				t.Errorf("a dive's assessment by %s, not by who logged the dive", w.Name)
			}
			continue
		}
		if want[w] != n {
			t.Errorf("%d %s by %s, want %d", n, w.Table, w.Name, want[w])
		}
	}
	for w, n := range want {
		if counts[w] != n {
			t.Errorf("%s by %s: %d, want %d", w.Table, w.Name, counts[w], n)
		}
	}
	if counts[who{"dive assessments by their logger", "yes"}] == 0 {
		t.Error("no dive assessment was checked")
	}
	var withSummary int
	if err := owner.Pool().QueryRow(ctx, "SELECT count(*) FROM fleet_summary").Scan(&withSummary); err != nil || withSummary != 3 {
		t.Fatalf("hulls with a fleet summary: %d (%v), want 3", withSummary, err)
	}
	if v, err := owner.Verify(ctx); err != nil || !v.OK {
		t.Fatalf("verify: %v %+v", err, v)
	}
}
