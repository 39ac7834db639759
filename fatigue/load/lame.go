package load

import (
	"fmt"
	"math"
)

// Shell is the wall of a thick cylinder or sphere: inner radius a and
// outer radius b in metres, 0 < a < b.
type Shell struct {
	// Inner is the inner radius a in m.
	Inner float64
	// Outer is the outer radius b in m.
	Outer float64
}

// NewShell returns the wall with inner radius a and outer radius b (m),
// checking 0 < a < b and finite values.
func NewShell(a, b float64) (Shell, error) {
	s := Shell{Inner: a, Outer: b}
	if err := s.Validate(); err != nil {
		return Shell{}, err
	}
	return s, nil
}

// Validate checks 0 < Inner < Outer, both finite.
func (s Shell) Validate() error {
	if !(s.Inner > 0) || math.IsInf(s.Inner, 0) {
		return fmt.Errorf("shell: inner radius must be a positive finite number of metres, got %v", s.Inner)
	}
	if !(s.Outer > 0) || math.IsInf(s.Outer, 0) {
		return fmt.Errorf("shell: outer radius must be a positive finite number of metres, got %v", s.Outer)
	}
	if s.Inner >= s.Outer {
		return fmt.Errorf("shell: inner radius %v m must be less than outer radius %v m", s.Inner, s.Outer)
	}
	return nil
}

// Thickness is the wall thickness b − a in m.
func (s Shell) Thickness() float64 { return s.Outer - s.Inner }

// MeanRadius is (a + b)/2 in m, the radius of the thin-wall formulas.
func (s Shell) MeanRadius() float64 { return (s.Inner + s.Outer) / 2 }

// CylinderHoopAt is the Lamé hoop stress at radius r per MPa of external
// pressure: −b²·(r² + a²) / (r²·(b² − a²)). r must lie in the wall.
func (s Shell) CylinderHoopAt(r float64) (float64, error) {
	if err := s.Validate(); err != nil {
		return 0, err
	}
	if !(r >= s.Inner && r <= s.Outer) {
		return 0, fmt.Errorf("cylinder hoop: radius %v m is outside the wall [%v, %v] m", r, s.Inner, s.Outer)
	}
	a2, b2 := s.Inner*s.Inner, s.Outer*s.Outer
	return -b2 * (r*r + a2) / (r * r * (b2 - a2)), nil
}

// CylinderHoopInner is the Lamé hoop stress at the inner surface per MPa
// of external pressure, the largest in magnitude: −2b²/(b² − a²).
func (s Shell) CylinderHoopInner() float64 {
	a2, b2 := s.Inner*s.Inner, s.Outer*s.Outer
	return -2 * b2 / (b2 - a2)
}

// CylinderHoopOuter is the Lamé hoop stress at the outer surface per MPa
// of external pressure: −(b² + a²)/(b² − a²).
func (s Shell) CylinderHoopOuter() float64 {
	a2, b2 := s.Inner*s.Inner, s.Outer*s.Outer
	return -(b2 + a2) / (b2 - a2)
}

// CylinderAxial is the Lamé axial stress of a closed-end cylinder per MPa
// of external pressure, uniform through the wall: −b²/(b² − a²).
func (s Shell) CylinderAxial() float64 {
	a2, b2 := s.Inner*s.Inner, s.Outer*s.Outer
	return -b2 / (b2 - a2)
}

// SphereHoopInner is the Lamé hoop (membrane) stress at the inner surface
// of a thick sphere per MPa of external pressure: −3b³/(2·(b³ − a³)).
func (s Shell) SphereHoopInner() float64 {
	a3, b3 := s.Inner*s.Inner*s.Inner, s.Outer*s.Outer*s.Outer
	return -3 * b3 / (2 * (b3 - a3))
}

// ThinCylinderHoop is the thin-wall hoop stress per MPa of external
// pressure, −R/t, with R the mean radius.
func (s Shell) ThinCylinderHoop() float64 { return -s.MeanRadius() / s.Thickness() }

// ThinCylinderAxial is the thin-wall axial stress of a closed-end
// cylinder per MPa of external pressure, −R/(2t), with R the mean radius.
func (s Shell) ThinCylinderAxial() float64 { return -s.MeanRadius() / (2 * s.Thickness()) }

// ThinSphere is the thin-wall membrane stress of a sphere per MPa of
// external pressure, −R/(2t), with R the mean radius.
func (s Shell) ThinSphere() float64 { return -s.MeanRadius() / (2 * s.Thickness()) }

// LameCase names which Lamé stress a default transfer uses.
type LameCase string

// The Lamé cases offered as default transfers.
const (
	// CylinderHoopInner is the hoop stress at the cylinder's inner
	// surface, the largest.
	CylinderHoopInner LameCase = "cylinder_hoop_inner"
	// CylinderHoopOuter is the hoop stress at the cylinder's outer
	// surface.
	CylinderHoopOuter LameCase = "cylinder_hoop_outer"
	// CylinderAxial is the axial stress of a closed-end cylinder.
	CylinderAxial LameCase = "cylinder_axial"
	// SphereHoopInner is the hoop stress at a thick sphere's inner
	// surface (hemispherical end caps).
	SphereHoopInner LameCase = "sphere_hoop_inner"
)

// NewLame returns the Lamé default transfer for the given case and wall
// (inner radius a, outer radius b in m). The description says it is the
// isotropic default.
func NewLame(c LameCase, a, b float64) (Transfer, error) {
	s, err := NewShell(a, b)
	if err != nil {
		return Transfer{}, fmt.Errorf("lame transfer %s: %w", c, err)
	}
	var f float64
	var what string
	switch c {
	case CylinderHoopInner:
		f, what = s.CylinderHoopInner(), "cylinder hoop at inner surface, −2b²/(b²−a²)"
	case CylinderHoopOuter:
		f, what = s.CylinderHoopOuter(), "cylinder hoop at outer surface, −(b²+a²)/(b²−a²)"
	case CylinderAxial:
		f, what = s.CylinderAxial(), "cylinder axial, closed ends, −b²/(b²−a²)"
	case SphereHoopInner:
		f, what = s.SphereHoopInner(), "sphere hoop at inner surface, −3b³/(2(b³−a³))"
	default:
		return Transfer{}, fmt.Errorf("lame transfer: unknown case %q", c)
	}
	t := Transfer{Basis: BasisLame, Factor: f,
		Description: fmt.Sprintf("Lamé isotropic default %.6g MPa/MPa: %s, a = %.6g m, b = %.6g m", f, what, a, b)}
	if err := t.Validate(); err != nil {
		return Transfer{}, err
	}
	return t, nil
}
