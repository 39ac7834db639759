// Package sn holds the S-N curves of hulltally's hull components, the
// mean-stress correction, the design fatigue factor, and the
// time-to-rupture (stress-rupture, static fatigue) curves for sustained
// load, together with the YAML library they are loaded from.
//
// Two S-N forms cover the library:
//
//   - power law (Basquin), single or bilinear with a knee, optional
//     cut-off: log10 N = log10 a − m·log10 S, with S the stress RANGE in
//     MPa. This is the form of the metallic detail curves, for example
//     DNV-RP-C203 (2016) Table 2-1, curve D in air.
//   - normalised log-linear, usual for laminates: S/S_ult = 1 − b·log10 N,
//     so N = 10^((1 − S/S_ult)/b), with S the PEAK stress MAGNITUDE of the
//     cycle and S_ult the static strength for the curve's loading mode
//     (compression–compression and tension–tension have their own b and
//     S_ult). The peak magnitude is used because laminate fatigue data for
//     one-sided cycles (0 → compression, R ≈ ∞; 0 → tension, R ≈ 0) are
//     normalised that way: the peak of a one-sided cycle fixes the whole
//     cycle, and fibre-dominated failure is governed by the peak. A peak
//     at or above S_ult gives N = 0.5: the cycle fails on its first
//     reversal (a static failure), which is safer than N = 1.
//
// Stresses are in MPa, compression negative; the curve measures (range,
// peak magnitude) are non-negative. A measure of zero or less does no
// damage (N = +Inf); so does a range below a power-law curve's cut-off.
//
// Mean stress (MeanStress): none, or a linear Goodman-type constant-life
// relation on both signs, S_a,eq = S_a/(1 − |S_m|/S_u), with S_u the
// compressive strength for a compressive mean and the tensile strength for
// a tensile mean (the curve's Strengths). How it combines with each form:
//
//   - power law, none: the range is used as it is (the practice of
//     DNV-RP-C203 for welded details, whose curves already include high
//     residual stress);
//   - power law, goodman: the range is replaced by 2·S_a,eq. For a
//     compressive mean this raises the range — conservative compared with
//     DNV-RP-C203, which allows a reduction for compressive stress in
//     some details; never in the hull's favour;
//   - log-linear, none: the peak magnitude |S_m| + S_a is used. This
//     treats a small cycle at depth like a dive cycle of the same peak:
//     conservative;
//   - log-linear, goodman: the cycle is mapped along the Goodman line to
//     the equivalent cycle of the curve's own test ratio r = |S_min|/|S_max|
//     (0 for 0 → peak), of peak P = 2·S_a,eq / ((1 − r) + S_a,eq·(1 + r)/S_u),
//     with S_u the strength on the curve's side; the curve is read at P.
//     A reference cycle maps onto itself.
//
// With goodman, |S_m| ≥ S_u means static failure: N = 0, so a Miner
// increment is +Inf — never a finite number in the hull's favour.
//
// Design fatigue factor (DFF ≥ 1): the allowable number of cycles is
// N/DFF, equivalently the damage is multiplied by DFF (AllowableCycles).
//
// Stress rupture (Rupture): log10 t_r = A − B·σ/σ_ult, t_r in HOURS,
// σ the sustained stress magnitude on the curve's side (compression or
// tension) and σ_ult the static strength on that side.
//
// The library (ParseLibrary) is validated on load. Every curve names its
// source, says whether it is a mean or a characteristic (design) curve,
// and whether it is illustrative: illustrative curves are placeholders and
// the user must load the qualified data for their own laminate or alloy.
package sn

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// Form is the mathematical form of an S-N curve.
type Form string

// The S-N curve forms.
const (
	// FormPowerLaw is log10 N = log10 a − m·log10 S, S the stress range,
	// single or bilinear with a knee, optional cut-off.
	FormPowerLaw Form = "power_law"
	// FormLogLinear is S/S_ult = 1 − b·log10 N, S the peak magnitude.
	FormLogLinear Form = "log_linear"
)

// Basis says whether a curve is a mean curve (50 % survival) or a
// characteristic (design) curve (mean minus two standard deviations of
// log N in DNV-RP-C203, about 97.7 % survival).
type Basis string

// The statistical bases of a curve.
const (
	// BasisMean is a mean (median) curve.
	BasisMean Basis = "mean"
	// BasisCharacteristic is a characteristic, design curve.
	BasisCharacteristic Basis = "characteristic"
)

// Mode is the loading mode a curve was derived for.
type Mode string

// The loading modes.
const (
	// ModeRange is a stress-range curve valid for any stress ratio, as
	// metallic detail curves are.
	ModeRange Mode = "range"
	// ModeCompression is compression–compression cycling.
	ModeCompression Mode = "compression-compression"
	// ModeTension is tension–tension cycling.
	ModeTension Mode = "tension-tension"
)

// Environment is the environment a curve was derived for. For metallic
// detail curves it matters: DNV-RP-C203 (2016) gives separate curves in
// air (Table 2-1), in seawater with cathodic protection (Table 2-2) and
// for free corrosion (Table 2-4). A part immersed in seawater must not be
// assessed on an in-air curve.
type Environment string

// The environments of a curve.
const (
	// EnvAir is a curve in air (or a part kept dry).
	EnvAir Environment = "air"
	// EnvSeawaterCP is a curve in seawater with cathodic protection.
	EnvSeawaterCP Environment = "seawater_cp"
	// EnvFreeCorrosion is a curve in seawater without corrosion
	// protection (free corrosion).
	EnvFreeCorrosion Environment = "free_corrosion"
	// EnvNotApplicable is for curves whose environment is not one of the
	// metallic corrosion cases, as the laminate curves: their data must
	// already be for the service conditions (wet, temperature).
	EnvNotApplicable Environment = "n/a"
)

// ParseEnvironment returns the Environment named by s.
func ParseEnvironment(s string) (Environment, error) {
	switch e := Environment(s); e {
	case EnvAir, EnvSeawaterCP, EnvFreeCorrosion, EnvNotApplicable:
		return e, nil
	}
	return "", fmt.Errorf("environment %q: want air, seawater_cp, free_corrosion or n/a", s)
}

// Describe is the environment in words, for reports.
func (e Environment) Describe() string {
	switch e {
	case EnvAir:
		return "in air"
	case EnvSeawaterCP:
		return "in seawater with cathodic protection"
	case EnvFreeCorrosion:
		return "in seawater, free corrosion"
	case EnvNotApplicable:
		return "environment not applicable (non-metallic)"
	case "":
		return "environment not stated"
	}
	return "unknown environment " + string(e)
}

// UnitsMPa is the only stress unit the library accepts.
const UnitsMPa = "MPa"

// PowerLaw holds the parameters of a Basquin curve.
type PowerLaw struct {
	// M1 is the slope of the first (high-stress) branch, > 0.
	M1 float64
	// LogA1 is log10 of the intercept of the first branch.
	LogA1 float64
	// KneeCycles is N at the knee (10⁷ for DNV-RP-C203 in air); zero for
	// a single-slope curve. The first branch applies for N ≤ KneeCycles.
	KneeCycles float64
	// M2 is the slope of the second branch (N > KneeCycles), > 0.
	M2 float64
	// LogA2 is log10 of the intercept of the second branch.
	LogA2 float64
	// CutoffMPa is the fatigue limit: ranges below it do no damage. Zero
	// means none, as for variable-amplitude loading in DNV-RP-C203.
	CutoffMPa float64
}

// LogLinear holds the parameters of a normalised log-linear curve.
type LogLinear struct {
	// B is the fractional loss of strength per decade of cycles, 0 < B < 1.
	B float64
	// SUltMPa is the static strength for the curve's loading mode, > 0.
	SUltMPa float64
	// ReferenceRatio is r = |S_min|/|S_max| of the test cycles, 0 ≤ r < 1:
	// 0 for 0 → peak (R = 0 in tension, R = ∞ in compression); 0.1 for
	// compression tests at R = 10. Used only by the goodman correction.
	ReferenceRatio float64
}

// Strengths are the static strengths of the material for the mean-stress
// correction, both positive magnitudes in MPa, with their source.
type Strengths struct {
	// TensileMPa is the tensile strength.
	TensileMPa float64
	// CompressiveMPa is the compressive strength, as a magnitude.
	CompressiveMPa float64
	// Source names where the strengths come from.
	Source string
}

// Present reports whether strengths were given.
func (s Strengths) Present() bool {
	return s.TensileMPa != 0 || s.CompressiveMPa != 0 || s.Source != ""
}

// Validate checks both strengths positive and finite and a source named.
func (s Strengths) Validate() error {
	if !finitePositive(s.TensileMPa) {
		return fmt.Errorf("strengths: tensile_mpa must be a positive finite number, got %v", s.TensileMPa)
	}
	if !finitePositive(s.CompressiveMPa) {
		return fmt.Errorf("strengths: compressive_mpa must be a positive finite number (a magnitude), got %v", s.CompressiveMPa)
	}
	if strings.TrimSpace(s.Source) == "" {
		return errors.New("strengths: source is empty")
	}
	return nil
}

// Curve is one S-N curve with its metadata.
type Curve struct {
	// Name is the library key.
	Name string
	// Form is power_law or log_linear; only the matching parameter block
	// is used.
	Form Form
	// Material is the material, for example "carbon/epoxy laminate".
	Material string
	// Application says which hull components the curve is meant for.
	Application string
	// Mode is the loading mode the curve was derived for.
	Mode Mode
	// Environment is the environment the curve was derived for (air,
	// seawater_cp, free_corrosion, n/a). ParseLibrary requires it; a curve
	// built in code may leave it empty ("not stated"), which Validate
	// accepts for backward compatibility but reports must show as such.
	Environment Environment
	// Basis is mean or characteristic.
	Basis Basis
	// Illustrative marks placeholder data: the user must load qualified
	// data for the actual material.
	Illustrative bool
	// Units is the stress unit, always MPa.
	Units string
	// Source is the citation of the data.
	Source string
	// Note says how the curve may be used, and for an illustrative curve
	// that it must be replaced by qualified data.
	Note string
	// PowerLaw holds the parameters of a power-law curve.
	PowerLaw PowerLaw
	// LogLinear holds the parameters of a log-linear curve.
	LogLinear LogLinear
	// Strengths are the static strengths for the goodman mean-stress
	// correction; absent (zero) if the curve does not support it.
	Strengths Strengths
}

// Validate checks the curve: metadata present, units MPa, positive slopes
// and strengths, a knee consistent with continuity (the two branches meet
// at the knee within 0.5 % in stress), and N non-increasing in S.
func (c Curve) Validate() error {
	if err := c.validate(); err != nil {
		return fmt.Errorf("curve %q: %w", c.Name, err)
	}
	return nil
}

func (c Curve) validate() error {
	if strings.TrimSpace(c.Name) == "" || strings.TrimSpace(c.Name) != c.Name {
		return errors.New("name: must be non-empty without surrounding spaces")
	}
	if err := metadata(c.Material, c.Source, c.Units, c.Basis, c.Illustrative, c.Note); err != nil {
		return err
	}
	switch c.Environment {
	case "", EnvAir, EnvSeawaterCP, EnvFreeCorrosion:
	case EnvNotApplicable:
		if c.Mode == ModeRange {
			// A stress-range curve is a metallic detail curve: its
			// environment changes its life and must be stated.
			return errors.New("environment: a range (metallic detail) curve must state air, seawater_cp or free_corrosion, not n/a")
		}
	default:
		return fmt.Errorf("environment: %q is not air, seawater_cp, free_corrosion or n/a", c.Environment)
	}
	switch c.Form {
	case FormPowerLaw:
		switch c.Mode {
		case ModeRange, ModeCompression, ModeTension:
		default:
			return fmt.Errorf("mode: %q is not range, compression-compression or tension-tension", c.Mode)
		}
		if c.LogLinear != (LogLinear{}) {
			return errors.New("log_linear: parameters given for a power_law curve")
		}
		if err := c.PowerLaw.validate(); err != nil {
			return err
		}
	case FormLogLinear:
		switch c.Mode {
		case ModeCompression, ModeTension:
		default:
			return fmt.Errorf("mode: a log_linear curve is compression-compression or tension-tension, got %q", c.Mode)
		}
		if c.PowerLaw != (PowerLaw{}) {
			return errors.New("power_law: parameters given for a log_linear curve")
		}
		if err := c.LogLinear.validate(); err != nil {
			return err
		}
	default:
		return fmt.Errorf("form: %q is not power_law or log_linear", c.Form)
	}
	if c.Strengths.Present() {
		if err := c.Strengths.Validate(); err != nil {
			return err
		}
	}
	return c.checkMonotonic()
}

func metadata(material, source, units string, basis Basis, illustrative bool, note string) error {
	if strings.TrimSpace(material) == "" {
		return errors.New("material: empty")
	}
	if strings.TrimSpace(source) == "" {
		return errors.New("source: empty; every curve must cite where its numbers come from")
	}
	if units != UnitsMPa {
		return fmt.Errorf("units: %q is not known; the library is in MPa", units)
	}
	switch basis {
	case BasisMean, BasisCharacteristic:
	default:
		return fmt.Errorf("basis: %q is not mean or characteristic", basis)
	}
	if illustrative && strings.TrimSpace(note) == "" {
		return errors.New("note: an illustrative curve must say that qualified data must replace it")
	}
	return nil
}

func (p PowerLaw) validate() error {
	if !finitePositive(p.M1) {
		return fmt.Errorf("power_law.m1: slope must be positive and finite, got %v", p.M1)
	}
	if !finite(p.LogA1) {
		return fmt.Errorf("power_law.log_a1: must be finite, got %v", p.LogA1)
	}
	if !(p.CutoffMPa >= 0) || math.IsInf(p.CutoffMPa, 0) {
		return fmt.Errorf("power_law.cutoff_mpa: must be zero (none) or positive and finite, got %v", p.CutoffMPa)
	}
	if p.KneeCycles == 0 {
		if p.M2 != 0 || p.LogA2 != 0 {
			return errors.New("power_law: m2/log_a2 given without knee_cycles")
		}
		return nil
	}
	if !finitePositive(p.KneeCycles) || p.KneeCycles < 1 {
		return fmt.Errorf("power_law.knee_cycles: must be at least 1 and finite, got %v", p.KneeCycles)
	}
	if !finitePositive(p.M2) {
		return fmt.Errorf("power_law.m2: slope must be positive and finite, got %v", p.M2)
	}
	if !finite(p.LogA2) {
		return fmt.Errorf("power_law.log_a2: must be finite, got %v", p.LogA2)
	}
	s1, s2 := p.kneeStresses()
	if !finitePositive(s1) || !finitePositive(s2) {
		return fmt.Errorf("power_law: knee stress not finite (%v, %v MPa)", s1, s2)
	}
	if math.Abs(s1/s2-1) > 0.005 {
		return fmt.Errorf("power_law: branches do not meet at the knee N = %g: %.4g MPa from branch 1, %.4g MPa from branch 2 (more than 0.5 %% apart)",
			p.KneeCycles, s1, s2)
	}
	return nil
}

// kneeStresses returns the stress range at the knee from each branch.
func (p PowerLaw) kneeStresses() (s1, s2 float64) {
	lk := math.Log10(p.KneeCycles)
	return math.Pow(10, (p.LogA1-lk)/p.M1), math.Pow(10, (p.LogA2-lk)/p.M2)
}

func (l LogLinear) validate() error {
	if !(l.B > 0 && l.B < 1) {
		return fmt.Errorf("log_linear.b: must lie in (0, 1), got %v", l.B)
	}
	if !finitePositive(l.SUltMPa) {
		return fmt.Errorf("log_linear.s_ult_mpa: must be positive and finite, got %v", l.SUltMPa)
	}
	if !(l.ReferenceRatio >= 0 && l.ReferenceRatio < 1) {
		return fmt.Errorf("log_linear.reference_ratio: must lie in [0, 1), got %v", l.ReferenceRatio)
	}
	return nil
}

// checkMonotonic samples the curve on a log grid around its scale and
// checks that N never rises with S.
func (c Curve) checkMonotonic() error {
	ref := c.scale()
	prev := math.Inf(1)
	for i := -60; i <= 20; i++ {
		s := ref * math.Pow(10, float64(i)/20)
		n := c.N(s)
		if math.IsNaN(n) || n < 0 {
			return fmt.Errorf("N(%.4g MPa) = %v is not a number of cycles", s, n)
		}
		if n > prev*(1+1e-12) {
			return fmt.Errorf("not monotonic: N rises from %.6g to %.6g at %.4g MPa", prev, n, s)
		}
		prev = n
	}
	return nil
}

// scale is a representative stress of the curve: the knee stress, the
// stress at 10⁶ cycles, or S_ult.
func (c Curve) scale() float64 {
	if c.Form == FormLogLinear {
		return c.LogLinear.SUltMPa
	}
	if c.PowerLaw.KneeCycles > 0 {
		s, _ := c.PowerLaw.kneeStresses()
		return s
	}
	return math.Pow(10, (c.PowerLaw.LogA1-6)/c.PowerLaw.M1)
}

// N returns the number of cycles to failure at s, in the curve's own
// measure: the stress range for a power-law curve, the peak stress
// magnitude for a log-linear curve, in MPa. s ≤ 0, and a range below the
// cut-off, give +Inf.
//
// A bilinear power law uses branch 1 where it gives N ≤ KneeCycles and
// branch 2 where it gives N > KneeCycles. Where published rounding leaves
// a small gap between the branches at the knee (neither in its own
// domain), N = KneeCycles, so that N never rises with S.
func (c Curve) N(s float64) float64 {
	if math.IsNaN(s) {
		return math.NaN()
	}
	if s <= 0 {
		return math.Inf(1)
	}
	switch c.Form {
	case FormPowerLaw:
		p := c.PowerLaw
		if s < p.CutoffMPa {
			return math.Inf(1)
		}
		ls := math.Log10(s)
		n1 := math.Pow(10, p.LogA1-p.M1*ls)
		if p.KneeCycles == 0 || n1 <= p.KneeCycles {
			return n1
		}
		if n2 := math.Pow(10, p.LogA2-p.M2*ls); n2 > p.KneeCycles {
			return n2
		}
		return p.KneeCycles
	case FormLogLinear:
		l := c.LogLinear
		if s >= l.SUltMPa {
			return 0.5
		}
		return math.Pow(10, (1-s/l.SUltMPa)/l.B)
	}
	return math.NaN()
}

// StressAt returns the stress in the curve's measure (range or peak
// magnitude, MPa) at which the curve gives n cycles: the inverse of N.
// Below a power-law cut-off it returns the cut-off; for a log-linear curve
// n ≤ 1 returns S_ult.
func (c Curve) StressAt(n float64) (float64, error) {
	if !finitePositive(n) {
		return 0, fmt.Errorf("curve %q: stress at N = %v: N must be positive and finite", c.Name, n)
	}
	ln := math.Log10(n)
	switch c.Form {
	case FormPowerLaw:
		p := c.PowerLaw
		var s float64
		if p.KneeCycles == 0 || n <= p.KneeCycles {
			s = math.Pow(10, (p.LogA1-ln)/p.M1)
		} else {
			s = math.Pow(10, (p.LogA2-ln)/p.M2)
		}
		return math.Max(s, p.CutoffMPa), nil
	case FormLogLinear:
		if n <= 1 {
			return c.LogLinear.SUltMPa, nil
		}
		return math.Max(0, c.LogLinear.SUltMPa*(1-c.LogLinear.B*ln)), nil
	}
	return 0, fmt.Errorf("curve %q: unknown form %q", c.Name, c.Form)
}

// KneeStress returns the stress range at the knee of a bilinear power-law
// curve from its first branch (the "fatigue limit at 10⁷" of DNV-RP-C203),
// and false for a curve without a knee.
func (c Curve) KneeStress() (float64, bool) {
	if c.Form != FormPowerLaw || c.PowerLaw.KneeCycles == 0 {
		return 0, false
	}
	s, _ := c.PowerLaw.kneeStresses()
	return s, true
}

// Equivalent returns the stress in the curve's own measure for a cycle of
// the given range (≥ 0) and mean (signed, compression negative), both in
// MPa, after the mean-stress correction ms (see the package comment for
// how each correction combines with each form). It is +Inf when the
// goodman correction finds |mean| at or beyond the strength.
func (c Curve) Equivalent(rangeMPa, meanMPa float64, ms MeanStress) (float64, error) {
	if !finite(rangeMPa) || rangeMPa < 0 {
		return 0, fmt.Errorf("curve %q: range %v MPa must be a non-negative finite number", c.Name, rangeMPa)
	}
	if !finite(meanMPa) {
		return 0, fmt.Errorf("curve %q: mean %v MPa must be a finite number", c.Name, meanMPa)
	}
	amp := rangeMPa / 2
	switch ms {
	case MeanStressNone:
		switch c.Form {
		case FormPowerLaw:
			return rangeMPa, nil
		case FormLogLinear:
			return math.Abs(meanMPa) + amp, nil
		}
	case MeanStressGoodman:
		if !c.Strengths.Present() {
			return 0, fmt.Errorf("curve %q: goodman mean-stress correction needs strengths, none given in the library", c.Name)
		}
		aeq, err := EquivalentAmplitude(amp, meanMPa, c.Strengths)
		if err != nil {
			return 0, fmt.Errorf("curve %q: %w", c.Name, err)
		}
		if math.IsInf(aeq, 1) {
			return aeq, nil
		}
		switch c.Form {
		case FormPowerLaw:
			return 2 * aeq, nil
		case FormLogLinear:
			su := c.Strengths.CompressiveMPa
			if c.Mode == ModeTension {
				su = c.Strengths.TensileMPa
			}
			r := c.LogLinear.ReferenceRatio
			return 2 * aeq / ((1 - r) + aeq*(1+r)/su), nil
		}
	default:
		return 0, fmt.Errorf("curve %q: unknown mean-stress correction %q", c.Name, ms)
	}
	return 0, fmt.Errorf("curve %q: unknown form %q", c.Name, c.Form)
}

// CyclesToFailure returns N for one cycle of the given range and mean
// (MPa) with the mean-stress correction ms: N(Equivalent(…)), and 0 when
// the mean is at or beyond the static strength (goodman).
func (c Curve) CyclesToFailure(rangeMPa, meanMPa float64, ms MeanStress) (float64, error) {
	s, err := c.Equivalent(rangeMPa, meanMPa, ms)
	if err != nil {
		return 0, err
	}
	if math.IsInf(s, 1) {
		return 0, nil
	}
	return c.N(s), nil
}

// CheckDFF checks a design fatigue factor: finite and at least 1 (a
// factor below 1 would be in the hull's favour).
func CheckDFF(dff float64) error {
	if !(dff >= 1) || math.IsInf(dff, 0) {
		return fmt.Errorf("design fatigue factor must be a finite number ≥ 1, got %v", dff)
	}
	return nil
}

// AllowableCycles returns the allowable number of cycles N/DFF for a
// design fatigue factor dff ≥ 1. Dividing N by DFF is the same as
// multiplying the Miner damage by DFF.
func AllowableCycles(n, dff float64) (float64, error) {
	if err := CheckDFF(dff); err != nil {
		return 0, fmt.Errorf("allowable cycles: %w", err)
	}
	if math.IsNaN(n) || n < 0 {
		return 0, fmt.Errorf("allowable cycles: N = %v is not a number of cycles", n)
	}
	return n / dff, nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func finitePositive(v float64) bool { return v > 0 && !math.IsInf(v, 0) }
