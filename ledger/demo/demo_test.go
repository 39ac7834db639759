package demo_test

import (
	"bytes"
	"context"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

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
