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
		{"gauge with a test that measured nothing", ComponentSpec{Name: "laminate", Kind: "laminate_cylinder", Basis: "gauge", Factor: &f, Source: "FE", Curve: "carbon-epoxy-cc-illustrative",
			NoCalibration: "the test measured no compliance on the axial gauge axial1"}, load.BasisDesigner, -9.5, "not available: the test measured no compliance on the axial gauge axial1; designer basis used"},
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
	if len(cs[0].Warnings) != 1 || !strings.Contains(cs[0].Warnings[0], "curve in air") {
		t.Fatalf("warnings %v: a curve in air must be flagged", cs[0].Warnings)
	}
}

func TestCheckModeRefuses(t *testing.T) {
	lib := library(t)
	cc, _ := lib.Curve("carbon-epoxy-cc-illustrative")
	d, _ := lib.Curve("dnv-rp-c203-d-air")
	rc, _ := lib.Rupture("carbon-epoxy-rupture-compression-illustrative")
	tt := cc
	tt.Name, tt.Mode = "carbon-epoxy-tt", sn.ModeTension
	rt := rc
	rt.Name, rt.Side = "carbon-epoxy-rupture-tension", sn.SideTension
	tests := []struct {
		name    string
		factor  float64
		curve   sn.Curve
		rupture *sn.Rupture
		want    string // "" means accepted
	}{
		// Adversarial first: a tensile part on a compressive curve, and a
		// tensile part whose rupture curve counts only compression (zero
		// sustained damage, silently).
		{"tension on a compression curve", 4.2, cc, nil, "is compression-compression"},
		{"tension with a compression rupture curve", 4.2, tt, &rc, "no sustained-load damage"},
		{"compression on a tension curve", -6.5, tt, nil, "is tension-tension"},
		{"compression with a tension rupture curve", -6.5, cc, &rt, "counts tension stress only"},
		{"zero factor", 0, d, nil, "sign of its stress is unknown"},
		{"NaN factor", math.NaN(), d, nil, "sign of its stress is unknown"},
		{"infinite factor", math.Inf(-1), d, nil, "sign of its stress is unknown"},
		{"compression, cc and compression rupture", -6.5, cc, &rc, ""},
		{"tension, tt and tension rupture", 4.2, tt, &rt, ""},
		{"metal range curve, either sign", 4.2, d, nil, ""},
		{"metal range curve, compression", -9.5, d, nil, ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			err := CheckMode("end-ring-fwd", tc.factor, tc.curve, tc.rupture)
			if tc.want == "" {
				if err != nil {
					t.Fatal(err)
				}
				return
			}
			if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.Contains(err.Error(), "component end-ring-fwd") {
				t.Fatalf("error %v, want one naming the component and containing %q", err, tc.want)
			}
		})
	}
	// Resolve refuses a designer's tensile factor on a compression curve,
	// and a gauge calibration that turns out tensile.
	g := Geometry{Shape: "cylinder", InnerRadiusM: 0.5, WallM: 0.1}
	plus := 3.0
	if _, err := Resolve(g, []ComponentSpec{{Name: "laminate", Kind: "laminate_cylinder", Basis: "designer", Factor: &plus, Source: "FE",
		Curve: "carbon-epoxy-cc-illustrative"}}, lib); err == nil || !strings.Contains(err.Error(), "laminate") {
		t.Fatalf("tensile designer factor on a compression curve: %v", err)
	}
	// A laminate shell under external pressure is in compression: a
	// gauge calibration that reads tension contradicts Lamé (a gauge
	// reversed), is not used, and the component keeps the compressive
	// Lamé factor with a warning, so the dive is still assessed.
	cal, _ := load.NewGauge(60000, 50, "proof test, gauge reads tension")
	cs, err := Resolve(g, []ComponentSpec{{Name: "laminate", Kind: "laminate_cylinder", Basis: "gauge", Curve: "carbon-epoxy-cc-illustrative",
		RuptureCurve: "carbon-epoxy-rupture-compression-illustrative", Calibration: &cal}}, lib)
	if err != nil || cs[0].Transfer.Transfer.Basis != load.BasisLame || !(cs[0].Transfer.Transfer.Factor < 0) ||
		!strings.Contains(cs[0].Transfer.Reason, "sign contradicts") || len(cs[0].Warnings) == 0 {
		t.Fatalf("tensile gauge calibration of a laminate: %+v %v", cs, err)
	}
	// A calibration of the right sign but a third of the designer's
	// factor is used (it is the measurement) and warned about: a gauge
	// off the hot spot or a wrong modulus would make the part look
	// better than it is.
	f := -9.5
	low, _ := load.NewGauge(60000, -50, "proof test, gauge hoop1")
	cs, err = Resolve(g, []ComponentSpec{{Name: "ring", Kind: "end_ring", Basis: "gauge", Factor: &f, Source: "FE", Curve: "dnv-rp-c203-d-seawater-cp",
		Calibration: &low}}, lib)
	if err != nil || cs[0].Transfer.Transfer.Basis != load.BasisGauge || len(cs[0].Warnings) != 1 || !strings.Contains(cs[0].Warnings[0], "0.316 times the designer factor -9.5") {
		t.Fatalf("low gauge calibration: %+v %v", cs, err)
	}
	// On a part with no sign of reference (no designer's factor, not the
	// shell) a tensile calibration is used, and the compression curve
	// refuses it, naming the component.
	if _, err := Resolve(g, []ComponentSpec{{Name: "seat", Kind: "hatch_seat", Basis: "gauge", Curve: "carbon-epoxy-cc-illustrative",
		Calibration: &cal}}, lib); err == nil || !strings.Contains(err.Error(), "tensile") || !strings.Contains(err.Error(), "seat") {
		t.Fatalf("tensile gauge calibration on a compression curve: %v", err)
	}
	if err := Check(g, []ComponentSpec{{Name: "laminate", Kind: "laminate_cylinder", Basis: "designer", Factor: &plus, Source: "FE",
		Curve: "carbon-epoxy-cc-illustrative"}, {Name: "ring", Kind: "end_ring", Basis: "lame", Curve: "nope"}}, lib, Settings{DFF: 1, MeanStress: sn.MeanStressNone}); err == nil ||
		!strings.Contains(err.Error(), "component laminate") || !strings.Contains(err.Error(), "component ring") {
		t.Fatalf("Check must report both components: %v", err)
	}
}

// TestTensileRupture: a tensile component with a tension-side rupture
// curve gets its sustained damage from the stress magnitude, never zero.
func TestTensileRupture(t *testing.T) {
	lib := library(t)
	cc, _ := lib.Curve("carbon-epoxy-cc-illustrative")
	tt := cc
	tt.Name, tt.Mode = "carbon-epoxy-tt", sn.ModeTension
	rt, _ := lib.Rupture("glass-epoxy-rupture-compression-illustrative")
	rt.Name, rt.Side = "glass-epoxy-rupture-tension", sn.SideTension
	tr, err := load.NewDesigner(5, "FE, tensile inner ply at the closure")
	if err != nil {
		t.Fatal(err)
	}
	comps := []Component{{Name: "closure", Transfer: load.Choice{Transfer: tr}, Curve: tt, Rupture: &rt}}
	res, err := DiveDamage(Dive{Holds: []Hold{{LevelMPa: 40, Seconds: 3600}}}, comps, Settings{DFF: 1, MeanStress: sn.MeanStressNone})
	if err != nil {
		t.Fatal(err)
	}
	// σ = +200 MPa; t_r = 10^(12 − 14·200/600) h = 10^7.3333 h; one hour
	// gives D = 10^−7.3333 = 4.642e-8.
	want := math.Pow(10, -(12 - 14*200.0/600))
	if d := res[0].Damage.Sustained; !(d > 0) || math.Abs(d-want) > 1e-9*want {
		t.Fatalf("sustained damage %g, want %g", d, want)
	}
}

func TestEffectiveSettings(t *testing.T) {
	global := Settings{DFF: 3, MeanStress: sn.MeanStressNone}
	tests := []struct {
		name    string
		own     Settings
		dff     float64
		ms      sn.MeanStress
		reason  string
		wantErr string
	}{
		// Adversarial first: a component cannot lower the global factor.
		{"lower DFF overridden", Settings{DFF: 1}, 3, sn.MeanStressNone, "never lower", ""},
		{"DFF below 1", Settings{DFF: 0.5}, 0, "", "", "≥ 1"},
		{"NaN DFF", Settings{DFF: math.NaN()}, 0, "", "", "≥ 1"},
		{"infinite DFF", Settings{DFF: math.Inf(1)}, 0, "", "", "≥ 1"},
		{"negative DFF", Settings{DFF: -3}, 0, "", "", "≥ 1"},
		{"unknown mean stress", Settings{MeanStress: "gerber"}, 0, "", "", "gerber"},
		{"nothing given", Settings{}, 3, sn.MeanStressNone, "design fatigue factor 3 (global); mean stress none (global)", ""},
		{"higher DFF used", Settings{DFF: 10}, 10, sn.MeanStressNone, "design fatigue factor 10 (hull spec; global 3)", ""},
		{"own goodman", Settings{MeanStress: sn.MeanStressGoodman}, 3, sn.MeanStressGoodman, "mean stress goodman (hull spec; global none)", ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			e, err := EffectiveSettings(global, tc.own)
			if tc.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), tc.wantErr) {
					t.Fatalf("error %v, want %q", err, tc.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if e.DFF != tc.dff || e.MeanStress != tc.ms || !strings.Contains(e.Reason, tc.reason) {
				t.Fatalf("%+v, want DFF %v, %s, reason with %q", e, tc.dff, tc.ms, tc.reason)
			}
		})
	}
	if _, err := EffectiveSettings(Settings{DFF: 0.9, MeanStress: sn.MeanStressNone}, Settings{}); err == nil {
		t.Fatal("global DFF below 1 accepted")
	}
}

func TestPerComponentSettingsInAssessment(t *testing.T) {
	lib := library(t)
	f := -10.0
	ring := func(name string, dff float64, ms sn.MeanStress) ComponentSpec {
		return ComponentSpec{Name: name, Kind: "hatch_seat", Basis: "designer", Factor: &f, Source: "FE", Curve: "dnv-rp-c203-d-air", DFF: dff, MeanStress: ms}
	}
	cs, err := Resolve(Geometry{Shape: "sphere", InnerRadiusM: 0.8, WallM: 0.07},
		[]ComponentSpec{ring("global", 0, ""), ring("strict", 4, ""), ring("lax", 1, ""), ring("goodman", 0, sn.MeanStressGoodman)}, lib)
	if err != nil {
		t.Fatal(err)
	}
	a, err := NewAssessor(cs, Settings{DFF: 2, MeanStress: sn.MeanStressNone})
	if err != nil {
		t.Fatal(err)
	}
	res, err := a.Dive(Dive{PressureCycles: []rainflow.Cycle{{Range: 10, Mean: 5, Count: 1}}})
	if err != nil {
		t.Fatal(err)
	}
	// Range 100 MPa on curve D in air, N = 1.459e6 (DNV-RP-C203 (2016)
	// Table 2-1): damage DFF/1.459e6 with no mean-stress correction.
	base := 1 / math.Pow(10, 12.164-6)
	for i, want := range []float64{2 * base, 4 * base, 2 * base} {
		if d := res[i].Damage.Cyclic; math.Abs(d-want) > 1e-12*want {
			t.Errorf("%s: damage %g, want %g", res[i].Component, d, want)
		}
	}
	if res[2].Settings.DFF != 2 || !strings.Contains(res[2].Settings.Reason, "never lower") {
		t.Errorf("lax component settings %+v", res[2].Settings)
	}
	// Goodman with a compressive mean of −50 MPa raises the range to
	// 100/(1 − 50/470) (strengths of the shipped curve D, illustrative).
	wantG := 2 / math.Pow(10, 12.164-3*math.Log10(100/(1-50.0/470)))
	if d := res[3].Damage.Cyclic; math.Abs(d-wantG) > 1e-9*wantG || res[3].Cyclic.MeanStress != sn.MeanStressGoodman {
		t.Errorf("goodman component: damage %g (%s), want %g", d, res[3].Cyclic.MeanStress, wantG)
	}
	if got := a.Settings(); len(got) != 4 || got[1].DFF != 4 {
		t.Errorf("settings %+v", got)
	}
	// Goodman on a curve without strengths is refused when the assessor is
	// made, not at the first dive.
	cs[0].Curve.Strengths = sn.Strengths{}
	cs[0].Own.MeanStress = sn.MeanStressGoodman
	if _, err := NewAssessor(cs[:1], Settings{DFF: 2, MeanStress: sn.MeanStressNone}); err == nil || !strings.Contains(err.Error(), "strengths") {
		t.Fatalf("goodman without strengths: %v", err)
	}
}
