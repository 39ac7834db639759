// Package spec parses and validates hull specifications: the YAML a
// maintenance engineer writes for each hull serial (geometry, rated depth,
// design, proof and collapse pressures, components with their load-transfer
// basis and S-N curve, strain gauges and acoustic-emission channels).
package spec

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"regexp"
	"strings"

	"gopkg.in/yaml.v3"

	"hulltally/fatigue/seawater"
)

// Hull is one hull's specification.
type Hull struct {
	Serial              string      `yaml:"serial" json:"serial"`
	Name                string      `yaml:"name" json:"name"`
	MaterialSystem      string      `yaml:"material_system" json:"material_system"`
	Shape               string      `yaml:"shape" json:"shape"`
	InnerRadiusM        float64     `yaml:"inner_radius_m" json:"inner_radius_m"`
	WallThicknessM      float64     `yaml:"wall_thickness_m" json:"wall_thickness_m"`
	LengthM             float64     `yaml:"length_m,omitempty" json:"length_m,omitempty"`
	RatedDepthM         float64     `yaml:"rated_depth_m" json:"rated_depth_m"`
	DesignPressureMPa   float64     `yaml:"design_pressure_mpa" json:"design_pressure_mpa"`
	ProofPressureMPa    float64     `yaml:"proof_pressure_mpa" json:"proof_pressure_mpa"`
	CollapsePressureMPa float64     `yaml:"collapse_pressure_mpa" json:"collapse_pressure_mpa"`
	Components          []Component `yaml:"components" json:"components"`
	Gauges              []Gauge     `yaml:"gauges,omitempty" json:"gauges"`
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
	Direction string `yaml:"direction,omitempty" json:"direction,omitempty"`
	Channel   *int   `yaml:"channel,omitempty" json:"channel,omitempty"`
}

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
	bad := func(f string, a ...any) { errs = append(errs, fmt.Sprintf(f, a...)) }
	pos := func(name string, v float64) {
		if !(v > 0) || math.IsInf(v, 0) {
			bad("%s must be a positive number, got %v", name, v)
		}
	}
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
	case "sphere":
		if h.LengthM != 0 {
			bad("length_m is for cylinders; a sphere has none")
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
		switch c.Transfer.Basis {
		case "lame", "gauge":
		case "measured":
			bad("%s (%s): the measured-strain basis is not supported yet: use lame, designer or gauge", at, c.Name)
		case "designer":
			if c.Transfer.FactorMPaPerMPa == nil || *c.Transfer.FactorMPaPerMPa == 0 || math.IsNaN(*c.Transfer.FactorMPaPerMPa) || math.IsInf(*c.Transfer.FactorMPaPerMPa, 0) {
				bad("%s (%s): a designer transfer needs a non-zero factor_mpa_per_mpa", at, c.Name)
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
	if len(errs) > 0 {
		return fmt.Errorf("hull spec %q: %w", h.Serial, errors.New(strings.Join(errs, "; ")))
	}
	return nil
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
