package damage

import (
	"math"
	"strings"
	"testing"

	"hulltally/fatigue/sn"
)

// curveD is DNV-RP-C203 (2016) Table 2-1, curve D in air: m1 = 3,
// log a1 = 12.164 (N ≤ 10⁷), m2 = 5, log a2 = 15.606 (N > 10⁷).
func curveD() sn.Curve {
	return sn.Curve{
		Name: "dnv-d-air", Form: sn.FormPowerLaw, Material: "steel", Mode: sn.ModeRange,
		Basis: sn.BasisCharacteristic, Units: sn.UnitsMPa, Source: "DNV-RP-C203 (2016) Table 2-1, curve D in air",
		PowerLaw:  sn.PowerLaw{M1: 3, LogA1: 12.164, KneeCycles: 1e7, M2: 5, LogA2: 15.606},
		Strengths: sn.Strengths{TensileMPa: 470, CompressiveMPa: 470, Source: "test value"},
	}
}

// laminate is an illustrative carbon/epoxy compression curve, b = 0.07,
// S_ult = 900 MPa (common practice, from memory; test values only).
func laminate() sn.Curve {
	return sn.Curve{
		Name: "cfrp-cc", Form: sn.FormLogLinear, Material: "carbon/epoxy", Mode: sn.ModeCompression,
		Basis: sn.BasisMean, Illustrative: true, Units: sn.UnitsMPa, Source: "test values", Note: "illustrative",
		LogLinear: sn.LogLinear{B: 0.07, SUltMPa: 900},
		Strengths: sn.Strengths{TensileMPa: 1400, CompressiveMPa: 900, Source: "test values"},
	}
}

// glassRupture is an illustrative glass/epoxy stress-rupture curve,
// log10 t_r[h] = 12 − 14·σ/600 (common practice; test values only).
func glassRupture() sn.Rupture {
	return sn.Rupture{Name: "gfrp-rupture", Material: "glass/epoxy", Side: sn.SideCompression, Basis: sn.BasisMean,
		Illustrative: true, Units: sn.UnitsMPa, TimeUnits: sn.TimeUnitsHours, Source: "test values", Note: "illustrative",
		A: 12, B: 14, SUltMPa: 600}
}

func rel(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

func TestMiner(t *testing.T) {
	tests := []struct {
		name   string
		curve  sn.Curve
		ms     sn.MeanStress
		dff    float64
		cycles []Cycle
		want   float64
	}{
		// DNV-RP-C203 (2016) Table 2-1 curve D: N(100 MPa) = 1.459·10⁶, so
		// 10 cycles give 10/1.459e6 = 6.8549·10⁻⁶ (10^−5.164 exactly).
		{"curve D, 10 cycles of 100 MPa", curveD(), sn.MeanStressNone, 1,
			[]Cycle{{Range: 100, Mean: -50, Count: 10}}, 6.85488e-6},
		// The same with DFF 3: 3 × 6.85488e-6 = 2.05646·10⁻⁵.
		{"curve D, DFF 3", curveD(), sn.MeanStressNone, 3,
			[]Cycle{{Range: 100, Mean: -50, Count: 10}}, 2.05646e-5},
		// Both branches and a half cycle:
		//   1 at 200 MPa:    N = 10^(12.164 − 3·2.30103) = 1.82352e5 → 5.48391e-6
		//   0.5 at 100 MPa:  0.5/1.45881e6                          → 3.42744e-7
		//   1000 at 30 MPa:  N = 10^(15.606 − 5·1.47712) = 1.66109e8 → 6.02014e-6
		//   a zero range adds nothing.
		//   Sum 5.48391e-6 + 3.42744e-7 + 6.02014e-6 = 1.18468·10⁻⁵.
		{"curve D, both branches", curveD(), sn.MeanStressNone, 1,
			[]Cycle{{200, -100, 1}, {100, -50, 0.5}, {30, -300, 1000}, {0, -400, 3}}, 1.18468e-5},
		// Goodman on curve D: S_a,eq = 50/(1 − 235/470) = 100, so the range
		// 100 counts as 200: 1/1.82352e5 = 5.48391·10⁻⁶.
		{"curve D, goodman", curveD(), sn.MeanStressGoodman, 1,
			[]Cycle{{100, -235, 1}}, 5.48391e-6},
		// Laminate, one dive 0 → −450 MPa (range 450, mean −225): peak
		// 450 = S_ult/2, N = 10^(0.5/0.07) = 1.38950e7, D = 7.19686·10⁻⁸.
		{"laminate, one dive cycle", laminate(), sn.MeanStressNone, 1,
			[]Cycle{{450, -225, 1}}, 7.19686e-8},
		// Goodman maps that reference cycle onto itself: same damage.
		{"laminate, goodman reference cycle", laminate(), sn.MeanStressGoodman, 1,
			[]Cycle{{450, -225, 1}}, 7.19686e-8},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := Miner(tc.cycles, tc.curve, tc.ms, tc.dff)
			if err != nil {
				t.Fatal(err)
			}
			if rel(got.Damage, tc.want) > 1e-5 {
				t.Errorf("D = %.6g, want %.6g", got.Damage, tc.want)
			}
			if rel(got.Damage, got.Unfactored*tc.dff) > 1e-15 || got.DFF != tc.dff || got.Curve != tc.curve.Name || got.MeanStress != tc.ms {
				t.Errorf("result bookkeeping %+v", got)
			}
		})
	}
}

func TestMinerNoDamage(t *testing.T) {
	// A cut-off at the fatigue limit 52.63 MPa (DNV-RP-C203 (2016) Table
	// 2-1, curve D): cycles of 40 MPa add nothing, and neither does a
	// zero count.
	c := curveD()
	c.PowerLaw.CutoffMPa = 52.63
	got, err := Miner([]Cycle{{40, -20, 1e6}, {100, -50, 0}}, c, sn.MeanStressNone, 2)
	if err != nil {
		t.Fatal(err)
	}
	if got.Damage != 0 || got.Damaging != 0 || got.Cycles != 1e6 {
		t.Errorf("got %+v, want no damage", got)
	}
	got, err = Miner(nil, curveD(), sn.MeanStressNone, 1)
	if err != nil || got.Damage != 0 {
		t.Errorf("no cycles: %+v, %v", got, err)
	}
}

func TestMinerOverload(t *testing.T) {
	// Goodman with a mean beyond the compressive strength: N = 0, damage
	// +Inf, never a finite number in the hull's favour.
	got, err := Miner([]Cycle{{10, -950, 0.5}, {100, -50, 1}}, laminate(), sn.MeanStressGoodman, 1)
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsInf(got.Damage, 1) || got.Overload != 0.5 {
		t.Errorf("got %+v, want +Inf damage and 0.5 overload cycles", got)
	}
	// Without correction a peak at S_ult gives N = 0.5: a half cycle
	// does damage 0.5/0.5 = 1.
	got, err = Miner([]Cycle{{900, -450, 0.5}}, laminate(), sn.MeanStressNone, 1)
	if err != nil || got.Damage != 1 || got.Overload != 0.5 {
		t.Errorf("got %+v, %v; want damage 1", got, err)
	}
}

func TestMinerErrors(t *testing.T) {
	bad := curveD()
	bad.PowerLaw.M1 = -3
	tests := []struct {
		name   string
		cycles []Cycle
		curve  sn.Curve
		ms     sn.MeanStress
		dff    float64
		want   string
	}{
		{"negative range", []Cycle{{-1, 0, 1}}, curveD(), sn.MeanStressNone, 1, "cycle 1: range"},
		{"NaN mean", []Cycle{{1, 0, 1}, {1, math.NaN(), 1}}, curveD(), sn.MeanStressNone, 1, "cycle 2: mean"},
		{"negative count", []Cycle{{1, 0, -1}}, curveD(), sn.MeanStressNone, 1, "count"},
		{"DFF below 1", nil, curveD(), sn.MeanStressNone, 0.5, "design fatigue factor"},
		{"unknown correction", nil, curveD(), "gerber", 1, "mean-stress"},
		{"invalid curve", nil, bad, sn.MeanStressNone, 1, "m1"},
		{"goodman without strengths", []Cycle{{1, -1, 1}}, func() sn.Curve { c := curveD(); c.Strengths = sn.Strengths{}; return c }(), sn.MeanStressGoodman, 1, "strengths"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Miner(tc.cycles, tc.curve, tc.ms, tc.dff)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %v, want %q", err, tc.want)
			}
		})
	}
}

func TestRobinsonConstantStress(t *testing.T) {
	r := glassRupture()
	// σ = −300 MPa = 0.5 σ_ult: t_r = 10^(12 − 14·0.5) = 10⁵ h. Ten hours
	// (36 000 s) at it: D_t = 10/10⁵ = 1·10⁻⁴.
	got, err := Robinson([]Hold{{Stress: -300, Duration: 36000}}, r)
	if err != nil {
		t.Fatal(err)
	}
	if rel(got.Damage, 1e-4) > 1e-12 || got.Seconds != 36000 {
		t.Errorf("got %+v, want damage 1e-4", got)
	}
	// The same history sampled every 600 s: 61 samples, 60 intervals.
	var samples []Sample
	for i := 0; i <= 60; i++ {
		samples = append(samples, Sample{Time: float64(i) * 600, Stress: -300})
	}
	got, err = RobinsonSamples(samples, r)
	if err != nil {
		t.Fatal(err)
	}
	if rel(got.Damage, 1e-4) > 1e-12 {
		t.Errorf("sampled: damage %v, want 1e-4", got.Damage)
	}
}

func TestRobinsonSides(t *testing.T) {
	r := glassRupture()
	tests := []struct {
		name  string
		holds []Hold
		want  float64
	}{
		// Tensile stress on a compression curve adds nothing.
		{"tension", []Hold{{300, 36000}}, 0},
		{"zero stress", []Hold{{0, 36000}}, 0},
		{"zero time", []Hold{{-300, 0}}, 0},
		// Two holds: 10 h at 0.5 σ_ult (10⁵ h) and 1 h at 0.6 σ_ult
		// (10^(12 − 8.4) = 3981.07 h): 1e-4 + 1/3981.07 = 3.51189·10⁻⁴.
		{"two holds", []Hold{{-300, 36000}, {-360, 3600}}, 1e-4 + 1/3981.0717055},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := Robinson(tc.holds, r)
			if err != nil {
				t.Fatal(err)
			}
			if (tc.want == 0 && got.Damage != 0) || (tc.want != 0 && rel(got.Damage, tc.want) > 1e-9) {
				t.Errorf("D_t = %v, want %v", got.Damage, tc.want)
			}
		})
	}
	got, err := Robinson([]Hold{{-600, 1}}, r)
	if err != nil || !math.IsInf(got.Damage, 1) || got.Overload != 1 {
		t.Errorf("at σ_ult: %+v, %v; want +Inf", got, err)
	}
}

func TestHoldsFromSamples(t *testing.T) {
	r := glassRupture()
	// Each interval takes its more damaging end: descent 0 → −300 over
	// 100 s counts 100 s at −300; hold 1000 s at −300; ascent likewise.
	h, err := HoldsFromSamples([]Sample{{0, 0}, {100, -300}, {1100, -300}, {1200, 0}}, r)
	if err != nil {
		t.Fatal(err)
	}
	want := []Hold{{-300, 100}, {-300, 1000}, {-300, 100}}
	if len(h) != len(want) {
		t.Fatalf("holds %v", h)
	}
	for i := range want {
		if h[i] != want[i] {
			t.Errorf("hold %d = %v, want %v", i, h[i], want[i])
		}
	}
	for _, bad := range []struct {
		name string
		s    []Sample
	}{
		{"time backwards", []Sample{{10, -1}, {5, -1}}},
		{"duplicate time", []Sample{{10, -1}, {10, -2}}},
		{"NaN stress", []Sample{{0, math.NaN()}}},
		{"infinite time", []Sample{{0, 0}, {math.Inf(1), 0}}},
	} {
		if _, err := HoldsFromSamples(bad.s, r); err == nil {
			t.Errorf("%s accepted", bad.name)
		}
	}
	if _, err := Robinson([]Hold{{-1, -5}}, r); err == nil {
		t.Error("negative duration accepted")
	}
}

func TestRoundUp(t *testing.T) {
	tests := []struct {
		x    float64
		d    int
		want float64
	}{
		{0.12341, 3, 0.124},
		{0.123, 3, 0.123},
		{1e-9, 4, 0.0001},
		{0, 2, 0},
		{math.Inf(1), 2, math.Inf(1)},
	}
	for _, tc := range tests {
		got, err := RoundUp(tc.x, tc.d)
		if err != nil || got != tc.want || got < tc.x {
			t.Errorf("RoundUp(%v, %d) = %v, %v; want %v", tc.x, tc.d, got, err, tc.want)
		}
	}
	if _, err := RoundUp(math.NaN(), 2); err == nil {
		t.Error("NaN accepted")
	}
}
