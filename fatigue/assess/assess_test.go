package assess

import (
	"math"
	"math/rand/v2"
	"os"
	"strings"
	"testing"

	"hulltally/fatigue/damage"
	"hulltally/fatigue/load"
	"hulltally/fatigue/rainflow"
	"hulltally/fatigue/sn"
)

func library(t *testing.T) *sn.Library {
	t.Helper()
	data, err := os.ReadFile("../../configs/curves.yaml")
	if err != nil {
		t.Fatal(err)
	}
	lib, err := sn.ParseLibrary(data)
	if err != nil {
		t.Fatal(err)
	}
	return lib
}

func TestResolvePrecedence(t *testing.T) {
	lib := library(t)
	g := Geometry{Shape: "cylinder", InnerRadiusM: 0.5, WallM: 0.1}
	f := -9.5
	cal, err := load.NewGauge(60000, -150, "proof test 2026-04-01, gauge hoop1")
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name      string
		spec      ComponentSpec
		basis     load.Basis
		factor    float64
		reasonHas string
	}{
		// Lamé at the inner surface: −2b²/(b²−a²) = −2·0.36/(0.36−0.25) = −6.5455.
		{"lame default", ComponentSpec{Name: "laminate", Kind: "laminate_cylinder", Basis: "lame", Curve: "carbon-epoxy-cc-illustrative"}, load.BasisLame, -2 * 0.36 / 0.11, "isotropic"},
		{"designer over lame", ComponentSpec{Name: "ring", Kind: "end_ring", Basis: "designer", Factor: &f, Source: "FE", Curve: "dnv-rp-c203-d-air"}, load.BasisDesigner, -9.5, "passed over: lame"},
		{"gauge without a proof test", ComponentSpec{Name: "laminate", Kind: "laminate_cylinder", Basis: "gauge", Curve: "carbon-epoxy-cc-illustrative"}, load.BasisLame, -2 * 0.36 / 0.11, "no proof test"},
		// E × compliance = 60 000 MPa × −150 µε/MPa = −9 MPa/MPa.
		{"gauge calibration wins", ComponentSpec{Name: "laminate", Kind: "laminate_cylinder", Basis: "gauge", Factor: &f, Source: "FE", Curve: "carbon-epoxy-cc-illustrative", Calibration: &cal}, load.BasisGauge, -9, "gauge basis used"},
		{"lame on an end ring is flagged", ComponentSpec{Name: "ring", Kind: "end_ring", Basis: "lame", Curve: "dnv-rp-c203-d-air"}, load.BasisLame, -2 * 0.36 / 0.11, "give the designer's factor"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			cs, err := Resolve(g, []ComponentSpec{tc.spec}, lib)
			if err != nil {
				t.Fatal(err)
			}
			tr := cs[0].Transfer
			if tr.Transfer.Basis != tc.basis || math.Abs(tr.Transfer.Factor-tc.factor) > 1e-9 || !strings.Contains(tr.Reason, tc.reasonHas) {
				t.Fatalf("%+v, want %s %v with %q", tr, tc.basis, tc.factor, tc.reasonHas)
			}
		})
	}
	if _, err := Resolve(g, []ComponentSpec{{Name: "x", Curve: "nope"}}, lib); err == nil {
		t.Fatal("unknown curve accepted")
	}
}

func TestHoldHistogram(t *testing.T) {
	h := NewHoldHistogram(0.05)
	// 0 → 10 MPa over 10 s, 100 s at 10 MPa, back to 0 over 10 s.
	var ts, ps []float64
	for i := 0; i <= 120; i++ {
		t := float64(i)
		p := 10.0
		switch {
		case t < 10:
			p = t
		case t > 110:
			p = 10 - (t - 110)
		}
		ts, ps = append(ts, t), append(ps, p)
	}
	h.Add(ts[:50], ps[:50]) // in two chunks, as blocks arrive
	h.Add(ts[50:], ps[50:])
	all := h.Holds(0)
	total := 0.0
	for _, x := range all {
		total += x.Seconds
	}
	// Every interval with a positive end is charged: all 120 s.
	if math.Abs(total-120) > 1e-9 {
		t.Fatalf("total %v s", total)
	}
	merged := MergeHolds(append([]Hold(nil), all...), 4)
	if len(merged) != 4 {
		t.Fatalf("%d levels after merging", len(merged))
	}
	mt := 0.0
	for _, x := range merged {
		mt += x.Seconds
	}
	if math.Abs(mt-120) > 1e-9 || merged[len(merged)-1].LevelMPa < 10 {
		t.Fatalf("merged %v", merged)
	}
	// Merging only moves time upwards: the sustained damage on any
	// rupture curve can only grow.
	lib := library(t)
	r, err := lib.Rupture("glass-epoxy-rupture-compression-illustrative")
	if err != nil {
		t.Fatal(err)
	}
	if sustained(t, merged, r) < sustained(t, all, r) {
		t.Fatalf("merging lowered the damage: %g < %g", sustained(t, merged, r), sustained(t, all, r))
	}
}

func TestMergeHoldsNeverLowersDamage(t *testing.T) {
	lib := library(t)
	r, _ := lib.Rupture("carbon-epoxy-rupture-compression-illustrative")
	rng := rand.New(rand.NewPCG(1, 1))
	for trial := 0; trial < 200; trial++ {
		var hs []Hold
		lv := 0.0
		for i := 0; i < 5+rng.IntN(80); i++ {
			lv += 0.05 * float64(1+rng.IntN(20))
			hs = append(hs, Hold{LevelMPa: lv, Seconds: rng.Float64() * 3600})
		}
		full := sustained(t, hs, r)
		m := MergeHolds(append([]Hold(nil), hs...), 2+rng.IntN(10))
		if got := sustained(t, m, r); got < full*(1-1e-12) {
			t.Fatalf("trial %d: merged %g < %g", trial, got, full)
		}
	}
}

func sustained(t *testing.T, hs []Hold, r sn.Rupture) float64 {
	var holds []damage.Hold
	for _, x := range hs {
		holds = append(holds, damage.Hold{Stress: -30 * x.LevelMPa, Duration: x.Seconds})
	}
	s, err := damage.Robinson(holds, r)
	if err != nil {
		t.Fatal(err)
	}
	return s.Damage
}

func TestDiveDamageScalesPressureCycles(t *testing.T) {
	lib := library(t)
	f := -10.0
	cs, err := Resolve(Geometry{Shape: "sphere", InnerRadiusM: 0.8, WallM: 0.07},
		[]ComponentSpec{{Name: "ring", Kind: "hatch_seat", Basis: "designer", Factor: &f, Source: "FE", Curve: "dnv-rp-c203-d-air"}}, lib)
	if err != nil {
		t.Fatal(err)
	}
	// One full pressure cycle of 10 MPa: a stress range of 100 MPa on
	// DNV-RP-C203 curve D, N = 1.459e6 (DNV-RP-C203 (2016) Table 2-1), with
	// no mean-stress correction: D = 1/1.459e6 = 6.854e-7.
	res, err := DiveDamage(Dive{PressureCycles: []rainflow.Cycle{{Range: 10, Mean: 5, Count: 1}}}, cs, Settings{DFF: 1, MeanStress: sn.MeanStressNone})
	if err != nil {
		t.Fatal(err)
	}
	if d := res[0].Damage.Cyclic; math.Abs(d-1/1.459e6) > 0.001/1.459e6 {
		t.Fatalf("damage %g, want %g", d, 1/1.459e6)
	}
	if res[0].Damage.Sustained != 0 {
		t.Fatalf("sustained %g without a rupture curve", res[0].Damage.Sustained)
	}
}
