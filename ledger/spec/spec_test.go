package spec

import (
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

func FuzzParse(f *testing.F) {
	data, _ := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	f.Add(data)
	f.Add([]byte("serial: x"))
	f.Fuzz(func(t *testing.T, b []byte) {
		h, err := Parse(b)
		if err != nil {
			return
		}
		if err := h.Validate(); err != nil {
			t.Fatalf("accepted spec fails validation: %v", err)
		}
	})
}
