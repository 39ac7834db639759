package ledger_test

import (
	"context"
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"hulltally/fatigue/seawater"
	"hulltally/ledger"
	"hulltally/ledger/ledgertest"
	"hulltally/ledger/spec"
	"hulltally/ledger/synth"
)

// emptyLedger opens a ledger on a fresh database with no hull, global
// design fatigue factor 3 and the goodman correction.
func emptyLedger(t *testing.T) *ledger.Ledger {
	t.Helper()
	cfg := ledgertest.Config(t, srv.NewDatabase(t, true))
	cfg.Fatigue.DesignFatigueFactor, cfg.Fatigue.MeanStress = 3, "goodman"
	l, err := ledger.Open(context.Background(), cfg)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(l.Close)
	return l
}

// TestAddHullRefusesCurveOfWrongSign: a part whose stress under external
// pressure is tensile, read on a compression-compression curve, would be
// given the wrong strength; one whose rupture curve counts only the other
// side would be given no sustained-load damage at all. Both are refused
// at hull add as input errors naming the component, and nothing is
// stored.
func TestAddHullRefusesCurveOfWrongSign(t *testing.T) {
	l := emptyLedger(t)
	ctx := context.Background()
	tension := 4.2
	tests := []struct {
		name string
		edit func(h *spec.Hull)
		want []string
	}{
		{"tensile part on a compression curve", func(h *spec.Hull) {
			h.Components = append(h.Components, spec.Component{Name: "penetrator-1", Kind: "penetrator",
				Transfer: spec.Transfer{Basis: "designer", FactorMPaPerMPa: &tension, Source: "FE model P-2"}, Curve: "carbon-epoxy-cc-illustrative"})
		}, []string{"component penetrator-1", "tensile", "compression-compression"}},
		{"tensile part with a compression rupture curve", func(h *spec.Hull) {
			h.Components = append(h.Components, spec.Component{Name: "window-seat", Kind: "window_seat",
				Transfer: spec.Transfer{Basis: "designer", FactorMPaPerMPa: &tension, Source: "FE model W-1"}, Curve: "ti-6al-4v-machined-illustrative",
				RuptureCurve: "carbon-epoxy-rupture-compression-illustrative"})
		}, []string{"component window-seat", "no sustained-load damage"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			h := exampleSpec(t)
			tc.edit(h)
			if err := h.Validate(); err != nil {
				t.Fatalf("the spec itself is valid: %v", err)
			}
			_, err := l.AddHull(ctx, h, ledger.AddHullOptions{})
			var ie *ledger.InputError
			if err == nil || !errors.As(err, &ie) {
				t.Fatalf("error %v, want an input error", err)
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q does not say %q", err, w)
				}
			}
		})
	}
	var n int
	if err := l.Pool().QueryRow(ctx, "SELECT count(*) FROM hulls").Scan(&n); err != nil || n != 0 {
		t.Fatalf("%d hulls stored (%v), want none", n, err)
	}
}

// TestComponentSettingsShown: a component's own design fatigue factor and
// mean-stress correction are used and shown with their reason; a
// component's factor below the global one is overridden by the global
// one (never looser than the configuration).
func TestComponentSettingsShown(t *testing.T) {
	l := emptyLedger(t)
	ctx := context.Background()
	h := exampleSpec(t)
	ten, low := 10.0, 1.5
	h.Components[1].DesignFatigueFactor, h.Components[1].MeanStress = &ten, "none"
	lowRing := h.Components[1]
	lowRing.Name, lowRing.DesignFatigueFactor, lowRing.MeanStress = "end-ring-aft", &low, ""
	h.Components = append(h.Components, lowRing)
	if _, err := l.AddHull(ctx, h, ledger.AddHullOptions{}); err != nil {
		t.Fatal(err)
	}
	d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "p.csv", twoPeaks), Start: &start0})
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]struct {
		dff    float64
		ms     string
		reason string
	}{
		"laminate":     {3, "goodman", "design fatigue factor 3 (global); mean stress goodman (global)"},
		"end-ring-fwd": {10, "none", "design fatigue factor 10 (hull spec; global 3); mean stress none (hull spec; global goodman)"},
		"end-ring-aft": {3, "goodman", "the hull spec's 1.5 is lower"},
	}
	check := func(when string) {
		t.Helper()
		hh, err := l.Hull(ctx, serial)
		if err != nil {
			t.Fatal(err)
		}
		dmg, err := l.HullDamage(ctx, hh)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range dmg.Components {
			w := want[c.Name]
			if c.DesignFatigueFactor == nil || *c.DesignFatigueFactor != w.dff || c.MeanStress != w.ms || !strings.Contains(c.SettingsReason, w.reason) {
				t.Errorf("%s: %s: factor %v, mean stress %q, reason %q; want %v, %q, %q", when, c.Name, c.DesignFatigueFactor, c.MeanStress, c.SettingsReason, w.dff, w.ms, w.reason)
			}
			if c.Warnings == nil || c.TransferReason == "" || c.TransferDescription == "" {
				t.Errorf("%s: %s: warnings %v, transfer %q / %q", when, c.Name, c.Warnings, c.TransferReason, c.TransferDescription)
			}
		}
		dd, err := l.DiveDamageOf(ctx, d.ID)
		if err != nil {
			t.Fatal(err)
		}
		for name, w := range want {
			if c := dd[name]; c.DesignFatigueFactor == nil || *c.DesignFatigueFactor != w.dff || c.MeanStress != w.ms {
				t.Errorf("%s: dive damage of %s: %+v, want factor %v, %s", when, name, c, w.dff, w.ms)
			}
		}
	}
	check("dive logged")
	// The rings carry the same load: designer's factor −9.5, so stress
	// cycles (47.5, mean −71.25, 1) and 2 × (95, mean −47.5, 0.5), below
	// the knee of the titanium curve, N = 10^(18.50515 − 5·log10 S)
	// (configs/curves.yaml), written out here, not by calling the S-N code.
	// Fore ring: factor 10, no mean-stress correction. Aft ring: the
	// global 3 (its own 1.5 is overridden), goodman against the
	// compressive strength 895 MPa, S_eq = S / (1 − |S_m|/895).
	n := func(s float64) float64 { return math.Pow(10, 18.50515-5*math.Log10(s)) }
	good := func(s, m float64) float64 { return s / (1 - math.Abs(m)/895) }
	wantFwd := 10 * (1/n(47.5) + 1/n(95))                           // 2.494e-8
	wantAft := 3 * (1/n(good(47.5, -71.25)) + 1/n(good(95, -47.5))) // 9.871e-9
	dd, _ := l.DiveDamageOf(ctx, d.ID)
	if got := float64(dd["end-ring-fwd"].Cyclic); math.Abs(got-wantFwd) > 1e-9*wantFwd {
		t.Errorf("fore ring damage %g, want %g", got, wantFwd)
	}
	if got := float64(dd["end-ring-aft"].Cyclic); math.Abs(got-wantAft) > 1e-9*wantAft {
		t.Errorf("aft ring damage %g, want %g (the global factor, not the spec's lower one)", got, wantAft)
	}
	if _, err := l.Assess(ctx, ledger.AssessOptions{}); err != nil {
		t.Fatal(err)
	}
	check("re-assessed")
	if v, err := l.Verify(ctx); err != nil || !v.OK {
		t.Fatalf("verify %+v %v", v, err)
	}
}

// Thin isotropic cylinder of radius r and wall t under external pressure
// p, closed ends: σθ = −p·r/t, σz = −p·r/(2t), and by Hooke's law in plane
// stress εθ/p = (σθ − ν·σz)/(E·p) = −(r/t)(1 − ν/2)/E and
// εz/p = (σz − ν·σθ)/(E·p) = −(r/t)(1/2 − ν)/E. A calibration from these
// two compliances must give back σθ/p = −r/t.
const (
	calE  = 55.0 // GPa
	calNu = 0.30
	calRT = 0.545 / 0.09 // mean radius over wall of the example hull
)

func thinCylinderCompliance() (hoop, axial float64) {
	e := calE * 1e3 // MPa
	return -calRT * (1 - calNu/2) / e * 1e6, -calRT * (0.5 - calNu) / e * 1e6
}

// gaugeHull is the example hull with its laminate calibrated from its
// hoop and axial gauges.
func gaugeHull(t *testing.T, l *ledger.Ledger) {
	t.Helper()
	h := exampleSpec(t)
	e, nu := calE, calNu
	h.Components[0].Transfer = spec.Transfer{Basis: "gauge"}
	h.Components[0].ModulusGPa, h.Components[0].PoissonRatio = &e, &nu
	if _, err := l.AddHull(context.Background(), h, ledger.AddHullOptions{}); err != nil {
		t.Fatal(err)
	}
}

func calDive(start time.Time, depthM float64, gauges []synth.Gauge) synth.Dive {
	return synth.Dive{Start: start, SampleHz: 0.5, Latitude: 45, MaxDepthM: depthM, DescentMPS: 1, AscentMPS: 1, BottomS: 1800, SurfaceS: 300,
		Stops: 1, StopS: 120, DepthNoiseM: 0.02, Gauges: gauges}
}

func TestGaugeCalibrationFromProofTest(t *testing.T) {
	l := emptyLedger(t)
	ctx := context.Background()
	gaugeHull(t, l)
	lat := 45.0
	ch, ca := thinCylinderCompliance() // about −93.6 and −22.0 µε/MPa
	gauges := []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: ch, NoiseUE: 0.5}, {Name: "axial1", ComplianceUEPerMPa: ca, NoiseUE: 0.5}}
	lame := -2 * 0.59 * 0.59 / (0.59*0.59 - 0.5*0.5) // −7.097, inner-surface Lamé of the example hull

	// Before any proof test: Lamé, and the reason says why.
	s, _ := synthDive(t, calDive(time.Date(2026, 3, 20, 8, 0, 0, 0, time.UTC), 2000, gauges), 11)
	d0, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: s, Latitude: &lat})
	if err != nil {
		t.Fatal(err)
	}
	dd, err := l.DiveDamageOf(ctx, d0.ID)
	if err != nil {
		t.Fatal(err)
	}
	if c := dd["laminate"]; c.Basis != "lame" || math.Abs(c.Factor-lame) > 1e-9*math.Abs(lame) || !strings.Contains(c.TransferReason, "no proof test with strain") {
		t.Fatalf("before the proof test: %+v, want lame %v with the reason", c, lame)
	}

	// Adversarial: a failed proof test with samples calibrates nothing.
	proof := calDive(time.Date(2026, 3, 25, 8, 0, 0, 0, time.UTC), seawater.MPaToDepth(45, lat), gauges)
	s, _ = synthDive(t, proof, 12)
	if _, err := l.ProofTestWithSamples(ctx, serial, ledger.ProofTest{Result: "fail"}, ledger.LogRequest{Hull: serial, Samples: s, Latitude: &lat}); err != nil {
		t.Fatal(err)
	}
	// Adversarial: a passing proof test whose axial gauge gave nothing
	// cannot calibrate biaxially; a uniaxial E·εθ would understate the
	// hoop stress by 1 − ν/2 (15 %). Lamé stays, and the reason says so.
	proof = calDive(time.Date(2026, 3, 28, 8, 0, 0, 0, time.UTC), seawater.MPaToDepth(50, lat), gauges[:1])
	s, _ = synthDive(t, proof, 13)
	if _, err := l.ProofTestWithSamples(ctx, serial, ledger.ProofTest{Result: "pass"}, ledger.LogRequest{Hull: serial, Samples: s, Latitude: &lat}); err != nil {
		t.Fatal(err)
	}
	s, _ = synthDive(t, calDive(time.Date(2026, 3, 30, 8, 0, 0, 0, time.UTC), 2000, gauges), 14)
	d1, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: s, Latitude: &lat})
	if err != nil {
		t.Fatal(err)
	}
	dd, _ = l.DiveDamageOf(ctx, d1.ID)
	if c := dd["laminate"]; c.Basis != "lame" || !strings.Contains(c.TransferReason, "axial gauge axial1") {
		t.Fatalf("after a proof test without the axial gauge: %+v, want lame and the reason", c)
	}

	// The proof test with both gauges: the calibration is −r/t.
	proof = calDive(time.Date(2026, 4, 1, 8, 0, 0, 0, time.UTC), seawater.MPaToDepth(50, lat), gauges)
	s, _ = synthDive(t, proof, 15)
	pt, err := l.ProofTestWithSamples(ctx, serial, ledger.ProofTest{Result: "pass"}, ledger.LogRequest{Hull: serial, Samples: s, Latitude: &lat})
	if err != nil {
		t.Fatal(err)
	}
	if got := pt.Baseline["hoop1"]; math.Abs(got-ch) > 0.005*math.Abs(ch) {
		t.Fatalf("proof test hoop compliance %v, want %v", got, ch)
	}
	s, _ = synthDive(t, calDive(time.Date(2026, 4, 3, 8, 0, 0, 0, time.UTC), 3000, gauges), 16)
	d2, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: s, Latitude: &lat})
	if err != nil {
		t.Fatal(err)
	}
	want := -calRT // −6.056 MPa/MPa; Lamé would be −7.10, 17 % away
	dd, err = l.DiveDamageOf(ctx, d2.ID)
	if err != nil {
		t.Fatal(err)
	}
	if c := dd["laminate"]; c.Basis != "gauge" || math.Abs(c.Factor-want) > 0.01*math.Abs(want) {
		t.Fatalf("after the proof test: %+v, want gauge %v ± 1 %%", c, want)
	} else {
		t.Logf("calibrated hoop factor %.5g MPa/MPa, closed form %.5g", c.Factor, want)
	}
	if c := dd["end-ring-fwd"]; c.Basis != "designer" || c.Factor != -9.5 {
		t.Errorf("the end ring is not gauge-calibrated: %+v", c)
	}
	hh, err := l.Hull(ctx, serial)
	if err != nil {
		t.Fatal(err)
	}
	dmg, err := l.HullDamage(ctx, hh)
	if err != nil {
		t.Fatal(err)
	}
	lam := dmg.Components[0]
	if lam.Name != "laminate" || lam.Basis != "gauge" || math.Abs(lam.Factor-want) > 0.01*math.Abs(want) ||
		!strings.Contains(lam.TransferDescription, "hoop hoop1") || !strings.Contains(lam.TransferDescription, "axial axial1") ||
		!strings.Contains(lam.TransferDescription, "proof test of 2026-04-01") || !strings.Contains(lam.TransferDescription, "hoop direction governs") {
		t.Fatalf("hull damage laminate %+v", lam)
	}
	// Re-assessing applies the calibration to every dive, the ones logged
	// before the proof test included.
	res, err := l.Assess(ctx, ledger.AssessOptions{Hull: serial, Reason: "proof test recorded"})
	if err != nil {
		t.Fatal(err)
	}
	if c := res[0].Current.Components[0]; c.Basis != "gauge" || math.Abs(c.Factor-want) > 0.01*math.Abs(want) {
		t.Fatalf("re-assessment %+v", c)
	}
	for _, d := range []*ledger.Dive{d0, d1, d2} {
		dd, _ := l.DiveDamageOf(ctx, d.ID)
		if c := dd["laminate"]; c.Basis != "gauge" || math.Abs(c.Factor-want) > 0.01*math.Abs(want) {
			t.Errorf("dive %s after re-assessment: %+v", d.ID, c)
		}
	}
	if v, err := l.Verify(ctx); err != nil || !v.OK {
		t.Fatalf("verify %+v %v", v, err)
	}
}

// TestGaugeCalibrationSphere: a thin sphere of radius r and wall t has
// the membrane stress −p·r/(2t) in every direction, so each gauge reads
// ε/p = −(r/2t)(1 − ν)/E. With hoop gauges only, the meridional
// compliance is taken equal (the sphere's symmetry), and the calibration
// gives back −r/(2t); a uniaxial E·ε would give (1 − ν) of it, 30 % low.
func TestGaugeCalibrationSphere(t *testing.T) {
	l := emptyLedger(t)
	ctx := context.Background()
	e, nu := 30.0, 0.30
	a, w := 0.80, 0.07
	rt := (a + w/2) / w
	h := &spec.Hull{Serial: "EX-S1000-01", Name: "Example sphere", MaterialSystem: "glass/epoxy sphere", Shape: "sphere",
		InnerRadiusM: a, WallThicknessM: w, RatedDepthM: 1000, DesignPressureMPa: 11, ProofPressureMPa: 12.5, CollapsePressureMPa: 24,
		Components: []spec.Component{{Name: "laminate", Kind: "laminate_sphere", Transfer: spec.Transfer{Basis: "gauge"},
			Curve: "glass-epoxy-cc-illustrative", RuptureCurve: "glass-epoxy-rupture-compression-illustrative", ModulusGPa: &e, PoissonRatio: &nu}},
		Gauges: []spec.Gauge{{Name: "hoop1", Kind: "strain", Component: "laminate", Direction: "hoop"}}}
	if _, err := l.AddHull(ctx, h, ledger.AddHullOptions{}); err != nil {
		t.Fatal(err)
	}
	lat := 45.0
	c := -(rt / 2) * (1 - nu) / (e * 1e3) * 1e6
	gauges := []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: c, NoiseUE: 0.5}}
	s, _ := synthDive(t, calDive(time.Date(2026, 4, 1, 8, 0, 0, 0, time.UTC), seawater.MPaToDepth(12.5, lat), gauges), 21)
	if _, err := l.ProofTestWithSamples(ctx, h.Serial, ledger.ProofTest{Result: "pass"}, ledger.LogRequest{Hull: h.Serial, Samples: s, Latitude: &lat}); err != nil {
		t.Fatal(err)
	}
	s, _ = synthDive(t, calDive(time.Date(2026, 4, 3, 8, 0, 0, 0, time.UTC), 800, gauges), 22)
	d, err := l.LogDive(ctx, ledger.LogRequest{Hull: h.Serial, Samples: s, Latitude: &lat})
	if err != nil {
		t.Fatal(err)
	}
	dd, err := l.DiveDamageOf(ctx, d.ID)
	if err != nil {
		t.Fatal(err)
	}
	want := -rt / 2
	if got := dd["laminate"]; got.Basis != "gauge" || math.Abs(got.Factor-want) > 0.01*math.Abs(want) {
		t.Fatalf("sphere: %+v, want gauge %v ± 1 %%", got, want)
	}
}
