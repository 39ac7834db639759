package ledger_test

import (
	"context"
	"math"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/ledgertest"
	"hulltally/ledger/spec"
)

// twoPeaks rises to 10 MPa, falls to 5, rises to 10 and returns to the
// surface, in 10-minute steps.
const twoPeaks = "t_s,pressure_mpa\n0,0\n600,10\n1200,5\n1800,10\n2400,0\n"

func TestDiveCyclesAndDamage(t *testing.T) {
	l := newLedger(t, 0)
	ctx := context.Background()
	d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "p.csv", twoPeaks), Start: &start0})
	if err != nil {
		t.Fatal(err)
	}
	// ASTM E1049-85 §5.4.4 by hand on the turning points 0, 10, 5, 10, 0:
	// (10, 5) closes as one full cycle of range 5, mean 7.5; the residue
	// 0, 10, 0 gives two half cycles of range 10, mean 5.
	cycles, err := l.DiveCycles(ctx, d.ID)
	if err != nil {
		t.Fatal(err)
	}
	want := map[[3]float64]int{{5, 7.5, 1}: 1, {10, 5, 0.5}: 2}
	got := map[[3]float64]int{}
	for _, c := range cycles {
		got[[3]float64{c.RangeMPa, c.MeanMPa, c.Count}]++
	}
	if len(got) != len(want) || got[[3]float64{5, 7.5, 1}] != 1 || got[[3]float64{10, 5, 0.5}] != 2 {
		t.Fatalf("cycles %v, want %v", cycles, want)
	}
	dmg, err := l.DiveDamageOf(ctx, d.ID)
	if err != nil {
		t.Fatal(err)
	}
	// End ring: designer's factor -9.5 MPa/MPa, so stress cycles (47.5,
	// mean -71.25, 1) and 2 × (95, mean -47.5, 0.5). Goodman against the
	// compressive strength 895 MPa: S_a,eq = S_a / (1 − |S_m|/895), the
	// corrected range 2·S_a,eq. Both ranges are below the knee (200 MPa at
	// 1e7 cycles, configs/curves.yaml), so the m2 = 5 branch with
	// log a2 = 18.50515 applies: N = 10^(18.50515 − 5·log10 S). Written out
	// here from the curve's published form, not by calling the S-N code.
	n := func(rangeMPa, meanMPa float64) float64 {
		sa := rangeMPa / 2 / (1 - math.Abs(meanMPa)/895)
		return math.Pow(10, 18.50515-5*math.Log10(2*sa))
	}
	wantRing := 1/n(47.5, -71.25) + 1/n(95, -47.5) // 1.144e-10 + 3.176e-9 = 3.290e-9
	ring := float64(dmg["end-ring-fwd"].Cyclic)
	if math.Abs(ring-wantRing) > 1e-9*wantRing || wantRing < 3.28e-9 || wantRing > 3.30e-9 {
		t.Fatalf("end ring cyclic damage %g, want %g", ring, wantRing)
	}
	if dmg["end-ring-fwd"].Sustained != 0 || dmg["end-ring-fwd"].Basis != "designer" {
		t.Errorf("end ring %+v", dmg["end-ring-fwd"])
	}
	lam := dmg["laminate"]
	if !(lam.Cyclic > 0) || !(lam.Sustained > 0) || lam.Basis != "lame" || math.IsInf(float64(lam.Cyclic), 0) {
		t.Errorf("laminate %+v", lam)
	}
}

var start0 = mustTime("2026-05-01T08:00:00Z")

func TestReassessKeepsOldAssessment(t *testing.T) {
	url := srv.NewDatabase(t, true)
	cfg := ledgertest.Config(t, url)
	l, err := ledger.Open(context.Background(), cfg)
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	ctx := context.Background()
	addExampleHull(t, l)
	for i, p := range []string{twoPeaks, "t_s,pressure_mpa\n0,0\n900,20\n1800,0\n", "t_s,pressure_mpa\n0,0\n900,15\n1800,0\n"} {
		st := start0.Add(time.Duration(i) * 24 * time.Hour)
		if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "p.csv", p), Start: &st}); err != nil {
			t.Fatal(err)
		}
	}
	h, _ := l.Hull(ctx, serial)
	before, err := l.HullDamage(ctx, h)
	if err != nil {
		t.Fatal(err)
	}
	if before.RemainingDives == nil || before.RemainingStatus != "estimated" || before.Governing == "" {
		t.Fatalf("before: %+v", before)
	}
	// An engineer raises the design fatigue factor to 3 and re-assesses.
	cfg3 := *cfg
	cfg3.Fatigue.DesignFatigueFactor = 3
	l3, err := ledger.Open(ctx, &cfg3)
	if err != nil {
		t.Fatal(err)
	}
	defer l3.Close()
	res, err := l3.Assess(ctx, ledger.AssessOptions{Reason: "DFF 3"})
	if err != nil {
		t.Fatal(err)
	}
	if len(res) != 1 || res[0].Dives != 3 || res[0].CountedFromRaw != 0 {
		t.Fatalf("assess: %+v", res)
	}
	after, err := l3.HullDamage(ctx, h)
	if err != nil {
		t.Fatal(err)
	}
	for i := range after.Components {
		b, a := float64(before.Components[i].CyclicDamage), float64(after.Components[i].CyclicDamage)
		if math.Abs(a-3*b) > 1e-12*a {
			t.Errorf("%s: cyclic %g after DFF 3, want 3 × %g", after.Components[i].Name, a, b)
		}
	}
	if after.Assessments != 4 { // three at logging, one re-assessment
		t.Errorf("%d assessments on record, want 4", after.Assessments)
	}
	var rows int
	if err := l.Pool().QueryRow(ctx, "SELECT sum(cardinality(dive_ids)) FROM assessment_damage").Scan(&rows); err != nil || rows != 2*3+2*3 {
		t.Errorf("damage rows %d (%v), want 12: the old ones stay", rows, err)
	}
	if v, err := l3.Verify(ctx); err != nil || !v.OK {
		t.Fatalf("verify: %v %+v", err, v)
	}
}

func TestRemainingLifeTooFewDives(t *testing.T) {
	l := newLedger(t, 0)
	ctx := context.Background()
	if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "p.csv", twoPeaks), Start: &start0}); err != nil {
		t.Fatal(err)
	}
	h, _ := l.Hull(ctx, serial)
	d, err := l.HullDamage(ctx, h)
	if err != nil {
		t.Fatal(err)
	}
	if d.RemainingDives != nil || d.RemainingStatus != "too_few_dives" || d.RemainingReason == "" {
		t.Fatalf("%+v", d)
	}
}

func TestUnknownCurveRefused(t *testing.T) {
	l := newLedger(t, 0)
	h, _ := l.Hull(context.Background(), serial)
	sp := *h.Spec
	sp.Serial = "EX-OTHER-02"
	sp.Components = append([]spec.Component{}, sp.Components...)
	sp.Components[0].Curve = "no-such-curve"
	if _, err := l.AddHull(context.Background(), &sp, ledger.AddHullOptions{}); err == nil {
		t.Fatal("a hull naming an unknown curve was accepted")
	}
}
