package ledger_test

import (
	"context"
	"fmt"
	"math"
	"testing"

	"github.com/google/uuid"

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

	first, err := l.Assess(ctx, ledger.AssessOptions{Reason: "fleet"})
	if err != nil {
		t.Fatal(err)
	}
	if len(first) != hulls {
		t.Fatalf("assessed %d hulls, want %d", len(first), hulls)
	}
	second, err := l.Assess(ctx, ledger.AssessOptions{Reason: "fleet again"})
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
		alone, err := l.Assess(ctx, ledger.AssessOptions{Hull: serial, Reason: "alone"})
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

// TestAssessLeavesVoidedDivesOut: a voided dive counts for nothing, so
// the figures a re-assessment returns must be those read back afterwards,
// not ones that still add the voided dive's damage.
func TestAssessLeavesVoidedDivesOut(t *testing.T) {
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	copyFleet(t, l, "VOIDED", 1, func(int) int { return 3 })
	var id uuid.UUID
	if err := l.Pool().QueryRow(ctx, `SELECT d.id FROM dives d JOIN hulls h ON h.id = d.hull_id WHERE h.serial = 'VOIDED-000' ORDER BY d.max_pressure_mpa DESC LIMIT 1`).Scan(&id); err != nil {
		t.Fatal(err)
	}
	if _, err := l.VoidDive(ctx, id.String(), "logger fault", ""); err != nil {
		t.Fatal(err)
	}
	res, err := l.Assess(ctx, ledger.AssessOptions{Reason: "after the void"})
	if err != nil {
		t.Fatal(err)
	}
	h, err := l.Hull(ctx, "VOIDED-000")
	if err != nil {
		t.Fatal(err)
	}
	inForce, err := l.HullDamage(ctx, h)
	if err != nil {
		t.Fatal(err)
	}
	if res[0].Dives != 2 || res[0].Current.DiveCount != 2 || inForce.DiveCount != 2 {
		t.Errorf("dives assessed %d, counted %d, in force %d; want 2 (one of 3 voided)", res[0].Dives, res[0].Current.DiveCount, inForce.DiveCount)
	}
	got, want := float64(res[0].Current.GoverningRatio), float64(inForce.GoverningRatio)
	if math.Abs(got-want) > 1e-12*math.Max(1, want) {
		t.Errorf("assess returned governing ratio %v, the damage in force is %v", got, want)
	}
}
