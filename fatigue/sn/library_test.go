package sn

import (
	"errors"
	"math"
	"os"
	"strings"
	"testing"
)

const minimalLibrary = `
curves:
  - name: d
    form: power_law
    material: steel
    mode: range
    environment: air
    basis: characteristic
    illustrative: false
    units: MPa
    source: DNV-RP-C203 (2016) Table 2-1, curve D in air
    power_law: {m1: 3, log_a1: 12.164, knee_cycles: 1e7, m2: 5, log_a2: 15.606}
  - name: cfrp
    form: log_linear
    material: carbon/epoxy
    mode: compression-compression
    environment: n/a
    basis: mean
    illustrative: true
    units: MPa
    source: test values
    note: illustrative, load qualified data
    log_linear: {b: 0.07, s_ult_mpa: 900}
    strengths: {tensile_mpa: 1400, compressive_mpa: 900, source: test values}
rupture:
  - name: cfrp-rupture
    material: carbon/epoxy
    side: compression
    basis: mean
    illustrative: true
    units: MPa
    time_units: h
    source: test values
    note: illustrative
    a: 28
    b: 30
    s_ult_mpa: 900
`

func TestParseLibrary(t *testing.T) {
	lib, err := ParseLibrary([]byte(minimalLibrary))
	if err != nil {
		t.Fatal(err)
	}
	curves, ruptures := lib.Names()
	if strings.Join(curves, ",") != "d,cfrp" || strings.Join(ruptures, ",") != "cfrp-rupture" {
		t.Fatalf("names %v %v", curves, ruptures)
	}
	d, err := lib.Curve("d")
	if err != nil {
		t.Fatal(err)
	}
	// DNV-RP-C203 (2016) Table 2-1, curve D in air: N(100 MPa) = 1.459·10⁶.
	if n := d.N(100); rel(n, 1.459e6) > 5e-4 {
		t.Errorf("N(100) = %v", n)
	}
	if _, err := lib.Curve("e"); !errors.Is(err, ErrUnknownCurve) {
		t.Errorf("unknown curve: %v", err)
	}
	r, err := lib.Rupture("cfrp-rupture")
	if err != nil || r.A != 28 {
		t.Errorf("rupture %v, %v", r, err)
	}
	if _, err := lib.Rupture("d"); !errors.Is(err, ErrUnknownCurve) {
		t.Errorf("S-N curve returned as rupture curve: %v", err)
	}
}

func TestParseLibraryErrors(t *testing.T) {
	tests := []struct {
		name    string
		old     string
		new     string
		wantErr string
	}{
		{"unknown field", "units: MPa\n    source: DNV", "units: MPa\n    colour: red\n    source: DNV", "colour"},
		// Adversarial first: a metallic curve that does not say whether it
		// is in air or in seawater could put an immersed part on the
		// in-air curve, which gives about 2.5 times the life at 100 MPa.
		{"missing environment", "    environment: air\n", "", "environment: must be stated"},
		{"unknown environment", "environment: air", "environment: seawater", "environment"},
		{"metal curve n/a", "environment: air", "environment: n/a", "range (metallic detail) curve must state"},
		{"missing illustrative", "    illustrative: false\n", "", "illustrative: must be stated"},
		{"units ksi", "units: MPa\n    source: DNV", "units: ksi\n    source: DNV", `"d": units`},
		{"no source", "source: DNV-RP-C203 (2016) Table 2-1, curve D in air", "source: ''", `"d": source`},
		{"no basis", "    basis: characteristic\n", "", `"d": basis`},
		{"negative slope", "m1: 3,", "m1: -3,", "power_law.m1"},
		{"knee discontinuity", "log_a2: 15.606", "log_a2: 15.9", "do not meet at the knee"},
		{"missing power_law", "    power_law: {m1: 3, log_a1: 12.164, knee_cycles: 1e7, m2: 5, log_a2: 15.606}\n", "", "power_law: block missing"},
		{"missing log_a1", "log_a1: 12.164, ", "", "m1 and log_a1 are required"},
		{"log-linear b zero", "b: 0.07", "b: 0", "log_linear.b"},
		{"log-linear negative strength", "s_ult_mpa: 900}", "s_ult_mpa: -900}", "s_ult_mpa"},
		{"duplicate name", "name: cfrp\n", "name: d\n", "name used twice"},
		{"rupture time units", "time_units: h", "time_units: s", "time_units"},
		{"rupture missing a", "    a: 28\n", "", "a, b and s_ult_mpa are required"},
		{"rupture side", "side: compression", "side: shear", "side"},
		{"NaN slope", "m1: 3,", "m1: .nan,", "power_law.m1"},
		{"strengths empty", "strengths: {tensile_mpa: 1400, compressive_mpa: 900, source: test values}", "strengths: {}", "strengths"},
		{"second document", "s_ult_mpa: 900\n`", "s_ult_mpa: 900\n---\ncurves: []\n`", "more than one"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			src := minimalLibrary + "`"
			if !strings.Contains(src, tc.old) {
				t.Fatalf("test fixture lacks %q", tc.old)
			}
			src = strings.Replace(src, tc.old, tc.new, 1)
			src = strings.TrimSuffix(src, "`")
			_, err := ParseLibrary([]byte(src))
			if err == nil || !strings.Contains(err.Error(), tc.wantErr) {
				t.Fatalf("error %v, want one containing %q", err, tc.wantErr)
			}
		})
	}
	for _, src := range []string{"", "~", "curves: []", "curves: 3", "{{{"} {
		if _, err := ParseLibrary([]byte(src)); err == nil {
			t.Errorf("%q accepted", src)
		}
	}
}

func TestShippedLibrary(t *testing.T) {
	data, err := os.ReadFile("../../configs/curves.yaml")
	if err != nil {
		t.Fatal(err)
	}
	lib, err := ParseLibrary(data)
	if err != nil {
		t.Fatal(err)
	}
	curves, ruptures := lib.Names()
	t.Logf("shipped S-N curves %v, stress-rupture curves %v", curves, ruptures)
	wantCurves := []string{"dnv-rp-c203-d-air", "dnv-rp-c203-d-seawater-cp", "dnv-rp-c203-d-free-corrosion", "ti-6al-4v-machined-illustrative",
		"carbon-epoxy-cc-illustrative", "glass-epoxy-cc-illustrative"}
	for _, n := range wantCurves {
		if _, err := lib.Curve(n); err != nil {
			t.Error(err)
		}
	}
	d, err := lib.Curve("dnv-rp-c203-d-air")
	if err != nil {
		t.Fatal(err)
	}
	if d.Illustrative || d.Basis != BasisCharacteristic || !strings.Contains(d.Source, "DNV-RP-C203") {
		t.Errorf("curve D metadata: illustrative %v, basis %v, source %q", d.Illustrative, d.Basis, d.Source)
	}
	// DNV-RP-C203 (2016) Table 2-1, curve D in air: N(100 MPa) = 1.459·10⁶;
	// fatigue limit 52.63 MPa at 10⁷; m1 = 3, log a1 = 12.164, m2 = 5,
	// log a2 = 15.606.
	if p := d.PowerLaw; p.M1 != 3 || p.LogA1 != 12.164 || p.M2 != 5 || p.LogA2 != 15.606 || p.KneeCycles != 1e7 {
		t.Errorf("curve D parameters %+v", p)
	}
	if n := d.N(100); rel(n, 1.459e6) > 5e-4 {
		t.Errorf("shipped curve D: N(100 MPa) = %v, want 1.459e6", n)
	}
	if s, _ := d.KneeStress(); math.Abs(s-52.63) > 0.02 {
		t.Errorf("shipped curve D: fatigue limit %v MPa, want 52.63", s)
	}
	// Every curve other than the DNV curves D is illustrative and says the
	// user must load qualified data; every curve states its environment.
	for _, c := range lib.Curves {
		if c.Environment == "" {
			t.Errorf("curve %q: environment not stated", c.Name)
		}
		if !strings.HasPrefix(c.Name, "dnv-rp-c203-d-") && (!c.Illustrative || !strings.Contains(c.Note, "qualified")) {
			t.Errorf("curve %q: illustrative %v, note %q", c.Name, c.Illustrative, c.Note)
		}
		if !c.Strengths.Present() {
			t.Errorf("curve %q has no strengths for the mean-stress correction", c.Name)
		}
	}
	for _, r := range lib.Ruptures {
		if !r.Illustrative || !strings.Contains(r.Note, "qualified") {
			t.Errorf("rupture curve %q: illustrative %v, note %q", r.Name, r.Illustrative, r.Note)
		}
	}
	// Common practice: glass/epoxy is much more sensitive to sustained load
	// than carbon/epoxy — at 60 % of each one's strength glass ruptures
	// orders of magnitude sooner.
	cr, err := lib.Rupture("carbon-epoxy-rupture-compression-illustrative")
	if err != nil {
		t.Fatal(err)
	}
	gr, err := lib.Rupture("glass-epoxy-rupture-compression-illustrative")
	if err != nil {
		t.Fatal(err)
	}
	if tc, tg := cr.Hours(-0.6*cr.SUltMPa), gr.Hours(-0.6*gr.SUltMPa); !(tg*1000 < tc) {
		t.Errorf("at 60 %%: carbon %v h, glass %v h; glass should be far shorter", tc, tg)
	}
	// Composite compression curves lie in the common-practice band.
	for name, band := range map[string][2]float64{
		"carbon-epoxy-cc-illustrative": {0.06, 0.08},
		"glass-epoxy-cc-illustrative":  {0.08, 0.10},
	} {
		c, _ := lib.Curve(name)
		if c.Mode != ModeCompression || c.LogLinear.B < band[0] || c.LogLinear.B > band[1] {
			t.Errorf("%s: mode %v, b %v outside %v", name, c.Mode, c.LogLinear.B, band)
		}
	}
}

// TestShippedSeawaterCurves checks the DNV-RP-C203 (2016) seawater curves D
// at their check points. The parameters are from memory (Table 2-2: curve
// D with cathodic protection, m1 = 3, log a1 = 11.764 for N ≤ 10⁶, m2 = 5,
// log a2 = 15.606 for N > 10⁶, fatigue limit 52.63 MPa at 10⁷; Table 2-4:
// curve D in free corrosion, m = 3, log a = 11.687, no fatigue limit).
func TestShippedSeawaterCurves(t *testing.T) {
	data, err := os.ReadFile("../../configs/curves.yaml")
	if err != nil {
		t.Fatal(err)
	}
	lib, err := ParseLibrary(data)
	if err != nil {
		t.Fatal(err)
	}
	air, _ := lib.Curve("dnv-rp-c203-d-air")
	cp, err := lib.Curve("dnv-rp-c203-d-seawater-cp")
	if err != nil {
		t.Fatal(err)
	}
	fc, err := lib.Curve("dnv-rp-c203-d-free-corrosion")
	if err != nil {
		t.Fatal(err)
	}
	// Adversarial first: at no stress range may a seawater curve give more
	// life than the curve in air, nor free corrosion more than cathodic
	// protection; and free corrosion has no fatigue limit.
	for i := -20; i <= 60; i++ {
		s := 10 * math.Pow(10, float64(i)/20) // 1 MPa to 10 GPa
		na, nc, nf := air.N(s), cp.N(s), fc.N(s)
		if !(nc <= na*(1+1e-12)) || !(nf <= nc*(1+1e-12)) {
			t.Fatalf("S = %.4g MPa: N air %.6g, cathodic protection %.6g, free corrosion %.6g: seawater must not outlive air", s, na, nc, nf)
		}
		if math.IsInf(nf, 1) {
			t.Fatalf("free corrosion: no damage at %.4g MPa, but the curve has no fatigue limit", s)
		}
	}
	if cp.Environment != EnvSeawaterCP || fc.Environment != EnvFreeCorrosion || air.Environment != EnvAir {
		t.Errorf("environments %q %q %q", air.Environment, cp.Environment, fc.Environment)
	}
	for _, c := range []Curve{cp, fc} {
		if c.Illustrative || c.Basis != BasisCharacteristic || !strings.Contains(c.Source, "from memory") {
			t.Errorf("%s: illustrative %v, basis %v, source %q must say from memory", c.Name, c.Illustrative, c.Basis, c.Source)
		}
	}
	tests := []struct {
		name string
		c    Curve
		s    float64
		want float64
	}{
		// Cathodic protection, branch 1: N(100) = 10^(11.764 − 3·2) = 5.808·10⁵.
		{"cp at 100 MPa", cp, 100, math.Pow(10, 5.764)},
		// Branch 2 below the knee stress 83.4 MPa: N(70) = 10^(15.606 − 5·log 70) = 2.401·10⁶.
		{"cp at 70 MPa", cp, 70, math.Pow(10, 15.606-5*math.Log10(70))},
		// Free corrosion: N(100) = 10^(11.687 − 6) = 4.864·10⁵; N(10) = 10^8.687.
		{"free corrosion at 100 MPa", fc, 100, math.Pow(10, 5.687)},
		{"free corrosion at 10 MPa", fc, 10, math.Pow(10, 8.687)},
	}
	for _, tc := range tests {
		if n := tc.c.N(tc.s); rel(n, tc.want) > 1e-9 {
			t.Errorf("%s: N = %.6g, want %.6g", tc.name, n, tc.want)
		}
	}
	if n := cp.N(100); rel(n, 5.808e5) > 5e-4 {
		t.Errorf("cp: N(100) = %v, want 5.808e5", n)
	}
	if n := fc.N(100); rel(n, 4.864e5) > 5e-4 {
		t.Errorf("free corrosion: N(100) = %v, want 4.864e5", n)
	}
	// Knee continuity at 10⁶: 10^(5.764/3) = 83.43 MPa and 10^(9.606/5) = 83.41 MPa (within 0.05 %).
	p := cp.PowerLaw
	if p.KneeCycles != 1e6 {
		t.Fatalf("cp knee at %v cycles, want 1e6", p.KneeCycles)
	}
	s1, s2 := p.kneeStresses()
	if math.Abs(s1-83.43) > 0.01 || math.Abs(s2-83.41) > 0.01 || math.Abs(s1/s2-1) > 5e-4 {
		t.Errorf("cp knee stresses %v and %v MPa, want 83.43 and 83.41", s1, s2)
	}
	// Fatigue limit at 10⁷ cycles: 52.63 MPa, as in air.
	if s, err := cp.StressAt(1e7); err != nil || math.Abs(s-52.63) > 0.02 {
		t.Errorf("cp stress at 1e7 = %v (%v), want 52.63", s, err)
	}
	if s, err := air.StressAt(1e7); err != nil || math.Abs(s-52.63) > 0.02 {
		t.Errorf("air stress at 1e7 = %v (%v), want 52.63", s, err)
	}
	if _, ok := fc.KneeStress(); ok {
		t.Error("free corrosion curve has a knee")
	}
}
