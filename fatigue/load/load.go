// Package load turns the external gauge pressure on a composite pressure
// hull into the stress of each hull component (laminate cylinder, end ring,
// hatch seat, …): a load transfer factor in MPa of stress per MPa of
// gauge pressure.
//
// Sign convention: compression is negative. External pressure is positive,
// so the stress factors of a hull under external pressure are negative.
//
// A factor has one of four bases, and every Transfer carries a
// human-readable description of its basis for reports:
//
//   - gauge: calibrated from strain gauges at the proof test, factor =
//     E × measured compliance (modulus in MPa × µε per MPa × 10⁻⁶), or,
//     with a hoop and an axial gauge, the biaxial plane-stress law
//     E/(1−ν²)·(c + ν·c_cross) (GaugeFactor, NewBiaxialGauge);
//   - designer: the factor from the designer's analysis in the hull spec;
//   - lame: the Lamé thick-wall closed forms for an isotropic cylinder or
//     sphere, the default only — a laminate is not isotropic;
//   - measured: no transfer from pressure at all: the component's strain
//     gauge is read directly and converted to stress by its modulus.
//
// Choose picks among the pressure-based bases with the precedence gauge
// calibration > designer factor > Lamé default, and says which it used.
//
// Lamé thick-walled cylinder, inner radius a, outer radius b, external
// pressure p (Lamé's solution; for example Timoshenko & Goodier, Theory of
// Elasticity, chapter 4 — from memory; any strength-of-materials text has
// them):
//
//	σθ(r) = −p·b²·(r² + a²) / (r²·(b² − a²))    hoop, largest at r = a
//	σθ(a) = −2p·b² / (b² − a²)
//	σz    = −p·b² / (b² − a²)                    axial, closed ends
//
// Thick sphere at its inner surface: σθ(a) = −3p·b³ / (2·(b³ − a³)).
// Thin-wall limits, with R the MEAN radius (a + b)/2 and t = b − a:
// hoop p·R/t for the cylinder, p·R/(2t) for the cylinder's axial stress
// and for the sphere. The Lamé values tend to these as t/R → 0.
//
// Radii are in metres; only their ratio matters for the factors.
package load

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// Basis names where a transfer factor comes from.
type Basis string

// The bases of a transfer factor.
const (
	// BasisGauge is a calibration from strain gauges at the proof test:
	// factor = E × measured compliance.
	BasisGauge Basis = "gauge"
	// BasisDesigner is the factor from the designer's analysis.
	BasisDesigner Basis = "designer"
	// BasisLame is the Lamé thick-wall default for an isotropic shell.
	BasisLame Basis = "lame"
	// BasisMeasured means the component's strain is measured and used
	// directly; stress = E × strain.
	BasisMeasured Basis = "measured"
)

// ParseBasis returns the Basis named by s (gauge, designer, lame or
// measured).
func ParseBasis(s string) (Basis, error) {
	switch b := Basis(strings.TrimSpace(s)); b {
	case BasisGauge, BasisDesigner, BasisLame, BasisMeasured:
		return b, nil
	}
	return "", fmt.Errorf("load transfer basis %q: want gauge, designer, lame or measured", s)
}

// precedence orders the pressure-based bases: higher wins in Choose.
func (b Basis) precedence() int {
	switch b {
	case BasisGauge:
		return 3
	case BasisDesigner:
		return 2
	case BasisLame:
		return 1
	}
	return 0
}

// ErrNoTransfer is returned by Choose when no candidate is given.
var ErrNoTransfer = errors.New("no load transfer candidate")

// Transfer is the load transfer of one hull component.
type Transfer struct {
	// Basis says where the factor comes from.
	Basis Basis
	// Factor is the stress in MPa per MPa of external gauge pressure,
	// negative for compression. Zero and unused for BasisMeasured.
	Factor float64
	// ModulusMPa is the elastic modulus in MPa that converts strain to
	// stress (gauge and measured bases); zero when not used.
	ModulusMPa float64
	// ComplianceUEPerMPa is the measured compliance in microstrain per
	// MPa of gauge pressure (gauge basis only), negative for compression.
	ComplianceUEPerMPa float64
	// CrossComplianceUEPerMPa is the measured compliance in the
	// orthogonal in-plane direction (µε per MPa), for a biaxial gauge
	// calibration (NewBiaxialGauge); zero for a uniaxial one.
	CrossComplianceUEPerMPa float64
	// PoissonRatio is ν of the biaxial plane-stress calibration; zero for
	// a uniaxial one.
	PoissonRatio float64
	// Description states the basis in words, for reports.
	Description string
}

// Validate checks that t is complete and consistent with its basis.
func (t Transfer) Validate() error {
	switch t.Basis {
	case BasisGauge:
		if err := positive("modulus", t.ModulusMPa); err != nil {
			return fmt.Errorf("gauge transfer: %w", err)
		}
		if err := nonZero("compliance", t.ComplianceUEPerMPa); err != nil {
			return fmt.Errorf("gauge transfer: %w", err)
		}
		if !(t.PoissonRatio >= 0 && t.PoissonRatio < 0.5) {
			return fmt.Errorf("gauge transfer: Poisson ratio must lie in [0, 0.5), got %v", t.PoissonRatio)
		}
		if math.IsNaN(t.CrossComplianceUEPerMPa) || math.IsInf(t.CrossComplianceUEPerMPa, 0) {
			return fmt.Errorf("gauge transfer: cross compliance must be finite, got %v", t.CrossComplianceUEPerMPa)
		}
		want := planeStress(t.ModulusMPa, t.PoissonRatio, t.ComplianceUEPerMPa, t.CrossComplianceUEPerMPa)
		if !(math.Abs(t.Factor-want) <= 1e-12*math.Abs(want)) || want == 0 {
			return fmt.Errorf("gauge transfer: factor %v MPa/MPa is not E/(1−ν²) × (c + ν·c_cross) = %v MPa/MPa", t.Factor, want)
		}
	case BasisDesigner, BasisLame:
		if err := nonZero("factor", t.Factor); err != nil {
			return fmt.Errorf("%s transfer: %w", t.Basis, err)
		}
	case BasisMeasured:
		if err := positive("modulus", t.ModulusMPa); err != nil {
			return fmt.Errorf("measured transfer: %w", err)
		}
		if t.Factor != 0 {
			return fmt.Errorf("measured transfer: factor must be zero (stress comes from strain), got %v", t.Factor)
		}
	default:
		return fmt.Errorf("load transfer: unknown basis %q", t.Basis)
	}
	if strings.TrimSpace(t.Description) == "" {
		return fmt.Errorf("%s transfer: description of the basis is empty", t.Basis)
	}
	return nil
}

// Stress returns the component stress in MPa at external gauge pressure
// p in MPa: Factor × p. It is an error for the measured basis, whose
// stress comes from strain (StressFromStrain).
func (t Transfer) Stress(p float64) (float64, error) {
	if t.Basis == BasisMeasured {
		return 0, errors.New("stress from pressure: the measured basis takes strain, not pressure")
	}
	if math.IsNaN(p) || math.IsInf(p, 0) {
		return 0, fmt.Errorf("stress from pressure: pressure %v MPa is not a finite number", p)
	}
	return t.Factor * p, nil
}

// StressFromStrain returns the stress in MPa for a strain in microstrain,
// E × ε × 10⁻⁶, for the gauge and measured bases, which carry a modulus.
func (t Transfer) StressFromStrain(microstrain float64) (float64, error) {
	if !(t.ModulusMPa > 0) {
		return 0, fmt.Errorf("stress from strain: %s transfer has no modulus", t.Basis)
	}
	if math.IsNaN(microstrain) || math.IsInf(microstrain, 0) {
		return 0, fmt.Errorf("stress from strain: strain %v µε is not a finite number", microstrain)
	}
	return t.ModulusMPa * microstrain * 1e-6, nil
}

// NewDesigner returns the designer's transfer factor (MPa per MPa,
// negative for compression) with a description naming the analysis, for
// example "hull spec rev C, FE model, hoop at mid-bay, inner ply".
func NewDesigner(factor float64, description string) (Transfer, error) {
	if strings.TrimSpace(description) == "" {
		description = "designer's factor from the hull spec"
	}
	t := Transfer{Basis: BasisDesigner, Factor: factor,
		Description: fmt.Sprintf("designer factor %.6g MPa/MPa (%s)", factor, description)}
	if err := t.Validate(); err != nil {
		return Transfer{}, err
	}
	return t, nil
}

// NewGauge returns a transfer calibrated from strain gauges: the measured
// compliance in µε per MPa of gauge pressure (negative for compression,
// as a gauge on a hull under external pressure reads) times the modulus
// E in MPa of the component in the gauge direction. The description names
// the calibration, for example "proof test 2025-03-02, gauge H3".
func NewGauge(modulusMPa, complianceUEPerMPa float64, description string) (Transfer, error) {
	if strings.TrimSpace(description) == "" {
		description = "strain-gauge calibration at proof test"
	}
	t := Transfer{Basis: BasisGauge, ModulusMPa: modulusMPa, ComplianceUEPerMPa: complianceUEPerMPa,
		Factor: modulusMPa * complianceUEPerMPa * 1e-6}
	t.Description = fmt.Sprintf("gauge calibration %.6g MPa/MPa = E %.6g MPa × %.6g µε/MPa (%s)",
		t.Factor, modulusMPa, complianceUEPerMPa, description)
	if err := t.Validate(); err != nil {
		return Transfer{}, err
	}
	return t, nil
}

// planeStress is the stress per MPa of pressure in the direction of
// compliance c from the biaxial plane-stress Hooke's law of an isotropic
// layer: σ = E/(1−ν²)·(ε + ν·ε_cross), with E in MPa and compliances in
// µε per MPa. With ν = 0 it is E·c·10⁻⁶, the uniaxial calibration.
func planeStress(eMPa, nu, c, cross float64) float64 {
	if nu == 0 && cross == 0 {
		return eMPa * c * 1e-6
	}
	return eMPa / (1 - nu*nu) * (c + nu*cross) * 1e-6
}

// Bounds of the elastic constants GaugeFactor accepts.
const (
	// MaxModulusGPa is the largest modulus accepted, 1000 GPa (above
	// diamond's ~1050 GPa is no engineering material; carbon laminates
	// are below 200 GPa, titanium about 110 GPa, steel about 210 GPa).
	MaxModulusGPa = 1000
	// MaxPoissonRatio bounds ν from above, exclusive: 0.5 is an
	// incompressible material, where 1/(1−ν²) is finite but the
	// plane-stress inversion loses meaning for a laminate.
	MaxPoissonRatio = 0.5
)

// GaugeFactor returns the hoop and axial stress factors (MPa of stress
// per MPa of external gauge pressure, negative for compression) from the
// hoop and axial compliances measured at a proof test (µε per MPa of
// pressure, negative in compression), by the biaxial plane-stress Hooke's
// law of an isotropic wall of modulus eGPa (GPa) and Poisson ratio nu:
//
//	σθ/p = E/(1−ν²)·(c_θ + ν·c_z)·10⁻⁶
//	σz/p = E/(1−ν²)·(c_z + ν·c_θ)·10⁻⁶
//
// with E = eGPa·10³ MPa. A laminate is orthotropic: E and ν here are the
// effective in-plane values the operator states for the gauge location,
// an approximation the report must name. eGPa must lie in (0, 1000], nu
// in [0, 0.5), the compliances must be finite, and neither factor may be
// zero (a gauge that reads nothing calibrates nothing).
func GaugeFactor(eGPa, nu, hoopUEPerMPa, axialUEPerMPa float64) (hoop, axial float64, err error) {
	if !(eGPa > 0 && eGPa <= MaxModulusGPa) {
		return 0, 0, fmt.Errorf("gauge factor: modulus %v GPa must lie in (0, %v]", eGPa, float64(MaxModulusGPa))
	}
	if !(nu >= 0 && nu < MaxPoissonRatio) {
		return 0, 0, fmt.Errorf("gauge factor: Poisson ratio %v must lie in [0, 0.5)", nu)
	}
	for _, c := range []struct {
		name string
		v    float64
	}{{"hoop", hoopUEPerMPa}, {"axial", axialUEPerMPa}} {
		if math.IsNaN(c.v) || math.IsInf(c.v, 0) || math.Abs(c.v) > 1e9 {
			return 0, 0, fmt.Errorf("gauge factor: %s compliance %v µε/MPa is not a plausible finite number", c.name, c.v)
		}
	}
	e := eGPa * 1e3
	hoop = planeStress(e, nu, hoopUEPerMPa, axialUEPerMPa)
	axial = planeStress(e, nu, axialUEPerMPa, hoopUEPerMPa)
	if hoop == 0 || axial == 0 {
		return 0, 0, fmt.Errorf("gauge factor: zero stress factor (hoop %v, axial %v MPa/MPa) from compliances %v and %v µε/MPa", hoop, axial, hoopUEPerMPa, axialUEPerMPa)
	}
	return hoop, axial, nil
}

// NewBiaxialGauge returns the gauge-calibrated transfer of a component in
// the direction of compliance c (µε/MPa), with cross the compliance
// measured in the orthogonal in-plane direction, modulus eGPa (GPa) and
// Poisson ratio nu, by the plane-stress law of GaugeFactor:
// Factor = E/(1−ν²)·(c + ν·cross)·10⁻⁶. For the hoop factor pass the hoop
// compliance as c and the axial as cross. The description names the
// calibration, for example "proof test 2026-03-02, gauges hoop1/axial1".
func NewBiaxialGauge(eGPa, nu, c, cross float64, description string) (Transfer, error) {
	f, _, err := GaugeFactor(eGPa, nu, c, cross)
	if err != nil {
		return Transfer{}, err
	}
	if strings.TrimSpace(description) == "" {
		description = "biaxial strain-gauge calibration at proof test"
	}
	t := Transfer{Basis: BasisGauge, ModulusMPa: eGPa * 1e3, ComplianceUEPerMPa: c,
		CrossComplianceUEPerMPa: cross, PoissonRatio: nu, Factor: f}
	t.Description = fmt.Sprintf("gauge calibration %.6g MPa/MPa = E %.6g MPa/(1−ν²) × (%.6g + ν·%.6g) µε/MPa, ν = %.3g, plane stress, isotropic approximation (%s)",
		f, t.ModulusMPa, c, cross, nu, description)
	if err := t.Validate(); err != nil {
		return Transfer{}, err
	}
	return t, nil
}

// NewMeasured returns the measured basis: the component's strain gauge is
// read directly and converted to stress by the modulus E in MPa.
func NewMeasured(modulusMPa float64, description string) (Transfer, error) {
	if strings.TrimSpace(description) == "" {
		description = "strain gauge on the component"
	}
	t := Transfer{Basis: BasisMeasured, ModulusMPa: modulusMPa,
		Description: fmt.Sprintf("measured strain × E %.6g MPa (%s)", modulusMPa, description)}
	if err := t.Validate(); err != nil {
		return Transfer{}, err
	}
	return t, nil
}

// Choice is the outcome of Choose.
type Choice struct {
	// Transfer is the candidate used; its Basis says which one.
	Transfer Transfer
	// Reason says why, naming the candidates passed over, for reports.
	Reason string
}

// Choose picks the load transfer of a component from the candidates that
// the hull record offers, with the precedence gauge calibration >
// designer factor > Lamé default. Every candidate must be valid (a broken
// calibration is an error, not silently skipped), at most one per basis.
// The measured basis is not a fallback of this order: it needs strain
// readings instead of pressure and is chosen explicitly in the hull spec,
// so it is rejected here.
func Choose(candidates ...Transfer) (Choice, error) {
	if len(candidates) == 0 {
		return Choice{}, fmt.Errorf("choose load transfer: %w", ErrNoTransfer)
	}
	seen := map[Basis]bool{}
	best := -1
	for i, c := range candidates {
		if c.Basis == BasisMeasured {
			return Choice{}, errors.New("choose load transfer: the measured basis is chosen explicitly, not by precedence")
		}
		if err := c.Validate(); err != nil {
			return Choice{}, fmt.Errorf("choose load transfer: candidate %d: %w", i+1, err)
		}
		if seen[c.Basis] {
			return Choice{}, fmt.Errorf("choose load transfer: two %s candidates", c.Basis)
		}
		seen[c.Basis] = true
		if best < 0 || c.Basis.precedence() > candidates[best].Basis.precedence() {
			best = i
		}
	}
	used := candidates[best]
	var over []string
	for _, b := range []Basis{BasisGauge, BasisDesigner, BasisLame} {
		if seen[b] && b != used.Basis {
			over = append(over, string(b))
		}
	}
	reason := fmt.Sprintf("%s basis used (precedence gauge > designer > lame)", used.Basis)
	if len(over) > 0 {
		reason += "; passed over: " + strings.Join(over, ", ")
	}
	if used.Basis == BasisLame {
		reason += "; Lamé is an isotropic default, a laminate is not isotropic"
	}
	return Choice{Transfer: used, Reason: reason}, nil
}

func positive(name string, v float64) error {
	if !(v > 0) || math.IsInf(v, 0) {
		return fmt.Errorf("%s must be a positive finite number, got %v", name, v)
	}
	return nil
}

func nonZero(name string, v float64) error {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return fmt.Errorf("%s must be a non-zero finite number, got %v", name, v)
	}
	return nil
}
