package sn

import (
	"math"
	"strings"
	"testing"

	"pgregory.net/rapid"
)

// curveD is DNV-RP-C203 (2016) Table 2-1, curve D in air: m1 = 3,
// log a1 = 12.164 for N ≤ 10⁷; m2 = 5, log a2 = 15.606 for N > 10⁷.
func curveD() Curve {
	return Curve{
		Name: "d", Form: FormPowerLaw, Material: "steel", Mode: ModeRange,
		Basis: BasisCharacteristic, Units: UnitsMPa, Source: "DNV-RP-C203 (2016) Table 2-1, curve D in air",
		PowerLaw:  PowerLaw{M1: 3, LogA1: 12.164, KneeCycles: 1e7, M2: 5, LogA2: 15.606},
		Strengths: Strengths{TensileMPa: 470, CompressiveMPa: 470, Source: "test value"},
	}
}

// laminate is an illustrative carbon/epoxy compression curve: b = 0.07,
// S_ult = 900 MPa (common practice, from memory; test values only).
func laminate() Curve {
	return Curve{
		Name: "cfrp", Form: FormLogLinear, Material: "carbon/epoxy", Mode: ModeCompression,
		Basis: BasisMean, Illustrative: true, Units: UnitsMPa, Source: "test values", Note: "illustrative; load qualified data",
		LogLinear: LogLinear{B: 0.07, SUltMPa: 900},
		Strengths: Strengths{TensileMPa: 1400, CompressiveMPa: 900, Source: "test values"},
	}
}

func rel(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

func TestDNVCurveD(t *testing.T) {
	c := curveD()
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name    string
		s, want float64
		tol     float64
	}{
		// DNV-RP-C203 (2016) Table 2-1, curve D in air: at 100 MPa
		// N = 10^(12.164 − 3·2) = 10^6.164 = 1.459·10⁶ (published).
		{"100 MPa, published", 100, 1.459e6, 5e-4},
		// 200 MPa: 10^(12.164 − 3·2.30103) = 10^5.26091 = 1.8235·10⁵.
		{"200 MPa, branch 1", 200, 1.8235e5, 5e-4},
		// 30 MPa: 10^(15.606 − 5·1.477121) = 10^8.220394 = 1.6611·10⁸.
		{"30 MPa, branch 2", 30, 1.6611e8, 5e-4},
		// At the published fatigue limit 52.63 MPa the curve is at the
		// knee, 10⁷ cycles (DNV-RP-C203 (2016) Table 2-1).
		{"52.63 MPa, knee", 52.63, 1e7, 3e-3},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := c.N(tc.s); rel(got, tc.want) > tc.tol {
				t.Errorf("N(%v MPa) = %.6g, want %.6g", tc.s, got, tc.want)
			}
		})
	}
	// Fatigue limit at 10⁷: DNV-RP-C203 (2016) Table 2-1 prints 52.63 MPa;
	// branch 1 gives 10^((12.164 − 7)/3) = 52.64 MPa, branch 2
	// 10^((15.606 − 7)/5) = 52.63 MPa: the published log a are rounded.
	ks, ok := c.KneeStress()
	if !ok || math.Abs(ks-52.63) > 0.02 {
		t.Errorf("knee stress %v MPa, want 52.63", ks)
	}
	s, err := c.StressAt(1e7)
	if err != nil || math.Abs(s-52.63) > 0.02 {
		t.Errorf("stress at 1e7 = %v, %v; want 52.63 MPa", s, err)
	}
	for _, s := range []float64{0, -10} {
		if n := c.N(s); !math.IsInf(n, 1) {
			t.Errorf("N(%v) = %v, want +Inf", s, n)
		}
	}
}

func TestKneeGapIsMonotonic(t *testing.T) {
	// Curve D's branches leave a gap at the knee from rounding: between
	// 52.626 MPa (branch 2 at 10⁷) and 52.642 MPa (branch 1 at 10⁷) N is
	// held at 10⁷ so it never rises with S.
	c := curveD()
	prev := math.Inf(1)
	for s := 52.60; s <= 52.67; s += 0.001 {
		n := c.N(s)
		if n > prev {
			t.Fatalf("N rises at %v MPa: %v > %v", s, n, prev)
		}
		prev = n
	}
	if n := c.N(52.635); n != 1e7 {
		t.Errorf("N in the knee gap = %v, want 1e7", n)
	}
}

func TestCutoff(t *testing.T) {
	c := curveD()
	c.PowerLaw.CutoffMPa = 52.63
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	if n := c.N(52.62); !math.IsInf(n, 1) {
		t.Errorf("below the cut-off N = %v, want +Inf", n)
	}
	if n := c.N(52.63); math.IsInf(n, 1) {
		t.Error("at the cut-off N is infinite")
	}
}

func TestLogLinear(t *testing.T) {
	c := laminate()
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name    string
		s, want float64
	}{
		// S/S_ult = 0.5: N = 10^(0.5/0.07) = 10^7.142857 = 1.38950·10⁷.
		{"half of S_ult", 450, 1.38950e7},
		// S/S_ult = 0.7: N = 10^(0.3/0.07) = 10^4.285714 = 1.93070·10⁴.
		{"0.7 of S_ult", 630, 1.93070e4},
		// At or above S_ult the cycle fails on its first reversal: 0.5.
		{"at S_ult", 900, 0.5},
		{"above S_ult", 1000, 0.5},
		{"zero", 0, math.Inf(1)},
		{"negative", -5, math.Inf(1)},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := c.N(tc.s)
			if math.IsInf(tc.want, 1) {
				if !math.IsInf(got, 1) {
					t.Errorf("N(%v) = %v, want +Inf", tc.s, got)
				}
				return
			}
			if rel(got, tc.want) > 1e-5 {
				t.Errorf("N(%v) = %.6g, want %.6g", tc.s, got, tc.want)
			}
		})
	}
	// Inverse: S at 10⁶ = 900·(1 − 0.07·6) = 900·0.58 = 522 MPa.
	if s, err := c.StressAt(1e6); err != nil || rel(s, 522) > 1e-12 {
		t.Errorf("StressAt(1e6) = %v, %v; want 522", s, err)
	}
}

func TestEquivalentAmplitude(t *testing.T) {
	st := Strengths{TensileMPa: 1400, CompressiveMPa: 900, Source: "test"}
	tests := []struct {
		name      string
		amp, mean float64
		want      float64
	}{
		// Compressive mean: 50/(1 − 300/900) = 50/(2/3) = 75.
		{"compressive mean", 50, -300, 75},
		// Tensile mean: 50/(1 − 350/1400) = 50/0.75 = 66.667.
		{"tensile mean", 50, 350, 50 / 0.75},
		{"zero mean", 50, 0, 50},
		// |S_m| = S_u: static failure, +Inf.
		{"mean at compressive strength", 50, -900, math.Inf(1)},
		{"mean beyond tensile strength", 0, 1500, math.Inf(1)},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := EquivalentAmplitude(tc.amp, tc.mean, st)
			if err != nil {
				t.Fatal(err)
			}
			if math.IsInf(tc.want, 1) != math.IsInf(got, 1) || (!math.IsInf(got, 1) && rel(got, tc.want) > 1e-12) {
				t.Errorf("got %v, want %v", got, tc.want)
			}
		})
	}
	for _, bad := range []struct {
		name      string
		amp, mean float64
		st        Strengths
	}{
		{"negative amplitude", -1, 0, st},
		{"NaN mean", 1, math.NaN(), st},
		{"no strengths", 1, -10, Strengths{}},
		{"no source", 1, -10, Strengths{TensileMPa: 1, CompressiveMPa: 1}},
	} {
		if _, err := EquivalentAmplitude(bad.amp, bad.mean, bad.st); err == nil {
			t.Errorf("%s accepted", bad.name)
		}
	}
}

func TestEquivalentPerForm(t *testing.T) {
	d := curveD()
	cf := laminate()
	r10 := laminate()
	r10.LogLinear.ReferenceRatio = 0.1
	tests := []struct {
		name      string
		c         Curve
		rng, mean float64
		ms        MeanStress
		want      float64
	}{
		// Power law, none: the range itself.
		{"power law none", d, 100, -235, MeanStressNone, 100},
		// Power law, goodman: S_a,eq = 50/(1 − 235/470) = 100; range 200.
		{"power law goodman", d, 100, -235, MeanStressGoodman, 200},
		// Log-linear, none: peak magnitude |−400| + 100/2 = 450.
		{"log-linear none", cf, 100, -400, MeanStressNone, 450},
		// Log-linear, goodman, the reference cycle 0 → −600 (range 600,
		// mean −300) maps onto itself: S_a,eq = 300/(1 − 300/900) = 450;
		// P = 2·450/(1 + 450/900) = 900/1.5 = 600.
		{"log-linear goodman, reference cycle", cf, 600, -300, MeanStressGoodman, 600},
		// Small cycle at depth, range 100 about −400: S_a,eq =
		// 50/(1 − 400/900) = 90; P = 180/(1 + 90/900) = 163.636…
		{"log-linear goodman, small cycle at depth", cf, 100, -400, MeanStressGoodman, 180 / 1.1},
		// Reference ratio 0.1 (R = 10): the cycle −60 → −600 (range 540,
		// mean −330) maps onto itself: S_a,eq = 270/(1 − 330/900) =
		// 426.316; P = 2·426.316/(0.9 + 426.316·1.1/900) = 600.
		{"log-linear goodman, R = 10 reference", r10, 540, -330, MeanStressGoodman, 600},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := tc.c.Equivalent(tc.rng, tc.mean, tc.ms)
			if err != nil {
				t.Fatal(err)
			}
			if rel(got, tc.want) > 1e-9 {
				t.Errorf("equivalent %v, want %v", got, tc.want)
			}
		})
	}
	// Goodman at a mean beyond the strength: N = 0.
	n, err := cf.CyclesToFailure(10, -950, MeanStressGoodman)
	if err != nil || n != 0 {
		t.Errorf("N = %v, %v; want 0 beyond the static strength", n, err)
	}
	// Power law goodman at 200 MPa equivalent: N = 1.8235·10⁵ (see above).
	n, _ = d.CyclesToFailure(100, -235, MeanStressGoodman)
	if rel(n, 1.8235e5) > 5e-4 {
		t.Errorf("N = %v, want 1.8235e5", n)
	}
	noStrength := curveD()
	noStrength.Strengths = Strengths{}
	if _, err := noStrength.Equivalent(100, -10, MeanStressGoodman); err == nil || !strings.Contains(err.Error(), "strengths") {
		t.Errorf("goodman without strengths: %v", err)
	}
	if _, err := d.Equivalent(100, 0, "gerber"); err == nil {
		t.Error("unknown correction accepted")
	}
	if _, err := d.Equivalent(-1, 0, MeanStressNone); err == nil {
		t.Error("negative range accepted")
	}
}

func TestMonotonicProperty(t *testing.T) {
	curves := []Curve{curveD(), laminate()}
	single := curveD()
	single.PowerLaw = PowerLaw{M1: 4, LogA1: 15}
	curves = append(curves, single)
	rapid.Check(t, func(t *rapid.T) {
		c := curves[rapid.IntRange(0, len(curves)-1).Draw(t, "curve")]
		s1 := rapid.Float64Range(0.01, 2000).Draw(t, "s1")
		s2 := rapid.Float64Range(0.01, 2000).Draw(t, "s2")
		if s1 > s2 {
			s1, s2 = s2, s1
		}
		if c.N(s1) < c.N(s2) {
			t.Fatalf("%s: N(%v) = %v < N(%v) = %v", c.Name, s1, c.N(s1), s2, c.N(s2))
		}
		mean := rapid.Float64Range(-2000, 2000).Draw(t, "mean")
		for _, ms := range []MeanStress{MeanStressNone, MeanStressGoodman} {
			n, err := c.CyclesToFailure(s1, mean, ms)
			if err != nil || math.IsNaN(n) || n < 0 {
				t.Fatalf("%s %s: N = %v, %v", c.Name, ms, n, err)
			}
		}
	})
}

func TestCurveValidation(t *testing.T) {
	tests := []struct {
		name  string
		edit  func(*Curve)
		field string
	}{
		{"negative m1", func(c *Curve) { c.PowerLaw.M1 = -3 }, "m1"},
		{"zero m2", func(c *Curve) { c.PowerLaw.M2 = 0 }, "m2"},
		{"NaN log a1", func(c *Curve) { c.PowerLaw.LogA1 = math.NaN() }, "log_a1"},
		// log a2 = 15.7 moves branch 2's knee stress to
		// 10^(8.7/5) = 54.95 MPa, 4.4 % away from branch 1's 52.64 MPa.
		{"knee discontinuity", func(c *Curve) { c.PowerLaw.LogA2 = 15.7 }, "do not meet at the knee"},
		{"m2 without knee", func(c *Curve) { c.PowerLaw.KneeCycles = 0 }, "without knee"},
		{"negative cut-off", func(c *Curve) { c.PowerLaw.CutoffMPa = -1 }, "cutoff"},
		{"unknown units", func(c *Curve) { c.Units = "ksi" }, "units"},
		{"empty source", func(c *Curve) { c.Source = " " }, "source"},
		{"no basis", func(c *Curve) { c.Basis = "" }, "basis"},
		{"unknown form", func(c *Curve) { c.Form = "spline" }, "form"},
		{"no material", func(c *Curve) { c.Material = "" }, "material"},
		{"illustrative without note", func(c *Curve) { c.Illustrative = true }, "note"},
		{"negative strength", func(c *Curve) { c.Strengths.TensileMPa = -470 }, "tensile"},
		{"mixed blocks", func(c *Curve) { c.LogLinear.B = 0.1 }, "log_linear"},
		{"empty name", func(c *Curve) { c.Name = "" }, "name"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := curveD()
			tc.edit(&c)
			err := c.Validate()
			if err == nil || !strings.Contains(err.Error(), tc.field) || !strings.Contains(err.Error(), `"`+c.Name+`"`) {
				t.Fatalf("error %v, want one naming the curve and %q", err, tc.field)
			}
		})
	}
	ll := []struct {
		name  string
		edit  func(*Curve)
		field string
	}{
		{"zero b", func(c *Curve) { c.LogLinear.B = 0 }, "log_linear.b"},
		{"b of 1", func(c *Curve) { c.LogLinear.B = 1 }, "log_linear.b"},
		{"zero S_ult", func(c *Curve) { c.LogLinear.SUltMPa = 0 }, "s_ult_mpa"},
		{"reference ratio 1", func(c *Curve) { c.LogLinear.ReferenceRatio = 1 }, "reference_ratio"},
		{"range mode", func(c *Curve) { c.Mode = ModeRange }, "mode"},
	}
	for _, tc := range ll {
		t.Run("log-linear "+tc.name, func(t *testing.T) {
			c := laminate()
			tc.edit(&c)
			if err := c.Validate(); err == nil || !strings.Contains(err.Error(), tc.field) {
				t.Fatalf("error %v, want one naming %q", err, tc.field)
			}
		})
	}
}

func TestDesignFatigueFactor(t *testing.T) {
	// DFF 3 on N = 1.459·10⁶: 1.459e6/3 = 486 333.3 allowable cycles.
	n, err := AllowableCycles(1.459e6, 3)
	if err != nil || rel(n, 486333.333333) > 1e-9 {
		t.Errorf("allowable %v, %v", n, err)
	}
	for _, dff := range []float64{0.5, 0, -1, math.NaN(), math.Inf(1)} {
		if _, err := AllowableCycles(1e6, dff); err == nil {
			t.Errorf("DFF %v accepted", dff)
		}
	}
	if n, err := AllowableCycles(math.Inf(1), 2); err != nil || !math.IsInf(n, 1) {
		t.Errorf("infinite life / DFF = %v, %v", n, err)
	}
}

func TestRupture(t *testing.T) {
	// Illustrative glass/epoxy compression curve: A = 12, B = 14,
	// σ_ult = 600 MPa (common practice; test values only).
	r := Rupture{Name: "gfrp", Material: "glass/epoxy", Side: SideCompression, Basis: BasisMean,
		Illustrative: true, Units: UnitsMPa, TimeUnits: TimeUnitsHours, Source: "test", Note: "illustrative",
		A: 12, B: 14, SUltMPa: 600}
	if err := r.Validate(); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name      string
		stress    float64
		wantHours float64
	}{
		// σ/σ_ult = 0.5: 10^(12 − 7) = 10⁵ h.
		{"half of ultimate", -300, 1e5},
		// σ/σ_ult = 0.6: 10^(12 − 8.4) = 10^3.6 = 3981.07 h.
		{"0.6 of ultimate", -360, 3981.0717},
		{"at ultimate", -600, 0},
		{"tensile stress on a compression curve", 300, math.Inf(1)},
		{"zero", 0, math.Inf(1)},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := r.Hours(tc.stress)
			if math.IsInf(tc.wantHours, 1) || tc.wantHours == 0 {
				if got != tc.wantHours {
					t.Errorf("t_r = %v, want %v", got, tc.wantHours)
				}
				return
			}
			if rel(got, tc.wantHours) > 1e-6 {
				t.Errorf("t_r = %v h, want %v", got, tc.wantHours)
			}
		})
	}
	bad := []struct {
		name string
		edit func(*Rupture)
	}{
		{"zero B", func(r *Rupture) { r.B = 0 }},
		{"minutes", func(r *Rupture) { r.TimeUnits = "min" }},
		{"no side", func(r *Rupture) { r.Side = "" }},
		{"zero strength", func(r *Rupture) { r.SUltMPa = 0 }},
		{"infinite A", func(r *Rupture) { r.A = math.Inf(1) }},
		{"no source", func(r *Rupture) { r.Source = "" }},
	}
	for _, tc := range bad {
		c := r
		tc.edit(&c)
		if err := c.Validate(); err == nil || !strings.Contains(err.Error(), `"gfrp"`) {
			t.Errorf("%s: error %v", tc.name, err)
		}
	}
}

func TestParseMeanStress(t *testing.T) {
	for _, s := range []string{"none", "goodman", " goodman"} {
		if _, err := ParseMeanStress(s); err != nil {
			t.Errorf("%q: %v", s, err)
		}
	}
	if _, err := ParseMeanStress("gerber"); err == nil {
		t.Error("gerber accepted")
	}
}
