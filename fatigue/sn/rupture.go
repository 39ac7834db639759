package sn

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// Side is the sign of stress a stress-rupture curve applies to.
type Side string

// The sides of a stress-rupture curve.
const (
	// SideCompression counts only compressive (negative) stress.
	SideCompression Side = "compression"
	// SideTension counts only tensile (positive) stress.
	SideTension Side = "tension"
)

// TimeUnitsHours is the only time unit of a stress-rupture curve.
const TimeUnitsHours = "h"

// Rupture is a time-to-rupture (stress-rupture, static fatigue) curve for
// sustained load:
//
//	log10 t_r = A − B·σ/σ_ult,  t_r in hours,
//
// σ the sustained stress magnitude on the curve's side and σ_ult the
// static strength on that side. At σ = σ_ult the curve gives 10^(A−B)
// hours, about the duration of a static strength test.
type Rupture struct {
	// Name is the library key.
	Name string
	// Material is the material, for example "glass/epoxy laminate".
	Material string
	// Application says which hull components the curve is meant for.
	Application string
	// Side says which sign of stress the curve counts.
	Side Side
	// Basis is mean or characteristic.
	Basis Basis
	// Illustrative marks placeholder data.
	Illustrative bool
	// Units is the stress unit, always MPa.
	Units string
	// TimeUnits is the time unit of t_r, always h.
	TimeUnits string
	// Source is the citation of the data.
	Source string
	// Note says how the curve may be used.
	Note string
	// A is the intercept, log10 of hours.
	A float64
	// B is the slope, decades of hours per unit of σ/σ_ult, > 0.
	B float64
	// SUltMPa is the static strength σ_ult on the curve's side, > 0.
	SUltMPa float64
}

// Validate checks metadata and parameters.
func (r Rupture) Validate() error {
	if err := r.validate(); err != nil {
		return fmt.Errorf("rupture curve %q: %w", r.Name, err)
	}
	return nil
}

func (r Rupture) validate() error {
	if strings.TrimSpace(r.Name) == "" || strings.TrimSpace(r.Name) != r.Name {
		return errors.New("name: must be non-empty without surrounding spaces")
	}
	if err := metadata(r.Material, r.Source, r.Units, r.Basis, r.Illustrative, r.Note); err != nil {
		return err
	}
	switch r.Side {
	case SideCompression, SideTension:
	default:
		return fmt.Errorf("side: %q is not compression or tension", r.Side)
	}
	if r.TimeUnits != TimeUnitsHours {
		return fmt.Errorf("time_units: %q is not known; rupture times are in hours (h)", r.TimeUnits)
	}
	if !finite(r.A) {
		return fmt.Errorf("a: must be finite, got %v", r.A)
	}
	if !finitePositive(r.B) {
		return fmt.Errorf("b: slope must be positive and finite, got %v", r.B)
	}
	if !finitePositive(r.SUltMPa) {
		return fmt.Errorf("s_ult_mpa: must be positive and finite, got %v", r.SUltMPa)
	}
	return nil
}

// Magnitude returns the part of a signed stress (MPa, compression
// negative) that the curve counts: |σ| on the curve's side, 0 otherwise.
func (r Rupture) Magnitude(stress float64) float64 {
	switch {
	case r.Side == SideCompression && stress < 0:
		return -stress
	case r.Side == SideTension && stress > 0:
		return stress
	}
	return 0
}

// Hours returns the time to rupture t_r in hours under a sustained signed
// stress (MPa, compression negative). Stress on the other side, or zero,
// gives +Inf; a magnitude at or above σ_ult gives 0 (immediate rupture).
// NaN stress gives NaN.
func (r Rupture) Hours(stress float64) float64 {
	if math.IsNaN(stress) {
		return math.NaN()
	}
	m := r.Magnitude(stress)
	if m <= 0 {
		return math.Inf(1)
	}
	if m >= r.SUltMPa {
		return 0
	}
	return math.Pow(10, r.A-r.B*m/r.SUltMPa)
}
