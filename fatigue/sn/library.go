package sn

import (
	"bytes"
	"errors"
	"fmt"
	"io"

	"gopkg.in/yaml.v3"
)

// ErrUnknownCurve is returned (wrapped) when a library has no curve of the
// name asked for.
var ErrUnknownCurve = errors.New("unknown curve")

// Library is a validated set of S-N and stress-rupture curves.
type Library struct {
	// Curves are the S-N curves, in file order.
	Curves []Curve
	// Ruptures are the stress-rupture curves, in file order.
	Ruptures []Rupture
}

// The YAML shape of the library. Pointers mark the fields that must be
// stated explicitly (a missing illustrative flag is an error, not false).
type libraryFile struct {
	Curves  []curveFile   `yaml:"curves"`
	Rupture []ruptureFile `yaml:"rupture"`
}

type curveFile struct {
	Name         string         `yaml:"name"`
	Form         string         `yaml:"form"`
	Material     string         `yaml:"material"`
	Application  string         `yaml:"application"`
	Mode         string         `yaml:"mode"`
	Environment  string         `yaml:"environment"`
	Basis        string         `yaml:"basis"`
	Illustrative *bool          `yaml:"illustrative"`
	Units        string         `yaml:"units"`
	Source       string         `yaml:"source"`
	Note         string         `yaml:"note"`
	PowerLaw     *powerLawFile  `yaml:"power_law"`
	LogLinear    *logLinearFile `yaml:"log_linear"`
	Strengths    *strengthsFile `yaml:"strengths"`
}

type powerLawFile struct {
	M1         *float64 `yaml:"m1"`
	LogA1      *float64 `yaml:"log_a1"`
	KneeCycles float64  `yaml:"knee_cycles"`
	M2         float64  `yaml:"m2"`
	LogA2      float64  `yaml:"log_a2"`
	CutoffMPa  float64  `yaml:"cutoff_mpa"`
}

type logLinearFile struct {
	B              *float64 `yaml:"b"`
	SUltMPa        *float64 `yaml:"s_ult_mpa"`
	ReferenceRatio float64  `yaml:"reference_ratio"`
}

type strengthsFile struct {
	TensileMPa     float64 `yaml:"tensile_mpa"`
	CompressiveMPa float64 `yaml:"compressive_mpa"`
	Source         string  `yaml:"source"`
}

type ruptureFile struct {
	Name         string   `yaml:"name"`
	Material     string   `yaml:"material"`
	Application  string   `yaml:"application"`
	Side         string   `yaml:"side"`
	Basis        string   `yaml:"basis"`
	Illustrative *bool    `yaml:"illustrative"`
	Units        string   `yaml:"units"`
	TimeUnits    string   `yaml:"time_units"`
	Source       string   `yaml:"source"`
	Note         string   `yaml:"note"`
	A            *float64 `yaml:"a"`
	B            *float64 `yaml:"b"`
	SUltMPa      *float64 `yaml:"s_ult_mpa"`
}

// ParseLibrary parses and validates a curve library from YAML bytes:
//
//	curves:
//	  - name: dnv-c203-d-air
//	    form: power_law            # or log_linear
//	    material: …
//	    application: …
//	    mode: range                # compression-compression, tension-tension
//	    environment: air           # seawater_cp, free_corrosion, n/a (required)
//	    basis: characteristic      # or mean
//	    illustrative: false        # must be stated
//	    units: MPa
//	    source: …
//	    note: …
//	    power_law: {m1: 3, log_a1: 12.164, knee_cycles: 1.0e7, m2: 5, log_a2: 15.606}
//	    # log_linear: {b: 0.07, s_ult_mpa: 1000, reference_ratio: 0}
//	    strengths: {tensile_mpa: …, compressive_mpa: …, source: …}
//	rupture:
//	  - name: …, material: …, side: compression, basis: mean,
//	    illustrative: true, units: MPa, time_units: h, source: …, note: …,
//	    a: …, b: …, s_ult_mpa: …
//
// Unknown fields, a second YAML document, duplicate names and any invalid
// curve are errors naming the curve and the field.
func ParseLibrary(data []byte) (lib *Library, err error) {
	// The YAML parser is third-party code: a panic inside it on hostile
	// input becomes an error here, never a crash of the ledger.
	defer func() {
		if r := recover(); r != nil {
			lib, err = nil, fmt.Errorf("parse curve library: YAML parser failed: %v", r)
		}
	}()
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	var f libraryFile
	if err := dec.Decode(&f); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, errors.New("parse curve library: empty document")
		}
		return nil, fmt.Errorf("parse curve library: %w", err)
	}
	var extra yaml.Node
	if err := dec.Decode(&extra); !errors.Is(err, io.EOF) {
		return nil, errors.New("parse curve library: more than one YAML document")
	}
	lib = &Library{}
	for i, cf := range f.Curves {
		c, err := cf.curve()
		if err != nil {
			return nil, fmt.Errorf("parse curve library: curves[%d] %q: %w", i, cf.Name, err)
		}
		lib.Curves = append(lib.Curves, c)
	}
	for i, rf := range f.Rupture {
		r, err := rf.rupture()
		if err != nil {
			return nil, fmt.Errorf("parse curve library: rupture[%d] %q: %w", i, rf.Name, err)
		}
		lib.Ruptures = append(lib.Ruptures, r)
	}
	if err := lib.Validate(); err != nil {
		return nil, fmt.Errorf("parse curve library: %w", err)
	}
	return lib, nil
}

func (cf curveFile) curve() (Curve, error) {
	if cf.Illustrative == nil {
		return Curve{}, errors.New("illustrative: must be stated (true or false)")
	}
	if cf.Environment == "" {
		return Curve{}, errors.New("environment: must be stated (air, seawater_cp, free_corrosion or n/a)")
	}
	env, err := ParseEnvironment(cf.Environment)
	if err != nil {
		return Curve{}, fmt.Errorf("environment: %w", err)
	}
	c := Curve{
		Name: cf.Name, Form: Form(cf.Form), Material: cf.Material, Application: cf.Application,
		Mode: Mode(cf.Mode), Environment: env, Basis: Basis(cf.Basis), Illustrative: *cf.Illustrative,
		Units: cf.Units, Source: cf.Source, Note: cf.Note,
	}
	switch c.Form {
	case FormPowerLaw:
		if cf.LogLinear != nil {
			return Curve{}, errors.New("log_linear: block given for a power_law curve")
		}
		p := cf.PowerLaw
		if p == nil {
			return Curve{}, errors.New("power_law: block missing")
		}
		if p.M1 == nil || p.LogA1 == nil {
			return Curve{}, errors.New("power_law: m1 and log_a1 are required")
		}
		c.PowerLaw = PowerLaw{M1: *p.M1, LogA1: *p.LogA1, KneeCycles: p.KneeCycles,
			M2: p.M2, LogA2: p.LogA2, CutoffMPa: p.CutoffMPa}
	case FormLogLinear:
		if cf.PowerLaw != nil {
			return Curve{}, errors.New("power_law: block given for a log_linear curve")
		}
		l := cf.LogLinear
		if l == nil {
			return Curve{}, errors.New("log_linear: block missing")
		}
		if l.B == nil || l.SUltMPa == nil {
			return Curve{}, errors.New("log_linear: b and s_ult_mpa are required")
		}
		c.LogLinear = LogLinear{B: *l.B, SUltMPa: *l.SUltMPa, ReferenceRatio: l.ReferenceRatio}
	default:
		return Curve{}, fmt.Errorf("form: %q is not power_law or log_linear", cf.Form)
	}
	if s := cf.Strengths; s != nil {
		c.Strengths = Strengths{TensileMPa: s.TensileMPa, CompressiveMPa: s.CompressiveMPa, Source: s.Source}
		if !c.Strengths.Present() {
			return Curve{}, errors.New("strengths: block is empty")
		}
	}
	return c, nil
}

func (rf ruptureFile) rupture() (Rupture, error) {
	if rf.Illustrative == nil {
		return Rupture{}, errors.New("illustrative: must be stated (true or false)")
	}
	if rf.A == nil || rf.B == nil || rf.SUltMPa == nil {
		return Rupture{}, errors.New("a, b and s_ult_mpa are required")
	}
	return Rupture{
		Name: rf.Name, Material: rf.Material, Application: rf.Application, Side: Side(rf.Side),
		Basis: Basis(rf.Basis), Illustrative: *rf.Illustrative, Units: rf.Units, TimeUnits: rf.TimeUnits,
		Source: rf.Source, Note: rf.Note, A: *rf.A, B: *rf.B, SUltMPa: *rf.SUltMPa,
	}, nil
}

// Validate checks every curve, and that names are unique across S-N and
// stress-rupture curves and the library is not empty.
func (l *Library) Validate() error {
	if l == nil || len(l.Curves)+len(l.Ruptures) == 0 {
		return errors.New("curve library is empty")
	}
	seen := map[string]bool{}
	for _, c := range l.Curves {
		if err := c.Validate(); err != nil {
			return err
		}
		if seen[c.Name] {
			return fmt.Errorf("curve %q: name used twice", c.Name)
		}
		seen[c.Name] = true
	}
	for _, r := range l.Ruptures {
		if err := r.Validate(); err != nil {
			return err
		}
		if seen[r.Name] {
			return fmt.Errorf("rupture curve %q: name used twice", r.Name)
		}
		seen[r.Name] = true
	}
	return nil
}

// Curve returns the S-N curve of the given name (a copy).
func (l *Library) Curve(name string) (Curve, error) {
	if l != nil {
		for _, c := range l.Curves {
			if c.Name == name {
				return c, nil
			}
		}
	}
	return Curve{}, fmt.Errorf("S-N curve %q: %w", name, ErrUnknownCurve)
}

// Rupture returns the stress-rupture curve of the given name (a copy).
func (l *Library) Rupture(name string) (Rupture, error) {
	if l != nil {
		for _, r := range l.Ruptures {
			if r.Name == name {
				return r, nil
			}
		}
	}
	return Rupture{}, fmt.Errorf("stress-rupture curve %q: %w", name, ErrUnknownCurve)
}

// Names returns the names of the S-N curves and of the stress-rupture
// curves, in file order.
func (l *Library) Names() (curves, ruptures []string) {
	if l == nil {
		return nil, nil
	}
	for _, c := range l.Curves {
		curves = append(curves, c.Name)
	}
	for _, r := range l.Ruptures {
		ruptures = append(ruptures, r.Name)
	}
	return curves, ruptures
}
