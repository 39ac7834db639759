// Package spec parses and validates hull specifications: the YAML a
// maintenance engineer writes for each hull serial (geometry, rated depth,
// design, proof and collapse pressures, components with their load-transfer
// basis and S-N curve, strain gauges and acoustic-emission channels).
//
// Validation leans to the safe side: geometry must be plausible (wall at
// least 1 mm, inner radius at least 1 cm, a designer's factor between
// 10⁻³ and 10³ in magnitude, every number finite), and no text field may
// hold control characters, terminal escapes, line breaks or invisible
// formatting characters, which could forge or hide lines in a report or
// on a terminal.
//
// Optional per-component settings (mean_stress, design_fatigue_factor)
// override the global configuration for that component only; when absent
// the global value is used, and the assessment records which applied. A
// component's design fatigue factor can raise the global one, never lower
// it (fatigue/assess.EffectiveSettings): a lower value is overridden by
// the global one and the assessment says so.
package spec

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"gopkg.in/yaml.v3"

	"hulltally/fatigue/seawater"
	"hulltally/ledger/files"
)

// Hull is one hull's specification.
type Hull struct {
	Serial              string  `yaml:"serial" json:"serial"`
	Name                string  `yaml:"name" json:"name"`
	MaterialSystem      string  `yaml:"material_system" json:"material_system"`
	Shape               string  `yaml:"shape" json:"shape"`
	InnerRadiusM        float64 `yaml:"inner_radius_m" json:"inner_radius_m"`
	WallThicknessM      float64 `yaml:"wall_thickness_m" json:"wall_thickness_m"`
	LengthM             float64 `yaml:"length_m,omitempty" json:"length_m,omitempty"`
	RatedDepthM         float64 `yaml:"rated_depth_m" json:"rated_depth_m"`
	DesignPressureMPa   float64 `yaml:"design_pressure_mpa" json:"design_pressure_mpa"`
	ProofPressureMPa    float64 `yaml:"proof_pressure_mpa" json:"proof_pressure_mpa"`
	CollapsePressureMPa float64 `yaml:"collapse_pressure_mpa" json:"collapse_pressure_mpa"`
	// EndClosure is the end closure of a cylinder, flat or hemispherical
	// (the implosion volume depends on it); empty means flat
	// (EndClosureOrDefault), the smaller volume of the two for the same
	// cylinder length. Not for spheres.
	EndClosure string `yaml:"end_closure,omitempty" json:"end_closure,omitempty"`
	// QualifiedPressureCycles is the number of pressure cycles the design
	// was qualified for (cyclic test or analysis), if stated: finite, at
	// least 1.
	QualifiedPressureCycles *float64    `yaml:"qualified_pressure_cycles,omitempty" json:"qualified_pressure_cycles,omitempty"`
	Components              []Component `yaml:"components" json:"components"`
	Gauges                  []Gauge     `yaml:"gauges,omitempty" json:"gauges"`
	// Proof is the strain compliance measured at the hull's latest
	// passing proof test with samples, which the ledger attaches when it
	// reads a recorded hull (the gauge calibration of components with
	// transfer basis gauge). It is not part of the specification's text:
	// never read from YAML nor written to its JSON; nil when no such test
	// is recorded.
	Proof *ProofStrain `yaml:"-" json:"-"`
}

// ProofStrain is the strain compliance measured at a proof test.
type ProofStrain struct {
	// Source names the test, for reports, for example
	// "proof test of 2026-04-01 (dive 6f1c…)".
	Source string
	// ComplianceUEPerMPa is each strain gauge's compliance in microstrain
	// per MPa of gauge pressure (negative in compression), by gauge name;
	// a gauge without a usable compliance at the test is absent.
	ComplianceUEPerMPa map[string]float64
}

// Component is a part of the hull with its own stress history and curve.
type Component struct {
	Name         string   `yaml:"name" json:"name"`
	Kind         string   `yaml:"kind" json:"kind"`
	Transfer     Transfer `yaml:"transfer" json:"transfer"`
	Curve        string   `yaml:"curve" json:"curve"`
	RuptureCurve string   `yaml:"rupture_curve,omitempty" json:"rupture_curve,omitempty"`
	// PriorDamage is damage done before the hull's first dive in this
	// ledger (an earlier service record carried over), with its source.
	PriorDamage *Prior `yaml:"prior_damage,omitempty" json:"prior_damage,omitempty"`
	// MeanStress is this component's mean-stress correction, none or
	// goodman; empty means the global configured value.
	MeanStress string `yaml:"mean_stress,omitempty" json:"mean_stress,omitempty"`
	// DesignFatigueFactor is this component's design fatigue factor
	// (finite, 1 to 1000); absent means the global configured value. It
	// can raise the global factor, never lower it.
	DesignFatigueFactor *float64 `yaml:"design_fatigue_factor,omitempty" json:"design_fatigue_factor,omitempty"`
	// ModulusGPa is the effective in-plane elastic modulus of the
	// component at its gauges, in GPa, (0, 1000]; with PoissonRatio it
	// turns the strains measured at a proof test into stress
	// (fatigue/load.GaugeFactor). Required for transfer basis gauge.
	ModulusGPa *float64 `yaml:"modulus_gpa,omitempty" json:"modulus_gpa,omitempty"`
	// PoissonRatio is the in-plane Poisson ratio ν, [0, 0.5). Required
	// for transfer basis gauge.
	PoissonRatio *float64 `yaml:"poisson_ratio,omitempty" json:"poisson_ratio,omitempty"`
}

// Prior is damage carried over from an earlier record.
type Prior struct {
	Cyclic    float64 `yaml:"cyclic" json:"cyclic"`
	Sustained float64 `yaml:"sustained" json:"sustained"`
	Source    string  `yaml:"source" json:"source"`
}

// Transfer is how gauge pressure becomes stress in a component.
type Transfer struct {
	// Basis: "lame" (thick-wall default from the geometry), "designer" (a
	// factor from the designer's analysis) or "gauge" (calibrated from
	// strain gauges at a proof test; until one is recorded the designer's
	// factor, else Lamé, is used and the assessment says so).
	Basis string `yaml:"basis" json:"basis"`
	// FactorMPaPerMPa is stress per unit gauge pressure (negative in
	// compression); required for "designer".
	FactorMPaPerMPa *float64 `yaml:"factor_mpa_per_mpa,omitempty" json:"factor_mpa_per_mpa,omitempty"`
	// Source says where a designer's factor comes from.
	Source string `yaml:"source,omitempty" json:"source,omitempty"`
}

// Gauge is a strain gauge or an acoustic-emission channel.
type Gauge struct {
	Name      string `yaml:"name" json:"name"`
	Kind      string `yaml:"kind" json:"kind"`
	Component string `yaml:"component,omitempty" json:"component,omitempty"`
	Position  string `yaml:"position,omitempty" json:"position,omitempty"`
	// Direction of a strain gauge: hoop, axial or meridional (empty:
	// not stated). A gauge-calibrated transfer takes its hoop and axial
	// compliances from the gauges of these directions on its component.
	Direction string `yaml:"direction,omitempty" json:"direction,omitempty"`
	Channel   *int   `yaml:"channel,omitempty" json:"channel,omitempty"`
}

// Plausibility bounds of the specification (SI units as in the YAML).
// Values outside are refused: they are typing errors or attempts to drive
// the arithmetic to zero, infinity or underflow.
const (
	MinInnerRadiusM    = 0.01   // 1 cm
	MaxInnerRadiusM    = 100.0  // larger than any pressure hull
	MinWallM           = 0.001  // 1 mm
	MaxWallM           = 10.0   // m
	MinLengthM         = 0.01   // m
	MaxLengthM         = 1000.0 // m
	MaxPressureMPa     = 1000.0 // about 8.6 times the full ocean depth
	MinFactor          = 1e-3   // |designer factor|, MPa per MPa
	MaxFactor          = 1e3
	MaxDFF             = 1000.0
	MaxModulusGPa      = 1000.0
	MaxPoissonRatio    = 0.5 // exclusive
	MaxQualifiedCycles = 1e9
	MaxTextBytes       = 2000
	// DefaultEndClosure is the end closure of a cylinder that states none.
	DefaultEndClosure = "flat"
)

// gaugeDirections are the known strain-gauge directions.
var gaugeDirections = []string{"hoop", "axial", "meridional"}

// ComponentKinds are the known component kinds.
var componentKinds = []string{"laminate_cylinder", "laminate_sphere", "end_ring", "hatch_seat", "hemisphere", "penetrator", "window_seat"}

var (
	serialRE = regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$`)
	nameRE   = regexp.MustCompile(`^[a-z0-9][a-z0-9-]{0,39}$`)
	gaugeRE  = regexp.MustCompile(`^[a-z0-9][a-z0-9_-]{0,39}$`)
)

// Parse reads a hull specification from YAML and validates it. Unknown
// keys are refused, so that a typing error is not silently ignored.
func Parse(data []byte) (*Hull, error) {
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	var h Hull
	if err := dec.Decode(&h); err != nil {
		return nil, fmt.Errorf("hull spec: %w", err)
	}
	if err := h.Validate(); err != nil {
		return nil, err
	}
	return &h, nil
}

// JSON is the canonical JSON of the spec (stable field order).
func (h *Hull) JSON() string {
	b, err := json.Marshal(h)
	if err != nil {
		panic(err) // plain struct of strings and numbers
	}
	return string(b)
}

// Validate checks the specification, collecting every problem.
func (h *Hull) Validate() error {
	var errs []string
	// Every message is made safe to print: the spec's own text may hold
	// the very characters it is refused for.
	bad := func(f string, a ...any) { errs = append(errs, sanitize(fmt.Sprintf(f, a...))) }
	pos := func(name string, v float64) {
		if !(v > 0) || math.IsInf(v, 0) {
			bad("%s must be a positive number, got %v", name, v)
		}
	}
	within := func(name string, v, lo, hi float64) {
		if !(v >= lo && v <= hi) {
			bad("%s must lie in [%g, %g], got %v", name, lo, hi, v)
		}
	}
	text := func(name, v string) {
		if err := checkText(v); err != nil {
			bad("%s: %v", name, err)
		}
	}
	text("serial", h.Serial)
	text("name", h.Name)
	text("material_system", h.MaterialSystem)
	text("shape", h.Shape)
	text("end_closure", h.EndClosure)
	if !serialRE.MatchString(h.Serial) {
		bad("serial %q: 1-64 letters, digits, '.', '_' or '-', starting with a letter or digit", h.Serial)
	}
	if strings.TrimSpace(h.Name) == "" {
		bad("name is required")
	}
	if strings.TrimSpace(h.MaterialSystem) == "" {
		bad("material_system is required (e.g. carbon/epoxy filament-wound)")
	}
	switch h.Shape {
	case "cylinder":
		pos("length_m", h.LengthM)
		if h.LengthM > 0 {
			within("length_m", h.LengthM, MinLengthM, MaxLengthM)
		}
		switch h.EndClosure {
		case "", "flat", "hemispherical":
		default:
			bad("end_closure must be flat or hemispherical (default %s), got %q", DefaultEndClosure, h.EndClosure)
		}
	case "sphere":
		if h.LengthM != 0 {
			bad("length_m is for cylinders; a sphere has none")
		}
		if h.EndClosure != "" {
			bad("end_closure is for cylinders; a sphere has none")
		}
	default:
		bad("shape must be cylinder or sphere, got %q", h.Shape)
	}
	pos("inner_radius_m", h.InnerRadiusM)
	pos("wall_thickness_m", h.WallThicknessM)
	pos("rated_depth_m", h.RatedDepthM)
	pos("design_pressure_mpa", h.DesignPressureMPa)
	pos("proof_pressure_mpa", h.ProofPressureMPa)
	pos("collapse_pressure_mpa", h.CollapsePressureMPa)
	if h.InnerRadiusM > 0 {
		within("inner_radius_m", h.InnerRadiusM, MinInnerRadiusM, MaxInnerRadiusM)
	}
	if h.WallThicknessM > 0 {
		within("wall_thickness_m", h.WallThicknessM, MinWallM, MaxWallM)
	}
	for _, p := range []struct {
		name string
		v    float64
	}{{"design_pressure_mpa", h.DesignPressureMPa}, {"proof_pressure_mpa", h.ProofPressureMPa}, {"collapse_pressure_mpa", h.CollapsePressureMPa}} {
		if p.v > MaxPressureMPa && !math.IsInf(p.v, 0) {
			bad("%s %v exceeds %v MPa", p.name, p.v, MaxPressureMPa)
		}
	}
	if q := h.QualifiedPressureCycles; q != nil {
		within("qualified_pressure_cycles", *q, 1, MaxQualifiedCycles)
	}
	if h.RatedDepthM > 11500 {
		bad("rated_depth_m %v is deeper than any ocean", h.RatedDepthM)
	}
	if h.ProofPressureMPa > 0 && h.DesignPressureMPa > 0 && h.ProofPressureMPa < h.DesignPressureMPa {
		bad("proof_pressure_mpa %v is below design_pressure_mpa %v", h.ProofPressureMPa, h.DesignPressureMPa)
	}
	if h.CollapsePressureMPa > 0 && h.ProofPressureMPa > 0 && h.CollapsePressureMPa <= h.ProofPressureMPa {
		bad("collapse_pressure_mpa %v must exceed proof_pressure_mpa %v", h.CollapsePressureMPa, h.ProofPressureMPa)
	}
	if h.RatedDepthM > 0 && h.RatedDepthM <= 11500 && h.DesignPressureMPa > 0 {
		// The rated depth at the latitude of highest pressure per metre.
		p := seawater.DepthToMPa(h.RatedDepthM, 90)
		if p > h.DesignPressureMPa*(1+1e-9) {
			bad("rated_depth_m %v is %.3f MPa of seawater (UNESCO 1983, lat 90°), above design_pressure_mpa %v", h.RatedDepthM, p, h.DesignPressureMPa)
		}
	}
	if len(h.Components) == 0 {
		bad("at least one component is required (e.g. the laminate cylinder)")
	}
	names := map[string]bool{}
	for i, c := range h.Components {
		at := fmt.Sprintf("components[%d]", i)
		text(at+".name", c.Name)
		text(at+".kind", c.Kind)
		text(at+".curve", c.Curve)
		text(at+".rupture_curve", c.RuptureCurve)
		text(at+".mean_stress", c.MeanStress)
		text(at+".transfer.basis", c.Transfer.Basis)
		text(at+".transfer.source", c.Transfer.Source)
		if c.PriorDamage != nil {
			text(at+".prior_damage.source", c.PriorDamage.Source)
		}
		if !nameRE.MatchString(c.Name) {
			bad("%s: name %q: lower-case letters, digits and '-', up to 40", at, c.Name)
		}
		if names[c.Name] {
			bad("%s: name %q repeated", at, c.Name)
		}
		names[c.Name] = true
		if !contains(componentKinds, c.Kind) {
			bad("%s (%s): kind %q unknown (known: %s)", at, c.Name, c.Kind, strings.Join(componentKinds, ", "))
		}
		if strings.TrimSpace(c.Curve) == "" {
			bad("%s (%s): curve is required (a name from the curve library)", at, c.Name)
		}
		if pd := c.PriorDamage; pd != nil {
			if !(pd.Cyclic >= 0) || !(pd.Sustained >= 0) || math.IsInf(pd.Cyclic, 0) || math.IsInf(pd.Sustained, 0) {
				bad("%s (%s): prior_damage cyclic and sustained must be non-negative numbers", at, c.Name)
			}
			if strings.TrimSpace(pd.Source) == "" {
				bad("%s (%s): prior_damage needs its source (the earlier record it is carried over from)", at, c.Name)
			}
		}
		switch c.MeanStress {
		case "", "none", "goodman":
		default:
			bad("%s (%s): mean_stress must be none or goodman (absent: the global setting), got %q", at, c.Name, c.MeanStress)
		}
		if f := c.DesignFatigueFactor; f != nil {
			within(at+" ("+c.Name+"): design_fatigue_factor", *f, 1, MaxDFF)
		}
		if e := c.ModulusGPa; e != nil && !(*e > 0 && *e <= MaxModulusGPa) {
			bad("%s (%s): modulus_gpa must lie in (0, %g] GPa, got %v", at, c.Name, MaxModulusGPa, *e)
		}
		if nu := c.PoissonRatio; nu != nil && !(*nu >= 0 && *nu < MaxPoissonRatio) {
			bad("%s (%s): poisson_ratio must lie in [0, %g), got %v", at, c.Name, MaxPoissonRatio, *nu)
		}
		if (c.ModulusGPa == nil) != (c.PoissonRatio == nil) {
			bad("%s (%s): modulus_gpa and poisson_ratio go together", at, c.Name)
		}
		if f := c.Transfer.FactorMPaPerMPa; f != nil && c.Transfer.Basis != "designer" {
			if a := math.Abs(*f); !(a >= MinFactor && a <= MaxFactor) {
				bad("%s (%s): factor_mpa_per_mpa magnitude must lie in [%g, %g], got %v", at, c.Name, MinFactor, MaxFactor, *f)
			}
		}
		switch c.Transfer.Basis {
		case "lame":
		case "gauge":
			if c.ModulusGPa == nil || c.PoissonRatio == nil {
				bad("%s (%s): a gauge transfer needs modulus_gpa and poisson_ratio to turn the proof-test strains into stress", at, c.Name)
			}
		case "measured":
			bad("%s (%s): the measured-strain basis is not supported yet: use lame, designer or gauge", at, c.Name)
		case "designer":
			if f := c.Transfer.FactorMPaPerMPa; f == nil || *f == 0 || math.IsNaN(*f) || math.IsInf(*f, 0) {
				bad("%s (%s): a designer transfer needs a non-zero factor_mpa_per_mpa", at, c.Name)
			} else if a := math.Abs(*f); !(a >= MinFactor && a <= MaxFactor) {
				bad("%s (%s): factor_mpa_per_mpa magnitude must lie in [%g, %g], got %v", at, c.Name, MinFactor, MaxFactor, *f)
			}
			if strings.TrimSpace(c.Transfer.Source) == "" {
				bad("%s (%s): a designer transfer needs its source (the analysis it comes from)", at, c.Name)
			}
		default:
			bad("%s (%s): transfer.basis must be lame, designer or gauge, got %q", at, c.Name, c.Transfer.Basis)
		}
	}
	gnames := map[string]bool{}
	chans := map[int]bool{}
	for i, g := range h.Gauges {
		at := fmt.Sprintf("gauges[%d]", i)
		text(at+".name", g.Name)
		text(at+".kind", g.Kind)
		text(at+".component", g.Component)
		text(at+".position", g.Position)
		text(at+".direction", g.Direction)
		if g.Direction != "" && !contains(gaugeDirections, g.Direction) {
			bad("%s (%s): direction %q unknown (known: %s)", at, g.Name, g.Direction, strings.Join(gaugeDirections, ", "))
		}
		if !gaugeRE.MatchString(g.Name) {
			bad("%s: name %q: lower-case letters, digits, '_' and '-', up to 40 (a strain gauge's name appears in the column strain_<name>_ue)", at, g.Name)
		}
		if gnames[g.Name] {
			bad("%s: name %q repeated", at, g.Name)
		}
		gnames[g.Name] = true
		if g.Component != "" && !names[g.Component] {
			bad("%s (%s): component %q is not one of this hull's components", at, g.Name, g.Component)
		}
		switch g.Kind {
		case "strain":
			if g.Channel != nil {
				bad("%s (%s): channel is for acoustic-emission channels", at, g.Name)
			}
		case "ae":
			if g.Channel == nil || *g.Channel < 0 {
				bad("%s (%s): an acoustic-emission channel needs its channel number (≥ 0)", at, g.Name)
			} else if chans[*g.Channel] {
				bad("%s (%s): channel %d repeated", at, g.Name, *g.Channel)
			} else {
				chans[*g.Channel] = true
			}
		default:
			bad("%s (%s): kind must be strain or ae, got %q", at, g.Name, g.Kind)
		}
	}
	for i, c := range h.Components {
		if c.Transfer.Basis != "gauge" {
			continue
		}
		hoop := h.StrainGaugesOn(c.Name, "hoop")
		if h.Shape == "sphere" {
			hoop = append(hoop, h.StrainGaugesOn(c.Name, "meridional")...)
		}
		if len(hoop) == 0 {
			bad("components[%d] (%s): a gauge transfer needs a strain gauge on the component in direction hoop (or meridional on a sphere)", i, c.Name)
		}
		if h.Shape == "cylinder" && len(h.StrainGaugesOn(c.Name, "axial")) == 0 {
			bad("components[%d] (%s): a gauge transfer on a cylinder needs an axial strain gauge on the component as well (biaxial calibration)", i, c.Name)
		}
	}
	if len(errs) > 0 {
		return fmt.Errorf("hull spec %q: %w", h.Serial, errors.New(strings.Join(errs, "; ")))
	}
	return nil
}

// checkText refuses text that could forge or hide output: invalid UTF-8,
// control characters (line breaks, tabs, escape sequences, DEL, C1),
// invisible format characters (bidirectional overrides, zero-width
// characters), line and paragraph separators, and text longer than
// MaxTextBytes.
func checkText(v string) error {
	if len(v) > MaxTextBytes {
		return fmt.Errorf("longer than %d bytes", MaxTextBytes)
	}
	if !utf8.ValidString(v) {
		return errors.New("not valid UTF-8")
	}
	for _, r := range v {
		if badRune(r) {
			return fmt.Errorf("holds the control or format character %U (line breaks, escapes and invisible characters are refused)", r)
		}
	}
	return nil
}

// sanitize replaces in s every character checkText refuses (and invalid
// UTF-8) by its Go escape, so that an error message is safe to print.
func sanitize(s string) string {
	var b strings.Builder
	for i := 0; i < len(s); {
		r, n := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && n == 1:
			fmt.Fprintf(&b, `\x%02x`, s[i])
		case badRune(r):
			q := strconv.QuoteRuneToASCII(r)
			b.WriteString(q[1 : len(q)-1])
		default:
			b.WriteString(s[i : i+n])
		}
		i += n
	}
	return b.String()
}

func badRune(r rune) bool {
	return unicode.IsControl(r) || unicode.In(r, unicode.Cf, unicode.Zl, unicode.Zp)
}

// EndClosureOrDefault is the end closure of a cylinder, DefaultEndClosure
// (flat) when the spec states none; empty for a sphere.
func (h *Hull) EndClosureOrDefault() string {
	if h.Shape != "cylinder" {
		return ""
	}
	if h.EndClosure == "" {
		return DefaultEndClosure
	}
	return h.EndClosure
}

// StrainGaugesOn lists the names of the strain gauges on a component in a
// direction (hoop, axial, meridional), in spec order.
func (h *Hull) StrainGaugesOn(component, direction string) []string {
	var out []string
	for _, g := range h.Gauges {
		if g.Kind == "strain" && g.Component == component && g.Direction == direction {
			out = append(out, g.Name)
		}
	}
	return out
}

// StrainGauges lists the names of the strain gauges.
func (h *Hull) StrainGauges() []string {
	var out []string
	for _, g := range h.Gauges {
		if g.Kind == "strain" {
			out = append(out, g.Name)
		}
	}
	return out
}

// AEChannels lists the acoustic-emission channel numbers.
func (h *Hull) AEChannels() []int {
	var out []int
	for _, g := range h.Gauges {
		if g.Kind == "ae" && g.Channel != nil {
			out = append(out, *g.Channel)
		}
	}
	return out
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// MaxFileBytes is the largest hull specification file ReadFile accepts
// (1 MiB): a real spec is a few kilobytes; anything larger is a wrong
// file, and reading it whole would only waste memory.
const MaxFileBytes = 1 << 20

// ReadFile reads and validates a hull specification from a file. Only a
// regular file of at most MaxFileBytes is read: a FIFO, a device such as
// /dev/zero, a folder or a socket is refused at once (the error wraps
// files.ErrNotRegular), a larger file is refused (files.ErrTooLarge), and
// ctx cancels the read. Errors name the file.
func ReadFile(ctx context.Context, path string) (*Hull, error) {
	data, err := files.ReadAllLimited(ctx, path, MaxFileBytes)
	if err != nil {
		return nil, fmt.Errorf("hull spec: %w", err)
	}
	h, err := Parse(data)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return h, nil
}
