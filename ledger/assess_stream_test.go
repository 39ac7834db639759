package ledger_test

import (
	"context"
	"fmt"
	"math"
	"testing"

	"hulltally/ledger"
)

// TestAssessHullByHull re-assesses a fleet larger than the chunks Assess
// reads at a time (70 hulls, dives 0 to 3 each, so some hulls have none
// and chunks end mid-fleet) and checks every hull's result three ways:
// its dive count against what was stored, its governing ratio against the
// damage in force read afterwards (HullDamage, another code path), and
// against a re-assessment of that hull alone. A dive attributed to the
// wrong hull at a chunk boundary, or a hull left out, fails here.
func TestAssessHullByHull(t *testing.T) {
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	const hulls = 70
	dives := func(h int) int { return h % 4 }
	copyFleet(t, l, "CHUNK", hulls, dives)

	first, err := l.Assess(ctx, ledger.AssessOptions{Actor: "test", Reason: "fleet"})
	if err != nil {
		t.Fatal(err)
	}
	if len(first) != hulls {
		t.Fatalf("assessed %d hulls, want %d", len(first), hulls)
	}
	second, err := l.Assess(ctx, ledger.AssessOptions{Actor: "test", Reason: "fleet again"})
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range first {
		serial := fmt.Sprintf("CHUNK-%03d", i)
		if r.Hull != serial {
			t.Fatalf("result %d is for %s, want %s", i, r.Hull, serial)
		}
		if r.Dives != dives(i) || r.Current.DiveCount != dives(i) {
			t.Errorf("%s: %d dives assessed (%d counted), want %d", serial, r.Dives, r.Current.DiveCount, dives(i))
		}
		h, err := l.Hull(ctx, serial)
		if err != nil {
			t.Fatal(err)
		}
		inForce, err := l.HullDamage(ctx, h)
		if err != nil {
			t.Fatal(err)
		}
		alone, err := l.Assess(ctx, ledger.AssessOptions{Hull: serial, Actor: "test", Reason: "alone"})
		if err != nil {
			t.Fatal(err)
		}
		want := float64(r.Current.GoverningRatio)
		if dives(i) > 0 && !(want > 0) {
			t.Errorf("%s: governing ratio %v with %d dives", serial, want, dives(i))
		}
		for name, got := range map[string]float64{
			"in force":               float64(inForce.GoverningRatio),
			"alone":                  float64(alone[0].Current.GoverningRatio),
			"previous of the second": float64(second[i].Previous.GoverningRatio),
			"second":                 float64(second[i].Current.GoverningRatio),
		} {
			if math.Abs(got-want) > 1e-12*math.Max(1, want) {
				t.Errorf("%s: governing ratio %s %v, fleet assessment %v", serial, name, got, want)
			}
		}
	}
}
