package demo_test

import (
	"context"
	"os"
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
