package load

import (
	"math"
	"strings"
	"testing"
)

func near(got, want, rel float64) bool {
	return math.Abs(got-want) <= rel*math.Abs(want)
}

func TestLameClosedForms(t *testing.T) {
	// Closed forms of DESIGN.md §4 (Lamé; Timoshenko & Goodier ch. 4, from
	// memory) at a = 0.5 m, b = 0.6 m, per MPa of external pressure:
	//   a² = 0.25, b² = 0.36, b² − a² = 0.11, a³ = 0.125, b³ = 0.216,
	//   b³ − a³ = 0.091.
	s, err := NewShell(0.5, 0.6)
	if err != nil {
		t.Fatal(err)
	}
	hoopMid, err := s.CylinderHoopAt(0.55)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		got  float64
		want float64
	}{
		// −2·0.36/0.11 = −0.72/0.11 = −6.545454…
		{"cylinder hoop inner", s.CylinderHoopInner(), -0.72 / 0.11},
		// −(0.36 + 0.25)/0.11 = −0.61/0.11 = −5.545454…
		{"cylinder hoop outer", s.CylinderHoopOuter(), -0.61 / 0.11},
		// r = 0.55: r² = 0.3025; −0.36·(0.3025 + 0.25)/(0.3025·0.11)
		//   = −0.1989/0.033275 = −5.977460…
		{"cylinder hoop at r = 0.55 m", hoopMid, -0.1989 / 0.033275},
		// −0.36/0.11 = −3.272727…
		{"cylinder axial closed ends", s.CylinderAxial(), -0.36 / 0.11},
		// −3·0.216/(2·0.091) = −0.648/0.182 = −3.560440…
		{"sphere hoop inner", s.SphereHoopInner(), -0.648 / 0.182},
		// Thin wall, mean radius R = 0.55 m, t = 0.1 m:
		// hoop −0.55/0.1 = −5.5; axial and sphere −0.55/0.2 = −2.75.
		{"thin cylinder hoop", s.ThinCylinderHoop(), -5.5},
		{"thin cylinder axial", s.ThinCylinderAxial(), -2.75},
		{"thin sphere", s.ThinSphere(), -2.75},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if !near(tc.got, tc.want, 1e-12) {
				t.Errorf("got %.12g MPa/MPa, want %.12g", tc.got, tc.want)
			}
		})
	}
	// At p = 10 MPa the inner hoop stress is −65.4545… MPa.
	tr, err := NewLame(CylinderHoopInner, 0.5, 0.6)
	if err != nil {
		t.Fatal(err)
	}
	sigma, err := tr.Stress(10)
	if err != nil {
		t.Fatal(err)
	}
	if !near(sigma, -7.2/0.11, 1e-12) {
		t.Errorf("hoop at 10 MPa = %v MPa, want %v", sigma, -7.2/0.11)
	}
}

func TestHoopInnerExceedsOuter(t *testing.T) {
	walls := []struct{ a, b float64 }{{0.5, 0.6}, {0.2, 0.21}, {0.1, 0.3}, {1, 1.001}}
	for _, w := range walls {
		s, err := NewShell(w.a, w.b)
		if err != nil {
			t.Fatal(err)
		}
		in, out := math.Abs(s.CylinderHoopInner()), math.Abs(s.CylinderHoopOuter())
		if !(in > out) {
			t.Errorf("a=%v b=%v: |hoop inner| %v not larger than |hoop outer| %v", w.a, w.b, in, out)
		}
		// The difference is exactly p: 2b²/(b²−a²) − (b²+a²)/(b²−a²) = 1.
		if !near(in-out, 1, 1e-9) {
			t.Errorf("a=%v b=%v: inner − outer = %v, want 1 per MPa", w.a, w.b, in-out)
		}
		// Hoop magnitude falls monotonically from inner to outer surface.
		prev := math.Inf(1)
		for i := 0; i <= 20; i++ {
			r := w.a + (w.b-w.a)*float64(i)/20
			h, err := s.CylinderHoopAt(r)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(h) > prev {
				t.Errorf("a=%v b=%v: |hoop| rises at r=%v", w.a, w.b, r)
			}
			prev = math.Abs(h)
		}
	}
}

func TestHoopEquilibrium(t *testing.T) {
	// Force balance on half a cylinder under external pressure: the hoop
	// stress integrated through the wall carries p·b (outer radius), so
	// ∫ σθ dr from a to b = −p·b exactly (closed form:
	// −b²/(b²−a²)·[(b−a) + a²(1/a − 1/b)] = −b). Simpson, 2000 panels.
	s, _ := NewShell(0.3, 0.45)
	n := 2000
	h := s.Thickness() / float64(n)
	sum := 0.0
	for i := 0; i <= n; i++ {
		v, err := s.CylinderHoopAt(s.Inner + float64(i)*h)
		if err != nil {
			t.Fatal(err)
		}
		w := 2.0
		switch {
		case i == 0 || i == n:
			w = 1
		case i%2 == 1:
			w = 4
		}
		sum += w * v
	}
	sum *= h / 3
	if !near(sum, -0.45, 1e-9) {
		t.Errorf("∫σθ dr = %v, want −b = −0.45 per MPa", sum)
	}
	// Axial: p·π·b² = −σz·π·(b² − a²), so σz·(b² − a²)/b² = −1.
	if got := s.CylinderAxial() * (0.45*0.45 - 0.3*0.3) / (0.45 * 0.45); !near(got, -1, 1e-12) {
		t.Errorf("axial equilibrium %v, want −1", got)
	}
}

func TestThinWallLimit(t *testing.T) {
	// Convention: the thin-wall formulas use the MEAN radius R = (a+b)/2.
	// With R fixed at 1 m and t → 0 the Lamé/thin ratios are
	//   hoop inner  b²/R²  = (1 + t/2)²      → 1, error ≈ t/R
	//   hoop outer  (a²+b²)/(2R²) = 1 + t²/(4R²) → 1
	//   axial       b²/R²                     → 1
	//   sphere      b³/R³ · 3R²/(a²+ab+b²)    → 1, error ≈ 1.5·t/R
	prevErr := math.Inf(1)
	for _, tw := range []float64{0.1, 0.01, 0.001, 1e-4} {
		s, err := NewShell(1-tw/2, 1+tw/2)
		if err != nil {
			t.Fatal(err)
		}
		ratios := map[string]float64{
			"hoop inner": s.CylinderHoopInner() / s.ThinCylinderHoop(),
			"hoop outer": s.CylinderHoopOuter() / s.ThinCylinderHoop(),
			"axial":      s.CylinderAxial() / s.ThinCylinderAxial(),
			"sphere":     s.SphereHoopInner() / s.ThinSphere(),
		}
		worst := 0.0
		for name, r := range ratios {
			e := math.Abs(r - 1)
			if e > 1.6*tw {
				t.Errorf("t/R = %v: %s Lamé/thin = %v, error above 1.6·t/R", tw, name, r)
			}
			worst = math.Max(worst, e)
		}
		if !(worst < prevErr) {
			t.Errorf("t/R = %v: worst error %v does not fall as the wall thins", tw, worst)
		}
		prevErr = worst
	}
	// Exact at the hoop inner surface: (1 + 0.05)² = 1.1025 for t/R = 0.1.
	s, _ := NewShell(0.95, 1.05)
	if got := s.CylinderHoopInner() / s.ThinCylinderHoop(); !near(got, 1.1025, 1e-12) {
		t.Errorf("t/R = 0.1: hoop inner ratio %v, want 1.1025", got)
	}
}

func TestShellErrors(t *testing.T) {
	tests := []struct {
		name string
		a, b float64
		want string
	}{
		{"inner equals outer", 0.5, 0.5, "must be less than"},
		{"inner above outer", 0.6, 0.5, "must be less than"},
		{"zero inner", 0, 0.5, "inner radius must be"},
		{"negative inner", -0.1, 0.5, "inner radius must be"},
		{"negative outer", 0.1, -0.5, "outer radius must be"},
		{"NaN inner", math.NaN(), 0.5, "inner radius must be"},
		{"infinite outer", 0.1, math.Inf(1), "outer radius must be"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := NewShell(tc.a, tc.b)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("NewShell(%v, %v) error %v, want %q", tc.a, tc.b, err, tc.want)
			}
			if _, err := NewLame(CylinderHoopInner, tc.a, tc.b); err == nil {
				t.Fatalf("NewLame accepted a = %v, b = %v", tc.a, tc.b)
			}
		})
	}
	s, _ := NewShell(0.5, 0.6)
	if _, err := s.CylinderHoopAt(0.7); err == nil {
		t.Error("hoop at a radius outside the wall accepted")
	}
	if _, err := NewLame("cone", 0.5, 0.6); err == nil {
		t.Error("unknown Lamé case accepted")
	}
}

func TestGaugeCalibration(t *testing.T) {
	// Factor = E × compliance: 60 000 MPa × (−150 µε/MPa) × 10⁻⁶ = −9 MPa/MPa.
	g, err := NewGauge(60000, -150, "proof test, gauge H1")
	if err != nil {
		t.Fatal(err)
	}
	if !near(g.Factor, -9, 1e-12) {
		t.Errorf("gauge factor %v, want −9", g.Factor)
	}
	if !strings.Contains(g.Description, "gauge calibration") || !strings.Contains(g.Description, "proof test, gauge H1") {
		t.Errorf("description %q does not state the basis", g.Description)
	}
	// −1500 µε × 60 000 MPa = −90 MPa.
	s, err := g.StressFromStrain(-1500)
	if err != nil || !near(s, -90, 1e-12) {
		t.Errorf("stress from −1500 µε = %v, %v; want −90 MPa", s, err)
	}
	for _, bad := range []struct {
		name string
		e, c float64
	}{{"zero modulus", 0, -150}, {"negative modulus", -1, -150}, {"zero compliance", 60000, 0}, {"NaN compliance", 60000, math.NaN()}} {
		if _, err := NewGauge(bad.e, bad.c, ""); err == nil {
			t.Errorf("%s accepted", bad.name)
		}
	}
}

func TestMeasured(t *testing.T) {
	m, err := NewMeasured(110000, "titanium end ring gauge R2")
	if err != nil {
		t.Fatal(err)
	}
	// −800 µε × 110 000 MPa × 10⁻⁶ = −88 MPa.
	if s, err := m.StressFromStrain(-800); err != nil || !near(s, -88, 1e-12) {
		t.Errorf("stress %v, %v; want −88 MPa", s, err)
	}
	if _, err := m.Stress(5); err == nil {
		t.Error("measured basis gave a stress from pressure")
	}
	d, _ := NewDesigner(-8, "FE")
	if _, err := d.StressFromStrain(100); err == nil {
		t.Error("designer basis without modulus gave a stress from strain")
	}
}

func TestChoosePrecedence(t *testing.T) {
	g, _ := NewGauge(60000, -150, "proof test")
	d, _ := NewDesigner(-8.5, "FE model rev B")
	l, _ := NewLame(CylinderHoopInner, 0.5, 0.6)
	tests := []struct {
		name  string
		cands []Transfer
		want  Basis
	}{
		{"all three", []Transfer{l, d, g}, BasisGauge},
		{"designer and lame", []Transfer{l, d}, BasisDesigner},
		{"gauge and lame", []Transfer{g, l}, BasisGauge},
		{"lame only", []Transfer{l}, BasisLame},
		{"designer only", []Transfer{d}, BasisDesigner},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c, err := Choose(tc.cands...)
			if err != nil {
				t.Fatal(err)
			}
			if c.Transfer.Basis != tc.want {
				t.Fatalf("chose %s, want %s", c.Transfer.Basis, tc.want)
			}
			if !strings.Contains(c.Reason, string(tc.want)) {
				t.Errorf("reason %q does not name the basis used", c.Reason)
			}
		})
	}
	c, _ := Choose(l, d, g)
	if !strings.Contains(c.Reason, "designer") || !strings.Contains(c.Reason, "lame") {
		t.Errorf("reason %q does not name the candidates passed over", c.Reason)
	}
}

func TestChooseErrors(t *testing.T) {
	d, _ := NewDesigner(-8.5, "FE")
	m, _ := NewMeasured(60000, "H1")
	tests := []struct {
		name  string
		cands []Transfer
	}{
		{"none", nil},
		{"measured", []Transfer{m}},
		{"two designers", []Transfer{d, d}},
		{"broken gauge", []Transfer{d, {Basis: BasisGauge, Factor: -9, Description: "x"}}},
		{"zero designer factor", []Transfer{{Basis: BasisDesigner, Description: "x"}}},
		{"unknown basis", []Transfer{{Basis: "guess", Factor: 1, Description: "x"}}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := Choose(tc.cands...); err == nil {
				t.Fatal("accepted")
			}
		})
	}
}

func TestParseBasis(t *testing.T) {
	for _, s := range []string{"gauge", "designer", "lame", "measured", " lame "} {
		if _, err := ParseBasis(s); err != nil {
			t.Errorf("%q: %v", s, err)
		}
	}
	if _, err := ParseBasis("fea"); err == nil {
		t.Error("unknown basis accepted")
	}
}

func TestGaugeFactorRefuses(t *testing.T) {
	// Adversarial first: every input that could make a calibration pass
	// with a meaningless or vanishing factor is refused.
	tests := []struct {
		name                 string
		e, nu, cHoop, cAxial float64
		want                 string
	}{
		{"zero modulus", 0, 0.3, -170, -40, "modulus"},
		{"negative modulus", -50, 0.3, -170, -40, "modulus"},
		{"modulus beyond 1000 GPa", 1000.0001, 0.3, -170, -40, "modulus"},
		{"NaN modulus", math.NaN(), 0.3, -170, -40, "modulus"},
		{"infinite modulus", math.Inf(1), 0.3, -170, -40, "modulus"},
		{"Poisson 0.5", 50, 0.5, -170, -40, "Poisson"},
		{"negative Poisson", 50, -0.1, -170, -40, "Poisson"},
		{"NaN Poisson", 50, math.NaN(), -170, -40, "Poisson"},
		{"NaN hoop", 50, 0.3, math.NaN(), -40, "hoop compliance"},
		{"infinite axial", 50, 0.3, -170, math.Inf(-1), "axial compliance"},
		{"gauges read nothing", 50, 0.3, 0, 0, "zero stress factor"},
		// c_θ + ν·c_z = 0: the hoop factor vanishes.
		{"hoop cancels", 50, 0.25, -10, 40, "zero stress factor"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			h, a, err := GaugeFactor(tc.e, tc.nu, tc.cHoop, tc.cAxial)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("GaugeFactor = %v, %v, %v; want an error with %q", h, a, err, tc.want)
			}
			if _, err := NewBiaxialGauge(tc.e, tc.nu, tc.cHoop, tc.cAxial, "x"); err == nil {
				t.Fatal("NewBiaxialGauge accepted it")
			}
		})
	}
}

// TestGaugeFactorThinCylinder feeds back the strains of the closed form:
// a thin isotropic cylinder under external pressure p has σθ = −p·r/t and
// σz = −p·r/(2t); Hooke's law in plane stress gives εθ = (σθ − ν·σz)/E and
// εz = (σz − ν·σθ)/E. GaugeFactor must return the stresses exactly.
func TestGaugeFactorThinCylinder(t *testing.T) {
	tests := []struct{ rOverT, eGPa, nu float64 }{
		{10, 50, 0.3},   // carbon laminate order of magnitude
		{25, 210, 0.3},  // steel
		{5, 110, 0.34},  // titanium
		{40, 20, 0},     // no Poisson coupling
		{8, 1000, 0.49}, // range limits
	}
	for _, tc := range tests {
		sh, sz := -tc.rOverT, -tc.rOverT/2 // per MPa of pressure
		e := tc.eGPa * 1e3
		cH := (sh - tc.nu*sz) / e * 1e6 // µε per MPa
		cZ := (sz - tc.nu*sh) / e * 1e6
		h, a, err := GaugeFactor(tc.eGPa, tc.nu, cH, cZ)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(h-sh) > 1e-12*math.Abs(sh) || math.Abs(a-sz) > 1e-12*math.Abs(sz) {
			t.Errorf("%+v: hoop %v axial %v, want %v %v", tc, h, a, sh, sz)
		}
		tr, err := NewBiaxialGauge(tc.eGPa, tc.nu, cH, cZ, "proof test, gauges hoop1/axial1")
		if err != nil {
			t.Fatal(err)
		}
		if tr.Basis != BasisGauge || tr.Factor != h || tr.ModulusMPa != e || tr.PoissonRatio != tc.nu || !strings.Contains(tr.Description, "plane stress") {
			t.Errorf("transfer %+v", tr)
		}
		if err := tr.Validate(); err != nil {
			t.Error(err)
		}
	}
	// The worked case in numbers: r/t = 10, E = 50 GPa, ν = 0.3:
	// εθ = (−10 + 0.3·5)/50 000 = −170 µε/MPa, εz = (−5 + 0.3·10)/50 000
	// = −40 µε/MPa; E/(1−ν²)·(−170 − 0.3·40)·10⁻⁶ = −10 MPa/MPa. A
	// uniaxial calibration E·εθ = −8.5 MPa/MPa would understate the hoop
	// stress by 15 %: the biaxial factor must be the larger magnitude.
	h, a, err := GaugeFactor(50, 0.3, -170, -40)
	if err != nil || math.Abs(h+10) > 1e-12 || math.Abs(a+5) > 1e-12 {
		t.Fatalf("hoop %v axial %v err %v, want −10 and −5", h, a, err)
	}
	uni, _ := NewGauge(50e3, -170, "uniaxial")
	if !(math.Abs(h) > math.Abs(uni.Factor)) {
		t.Errorf("biaxial %v not larger in magnitude than uniaxial %v", h, uni.Factor)
	}
	// A transfer whose factor is not the plane-stress value is refused.
	tr, _ := NewBiaxialGauge(50, 0.3, -170, -40, "x")
	tr.Factor = -8.5
	if err := tr.Validate(); err == nil {
		t.Error("tampered biaxial factor validated")
	}
	tr.Factor, tr.PoissonRatio = h, 0.5
	if err := tr.Validate(); err == nil {
		t.Error("Poisson 0.5 validated")
	}
}
