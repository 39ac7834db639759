package spec

import (
	"math"
	"os"
	"strings"
	"testing"
)

func TestExampleParses(t *testing.T) {
	data, err := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		t.Fatal(err)
	}
	h, err := Parse(data)
	if err != nil {
		t.Fatal(err)
	}
	if h.Serial != "EX-C4000-01" || h.RatedDepthM != 4000 || len(h.Components) != 2 {
		t.Fatalf("parsed %+v", h)
	}
	if g := h.StrainGauges(); len(g) != 2 || g[0] != "hoop1" {
		t.Fatalf("strain gauges %v", g)
	}
	if c := h.AEChannels(); len(c) != 2 || c[1] != 2 {
		t.Fatalf("channels %v", c)
	}
}

func TestInvalid(t *testing.T) {
	base, err := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name, from, to, want string
	}{
		// Adversarial first: geometry that drives the arithmetic to
		// underflow, overflow or a vanishing stress.
		{"wall 1e-300 m", "wall_thickness_m: 0.09", "wall_thickness_m: 1e-300", "wall_thickness_m must lie in [0.001, 10]"},
		{"wall below 1 mm", "wall_thickness_m: 0.09", "wall_thickness_m: 0.0009", "wall_thickness_m must lie"},
		{"wall that overflows the radius sum", "wall_thickness_m: 0.09", "wall_thickness_m: 1.7e308", "wall_thickness_m must lie"},
		{"infinite wall", "wall_thickness_m: 0.09", "wall_thickness_m: .inf", "wall_thickness_m must be a positive"},
		{"NaN wall", "wall_thickness_m: 0.09", "wall_thickness_m: .nan", "wall_thickness_m must be a positive"},
		{"radius below 1 cm", "inner_radius_m: 0.50", "inner_radius_m: 0.009", "inner_radius_m must lie in [0.01, 100]"},
		{"radius 1e308", "inner_radius_m: 0.50", "inner_radius_m: 1e308", "inner_radius_m must lie"},
		{"length 1e-300", "length_m: 2.0", "length_m: 1e-300", "length_m must lie"},
		{"designer factor 1e-320", "factor_mpa_per_mpa: -9.5", "factor_mpa_per_mpa: -1e-320", "magnitude must lie in [0.001, 1000]"},
		{"designer factor 1e6", "factor_mpa_per_mpa: -9.5", "factor_mpa_per_mpa: -1e6", "magnitude must lie"},
		{"designer factor NaN", "factor_mpa_per_mpa: -9.5", "factor_mpa_per_mpa: .nan", "needs a non-zero factor"},
		{"factor on a lame basis, tiny", "basis: lame            # thick-wall default from the geometry", "basis: lame\n      factor_mpa_per_mpa: 1e-9", "magnitude must lie"},
		{"pressure beyond 1000 MPa", "collapse_pressure_mpa: 88.0", "collapse_pressure_mpa: 1e300", "exceeds 1000 MPa"},
		// Text that could forge a line or a terminal escape in a report.
		{"newline in name", "name: Example cylinder", "name: \"Example\\nFIT: yes\"", "control or format character U+000A"},
		{"escape in material", "material_system: carbon/epoxy filament-wound, titanium end rings", "material_system: \"carbon\\e[2Jepoxy\"", "U+001B"},
		{"bidi override in source", "source: \"designer's FE", "source: \"\\u202edesigner's FE", "U+202E"},
		{"carriage return in position", "position: \"mid-length, 0 deg\"", "position: \"mid\\rlength\"", "U+000D"},
		{"zero-width space in curve", "curve: ti-6al-4v-machined-illustrative", "curve: \"ti\\u200b-6al\"", "U+200B"},
		{"line separator in direction", "direction: axial", "direction: \"axial\\u2028\"", "U+2028"},
		{"tab in prior source", "curve: ti-6al-4v-machined-illustrative", "curve: ti-6al-4v-machined-illustrative\n    prior_damage: {cyclic: 0.1, sustained: 0, source: \"log\\tbook\"}", "U+0009"},
		// Per-component settings.
		{"DFF below 1", "curve: ti-6al-4v-machined-illustrative", "curve: ti-6al-4v-machined-illustrative\n    design_fatigue_factor: 0.5", "design_fatigue_factor must lie in [1, 1000]"},
		{"DFF NaN", "curve: ti-6al-4v-machined-illustrative", "curve: ti-6al-4v-machined-illustrative\n    design_fatigue_factor: .nan", "design_fatigue_factor must lie"},
		{"DFF infinite", "curve: ti-6al-4v-machined-illustrative", "curve: ti-6al-4v-machined-illustrative\n    design_fatigue_factor: .inf", "design_fatigue_factor must lie"},
		{"unknown mean stress", "curve: ti-6al-4v-machined-illustrative", "curve: ti-6al-4v-machined-illustrative\n    mean_stress: gerber", "mean_stress must be none or goodman"},
		// Elastic constants and the gauge basis.
		{"Poisson 0.5", "# poisson_ratio: 0.30", "poisson_ratio: 0.5", "poisson_ratio must lie in [0, 0.5)"},
		{"negative Poisson", "# poisson_ratio: 0.30", "poisson_ratio: -0.1", "poisson_ratio must lie"},
		{"modulus 0", "# modulus_gpa: 55.0", "modulus_gpa: 0", "modulus_gpa must lie in (0, 1000]"},
		{"modulus 1e4 GPa", "# modulus_gpa: 55.0", "modulus_gpa: 1e4", "modulus_gpa must lie"},
		{"modulus without Poisson", "# modulus_gpa: 55.0", "modulus_gpa: 55", "go together"},
		{"gauge basis without elastic constants", "basis: lame            # thick-wall default from the geometry", "basis: gauge", "needs modulus_gpa and poisson_ratio"},
		{"unknown gauge direction", "direction: axial", "direction: radial", "direction \"radial\" unknown"},
		// Qualified cycles and end closure.
		{"qualified cycles zero", "# qualified_pressure_cycles: 10000", "qualified_pressure_cycles: 0", "qualified_pressure_cycles must lie in [1, 1e+09]"},
		{"qualified cycles NaN", "# qualified_pressure_cycles: 10000", "qualified_pressure_cycles: .nan", "qualified_pressure_cycles must lie"},
		{"qualified cycles infinite", "# qualified_pressure_cycles: 10000", "qualified_pressure_cycles: .inf", "qualified_pressure_cycles must lie"},
		{"end closure unknown", "# end_closure: hemispherical", "end_closure: conical", "end_closure must be flat or hemispherical"},
		{"unknown key", "shape: cylinder", "shape: cylinder\ncolour: red", "field colour not found"},
		{"bad shape", "shape: cylinder", "shape: cone", "shape must be"},
		{"negative radius", "inner_radius_m: 0.50", "inner_radius_m: -0.5", "inner_radius_m must be a positive"},
		{"proof below design", "proof_pressure_mpa: 50.0", "proof_pressure_mpa: 40.0", "below design_pressure_mpa"},
		{"collapse below proof", "collapse_pressure_mpa: 88.0", "collapse_pressure_mpa: 45.0", "must exceed proof"},
		// 4000 m is about 40.4 MPa (UNESCO 1983 at 90°); a design pressure of
		// 30 MPa cannot carry it.
		{"rated depth beyond design", "design_pressure_mpa: 44.0", "design_pressure_mpa: 30.0", "above design_pressure_mpa"},
		{"designer without factor", "factor_mpa_per_mpa: -9.5", "", "needs a non-zero factor"},
		{"unknown transfer", "basis: lame", "basis: guess", "transfer.basis must be"},
		{"gauge on unknown component", "component: laminate\n    position: \"mid-length, 0 deg\"\n    direction: hoop", "component: nose\n    position: x", "is not one of this hull's components"},
		{"repeated channel", "channel: 2", "channel: 1", "channel 1 repeated"},
		{"bad serial", "serial: EX-C4000-01", "serial: \"bad serial\"", "serial"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			src := strings.Replace(string(base), tc.from, tc.to, 1)
			if src == string(base) {
				t.Fatalf("replacement %q did not apply", tc.from)
			}
			_, err := Parse([]byte(src))
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %v, want it to contain %q", err, tc.want)
			}
		})
	}
}

// TestErrorIsPrintable: the error for a spec holding escapes must not
// carry the raw characters to the terminal.
func TestErrorIsPrintable(t *testing.T) {
	base, err := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		t.Fatal(err)
	}
	src := strings.Replace(string(base), "kind: end_ring", "kind: \"end\\e]0;owned\\a\\nring\\u202e\"", 1)
	_, err = Parse([]byte(src))
	if err == nil {
		t.Fatal("accepted")
	}
	for _, r := range err.Error() {
		if badRune(r) {
			t.Fatalf("error holds %U: %q", r, err.Error())
		}
	}
}

// TestOptionalFields parses the example with its commented optional
// fields switched on.
func TestOptionalFields(t *testing.T) {
	base, err := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		t.Fatal(err)
	}
	src := string(base)
	for _, k := range []string{"end_closure", "qualified_pressure_cycles", "modulus_gpa", "poisson_ratio", "mean_stress", "design_fatigue_factor"} {
		if !strings.Contains(src, "# "+k+":") {
			t.Fatalf("example lacks the commented %s", k)
		}
		src = strings.Replace(src, "# "+k+":", k+":", 1)
	}
	src = strings.Replace(src, "basis: lame            # thick-wall default from the geometry", "basis: gauge", 1)
	h, err := Parse([]byte(src))
	if err != nil {
		t.Fatal(err)
	}
	if h.EndClosureOrDefault() != "hemispherical" || *h.QualifiedPressureCycles != 10000 {
		t.Errorf("closure %q, qualified %v", h.EndClosure, *h.QualifiedPressureCycles)
	}
	lam, ring := h.Components[0], h.Components[1]
	if *lam.ModulusGPa != 55 || *lam.PoissonRatio != 0.3 || lam.Transfer.Basis != "gauge" {
		t.Errorf("laminate %+v", lam)
	}
	if ring.MeanStress != "goodman" || *ring.DesignFatigueFactor != 10 {
		t.Errorf("ring %+v", ring)
	}
	if g := h.StrainGaugesOn("laminate", "hoop"); len(g) != 1 || g[0] != "hoop1" {
		t.Errorf("hoop gauges %v", g)
	}
	if g := h.StrainGaugesOn("laminate", "axial"); len(g) != 1 || g[0] != "axial1" {
		t.Errorf("axial gauges %v", g)
	}
	// A gauge basis without an axial gauge cannot be calibrated biaxially.
	noAxial := strings.Replace(src, "direction: axial", "direction: hoop", 1)
	if _, err := Parse([]byte(noAxial)); err == nil || !strings.Contains(err.Error(), "axial strain gauge") {
		t.Errorf("gauge basis without an axial gauge: %v", err)
	}
	// The canonical JSON of a spec without the new fields is unchanged
	// by them (all omitted when absent).
	plain, err := Parse(base)
	if err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"end_closure", "qualified_pressure_cycles", "modulus_gpa", "poisson_ratio", "mean_stress", "design_fatigue_factor"} {
		if strings.Contains(plain.JSON(), k) {
			t.Errorf("JSON of the plain example holds %s", k)
		}
		if !strings.Contains(h.JSON(), k) {
			t.Errorf("JSON of the full example lacks %s", k)
		}
	}
	if plain.EndClosureOrDefault() != "flat" {
		t.Errorf("default end closure %q", plain.EndClosureOrDefault())
	}
	sphere := strings.Replace(strings.Replace(string(base), "shape: cylinder", "shape: sphere", 1), "length_m: 2.0\n", "end_closure: flat\n", 1)
	if _, err := Parse([]byte(sphere)); err == nil || !strings.Contains(err.Error(), "end_closure is for cylinders") {
		t.Errorf("sphere with end closure: %v", err)
	}
}

func FuzzParse(f *testing.F) {
	data, _ := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	f.Add(data)
	f.Add([]byte("serial: x"))
	f.Add(append(append([]byte(nil), data...), []byte("\nend_closure: flat\nqualified_pressure_cycles: 5\n")...))
	f.Add([]byte(strings.Replace(string(data), "name: Example cylinder", "name: \"a\\e[31mb\"", 1)))
	f.Fuzz(func(t *testing.T, b []byte) {
		h, err := Parse(b)
		if err != nil {
			return
		}
		if err := h.Validate(); err != nil {
			t.Fatalf("accepted spec fails validation: %v", err)
		}
		// Accepted geometry is plausible, and the accepted text prints
		// as it is.
		if h.WallThicknessM < MinWallM || h.InnerRadiusM < MinInnerRadiusM || math.IsInf(h.InnerRadiusM+h.WallThicknessM, 0) {
			t.Fatalf("implausible geometry accepted: %+v", h)
		}
		if err := checkText(h.JSON()); err != nil && len(h.JSON()) <= MaxTextBytes {
			t.Fatalf("accepted spec holds unprintable text: %v", err)
		}
	})
}

// TestProofIsNotSpecText: the proof-test compliance the ledger attaches is
// not part of the spec: a YAML key cannot set it (a hand-written
// "calibration" would pass for a measurement), and the spec's JSON, which
// is stored and chained, does not carry it.
func TestProofIsNotSpecText(t *testing.T) {
	data, err := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{"proof", "Proof"} {
		extra := string(data) + "\n" + key + ":\n  source: invented\n  complianceuepermpa: {hoop1: -1}\n"
		if h, err := Parse([]byte(extra)); err == nil {
			t.Errorf("key %s accepted: %+v", key, h.Proof)
		}
	}
	h, err := Parse(data)
	if err != nil {
		t.Fatal(err)
	}
	before := h.JSON()
	h.Proof = &ProofStrain{Source: "proof test", ComplianceUEPerMPa: map[string]float64{"hoop1": -93.6}}
	if after := h.JSON(); after != before || strings.Contains(after, "93.6") {
		t.Errorf("the spec's JSON carries the proof-test compliance: %s", after)
	}
}
