package implosion

import (
	"math"
	"strings"
	"testing"
)

func near(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if math.Abs(got-want) > tol {
		t.Errorf("%s = %.9g, want %.9g (± %g)", name, got, want, tol)
	}
}

// TestDesignCheckCylinder is the check of the design notes: a cylinder of
// inner radius 0.55 m and length 2.2 m at 40.37 MPa.
//
// By hand:
//
//	V   = π·a²·L = π·0.3025·2.2 = π·0.6655 = 2.090730 m³ (flat ends)
//	p   = 40.37 MPa = 4037 dbar
//	K   = 2.436 + (2.573 − 2.436)·(4037 − 4000)/(6000 − 4000)
//	    = 2.436 + 0.137·0.0185 = 2.4385345 GPa
//	p·V = 40.37·2.090730 = 84.40277 MJ; ÷ 4.184 = 20.17 kg TNT
//	p²V/(2K) = p·V · p/(2K) = 84.40277·40.37/4877.069 = 0.698645 MJ
//	E   = 85.10141 MJ; ÷ 4.184 = 20.340 kg TNT
//	R   = (3V/4π)^(1/3) = 0.499126^(1/3) = 0.793237 m
//	t   = 0.915·R·√(ρ/p) = 0.915·0.793237·√(1027.97/40.37e6)
//	    = 0.725812·5.046161e-3 s = 3.6626 ms (surface density)
//	ρ at 4037 dbar = 1027.97 + 42.04·0.4037 = 1044.9415 kg/m³ → 3.6927 ms
//
// The design notes give 2.091 m³, p·V ≈ 84.4 MJ ≈ 20 kg TNT, R 0.793 m and
// t ≈ 3.7 ms.
func TestDesignCheckCylinder(t *testing.T) {
	r, err := Estimate(Geometry{Shape: Cylinder, InnerRadiusM: 0.55, LengthM: 2.2}, 40.37)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "volume m³", r.InternalVolumeM3, 2.090730, 1e-6)
	near(t, "K GPa", r.BulkModulusGPa, 2.4385345, 1e-12)
	near(t, "p·V MJ", r.PVEnergyMJ, 84.40277, 1e-5)
	near(t, "p·V in kg TNT", r.PVEnergyMJ/TNTMJPerKg, 20.17, 0.005)
	near(t, "p²V/2K MJ", r.WaterElasticMJ, 0.698645, 1e-6)
	near(t, "energy MJ", r.EnergyMJ, 85.10141, 1e-5)
	near(t, "TNT kg", r.TNTEquivalentKg, 20.340, 0.0005)
	near(t, "R m", r.EquivalentSphereRadiusM, 0.793237, 1e-6)
	near(t, "collapse ms", r.CollapseTimeMS, 3.6626, 1e-4)
	near(t, "density kg/m³", r.DensityKgM3, 1044.9415, 1e-4)
	near(t, "in-situ collapse ms", r.CollapseTimeInSituMS, 3.6927, 1e-4)
	// The figures of the design notes, to their precision.
	if math.Round(r.InternalVolumeM3*1000) != 2091 || math.Round(r.PVEnergyMJ*10) != 844 ||
		math.Round(r.TNTEquivalentKg) != 20 || math.Round(r.EquivalentSphereRadiusM*1000) != 793 || math.Round(r.CollapseTimeMS*10) != 37 {
		t.Errorf("design check: %+v", r)
	}
	// The safe side: the time shown is the shorter of the two.
	if !(r.CollapseTimeMS < r.CollapseTimeInSituMS) {
		t.Errorf("collapse time %v ms is not the shorter of %v", r.CollapseTimeMS, r.CollapseTimeInSituMS)
	}
	all := strings.Join(r.Assumptions, "\n")
	for _, s := range []string{"order of magnitude", "sympathy", "not a substitute", "empty spherical cavity", "p²·V/(2K)", "flat ends assumed", "TEOS-10", "4.184"} {
		if !strings.Contains(all, s) {
			t.Errorf("assumptions lack %q:\n%s", s, all)
		}
	}
}

// TestSphere checks a sphere by hand: inner radius 1 m at 20 MPa.
//
//	V   = 4/3·π·1³ = 4.188790 m³; R = 1 m
//	p   = 20 MPa = 2000 dbar
//	K   = 2.245 + (2.436 − 2.245)·(2000 − 1000)/(4000 − 1000)
//	    = 2.245 + 0.191/3 = 2.3086667 GPa = 2308.6667 MPa
//	p·V = 20·4.188790 = 83.77580 MJ
//	p²V/(2K) = 20²·4.188790 / (2·2308.6667) = 1675.5161/4617.3333 = 0.3628753 MJ
//	E   = 84.13868 MJ; ÷ 4.184 = 20.1096 kg TNT
//	t   = 0.915·1·√(1027.97/20e6) = 0.915·7.169273e-3 s = 6.55988 ms
func TestSphere(t *testing.T) {
	r, err := Estimate(Geometry{Shape: Sphere, InnerRadiusM: 1}, 20)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "volume m³", r.InternalVolumeM3, 4.188790, 1e-6)
	near(t, "R m", r.EquivalentSphereRadiusM, 1, 1e-12)
	near(t, "K GPa", r.BulkModulusGPa, 2.3086667, 1e-7)
	near(t, "p·V MJ", r.PVEnergyMJ, 83.77580, 1e-5)
	near(t, "p²V/2K MJ", r.WaterElasticMJ, 0.3628753, 1e-7)
	near(t, "energy MJ", r.EnergyMJ, 84.13868, 1e-5)
	near(t, "TNT kg", r.TNTEquivalentKg, 20.1096, 1e-4)
	near(t, "collapse ms", r.CollapseTimeMS, 6.55988, 1e-5)
	if strings.Contains(strings.Join(r.Assumptions, "\n"), "end closures") {
		t.Error("a sphere is said to have end closures")
	}
}

func TestVolume(t *testing.T) {
	tests := []struct {
		name string
		g    Geometry
		want float64
	}{
		// π·0.5²·2 = π/2 = 1.5707963.
		{"flat ends by default", Geometry{Shape: Cylinder, InnerRadiusM: 0.5, LengthM: 2}, math.Pi / 2},
		{"flat ends", Geometry{Shape: Cylinder, InnerRadiusM: 0.5, LengthM: 2, EndClosure: EndFlat}, math.Pi / 2},
		// π/2 + 4/3·π·0.125 = π/2 + π/6 = 2π/3 = 2.0943951.
		{"hemispherical heads", Geometry{Shape: Cylinder, InnerRadiusM: 0.5, LengthM: 2, EndClosure: EndHemispherical}, 2 * math.Pi / 3},
		// Heads only: a sphere, 4/3·π·0.125 = π/6.
		{"heads only", Geometry{Shape: Cylinder, InnerRadiusM: 0.5, EndClosure: EndHemispherical}, math.Pi / 6},
		{"sphere", Geometry{Shape: Sphere, InnerRadiusM: 0.5}, math.Pi / 6},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			v, err := tc.g.Volume()
			if err != nil {
				t.Fatal(err)
			}
			near(t, "volume", v, tc.want, 1e-12)
		})
	}
	for _, bad := range []Geometry{
		{Shape: "cone", InnerRadiusM: 1, LengthM: 1},
		{Shape: Cylinder, InnerRadiusM: 0, LengthM: 1},
		{Shape: Cylinder, InnerRadiusM: math.NaN(), LengthM: 1},
		{Shape: Cylinder, InnerRadiusM: 1},
		{Shape: Cylinder, InnerRadiusM: 1, LengthM: -1},
		{Shape: Cylinder, InnerRadiusM: 1, LengthM: math.Inf(1)},
		{Shape: Cylinder, InnerRadiusM: 1, LengthM: 1, EndClosure: "ellipsoidal"},
		{Shape: Sphere, InnerRadiusM: 1, LengthM: 1},
		{Shape: Sphere, InnerRadiusM: 1, EndClosure: EndFlat},
	} {
		if _, err := bad.Volume(); err == nil {
			t.Errorf("geometry %+v accepted", bad)
		}
		if _, err := Estimate(bad, 10); err == nil {
			t.Errorf("estimate of %+v accepted", bad)
		}
	}
}

func TestSeawaterTables(t *testing.T) {
	tests := []struct {
		pMPa, k, rho float64
	}{
		// The tabled points (TEOS-10, python3-gsw 3.6.16, SA 35.16504
		// g/kg, CT 2 °C; 1 MPa = 100 dbar).
		{0, 2.185, 1027.97},
		{10, 2.245, 1027.97 + 42.04*0.1},
		{40, 2.436, 1027.97 + 42.04*0.4},
		{60, 2.573, 1027.97 + 42.04*0.6},
		{100, 2.859, 1070.01},
		// Midway between 1000 and 4000 dbar: (2.245 + 2.436)/2 = 2.3405.
		{25, 2.3405, 1027.97 + 42.04*0.25},
		// Clamped outside the table.
		{-1, 2.185, 1027.97},
		{110, 2.859, 1070.01},
	}
	for _, tc := range tests {
		near(t, "K", BulkModulusGPa(tc.pMPa), tc.k, 1e-12)
		near(t, "ρ", DensityKgM3(tc.pMPa), tc.rho, 1e-9)
	}
	if !math.IsNaN(BulkModulusGPa(math.NaN())) {
		t.Error("NaN pressure gives a bulk modulus")
	}
}

func TestPressure(t *testing.T) {
	g := Geometry{Shape: Sphere, InnerRadiusM: 0.5}
	for _, p := range []float64{0, -1, math.NaN(), math.Inf(1)} {
		if _, err := Estimate(g, p); err == nil {
			t.Errorf("pressure %v accepted", p)
		}
	}
	// Beyond the table: K held at 2.859 GPa (lower than the truth, so the
	// elastic term is larger — the safe side), and said.
	r, err := Estimate(g, 110)
	if err != nil {
		t.Fatal(err)
	}
	if r.BulkModulusGPa != 2.859 || !strings.Contains(strings.Join(r.Assumptions, "\n"), "beyond the seawater table") {
		t.Errorf("got K %v, assumptions %q", r.BulkModulusGPa, r.Assumptions)
	}
	// The energy grows faster than p: doubling p doubles p·V and
	// quadruples p²V/2K but for the rise of K.
	lo, _ := Estimate(g, 20)
	hi, _ := Estimate(g, 40)
	near(t, "p·V ratio", hi.PVEnergyMJ/lo.PVEnergyMJ, 2, 1e-12)
	near(t, "p²V/2K ratio", hi.WaterElasticMJ/lo.WaterElasticMJ, 4*lo.BulkModulusGPa/hi.BulkModulusGPa, 1e-12)
}
