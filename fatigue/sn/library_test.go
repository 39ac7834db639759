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
    basis: characteristic
    illustrative: false
    units: MPa
    source: DNV-RP-C203 (2016) Table 2-1, curve D in air
    power_law: {m1: 3, log_a1: 12.164, knee_cycles: 1e7, m2: 5, log_a2: 15.606}
  - name: cfrp
    form: log_linear
    material: carbon/epoxy
    mode: compression-compression
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
	wantCurves := []string{"dnv-rp-c203-d-air", "ti-6al-4v-machined-illustrative",
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
	// Every curve other than D is illustrative and says the user must load
	// qualified data.
	for _, c := range lib.Curves {
		if c.Name != d.Name && (!c.Illustrative || !strings.Contains(c.Note, "qualified")) {
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
