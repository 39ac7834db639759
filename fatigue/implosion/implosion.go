// Package implosion gives order-of-magnitude figures of the hazard of a
// hull imploding at depth, for planning safety distances: the internal
// volume, the energy the sea releases when it fills that volume, its TNT
// equivalent and the time the collapse takes.
//
// Water is a very stiff spring (about 4 % denser at 1000 atm), so a hull
// breached at depth is filled in milliseconds and the energy comes out as
// a pressure pulse heard far away. The figures here are for planning the
// stand-off of support vessels, divers, vehicles and neighbouring
// housings that could implode in sympathy. They are an order of magnitude
// only and no substitute for the rules in force or the design's own
// analysis; every Result carries its assumptions in words.
//
// Energy: the work the sea does filling an empty volume V at gauge
// pressure p, E_pV = p·V, plus the elastic energy stored in the
// compressed water that refills it, E_w = p²·V/(2K), K the seawater bulk
// modulus at that pressure.
//
// Collapse time: Rayleigh (1917, "On the pressure developed in a liquid
// during the collapse of a spherical cavity", Phil. Mag. 34) for an empty
// spherical cavity of radius R in a liquid of density ρ at pressure p:
// t ≈ 0.915·R·√(ρ/p), with R the radius of the sphere of the hull's
// volume.
//
// Seawater properties: TEOS-10 (the python3-gsw 3.6.16 implementation)
// at Absolute Salinity 35.16504 g/kg and Conservative Temperature 2 °C,
// read at the pressures tabled below and interpolated linearly in
// pressure (1 MPa = 100 dbar), clamped at the ends of the table. The
// adiabatic bulk modulus is K = ρc²: 2.185 GPa at 0 dbar, 2.245 at 1000,
// 2.436 at 4000, 2.573 at 6000, 2.859 at 10000 dbar. The density is
// 1027.97 kg/m³ at 0 dbar and 1070.01 at 10000 dbar, taken linear in
// between — an approximation (the true curve bends slightly), good to
// well under 1 % and immaterial to an order of magnitude.
//
// The package is pure: no I/O, no clock, no package-level mutable state.
package implosion

import (
	"errors"
	"fmt"
	"math"
)

// Shape is the shape of a hull's pressure boundary.
type Shape string

// The shapes.
const (
	// Cylinder is a circular cylinder closed at both ends.
	Cylinder Shape = "cylinder"
	// Sphere is a sphere.
	Sphere Shape = "sphere"
)

// EndClosure is how a cylinder is closed at its ends.
type EndClosure string

// The end closures.
const (
	// EndFlat is a flat end (or a closure whose inner volume is counted
	// in LengthM): V = π·a²·L. The default for a cylinder.
	EndFlat EndClosure = "flat"
	// EndHemispherical is a hemispherical head at each end, beyond the
	// cylindrical length: V = π·a²·L + 4/3·π·a³.
	EndHemispherical EndClosure = "hemispherical"
)

// TNTMJPerKg is the energy of one kilogram of TNT in MJ: 4.184 MJ/kg,
// the usual convention (1 kg TNT ≡ 1000 kcal).
const TNTMJPerKg = 4.184

// RayleighFactor is the factor of Rayleigh's collapse time of an empty
// spherical cavity, t = 0.915·R·√(ρ/p) (Rayleigh 1917).
const RayleighFactor = 0.915

// SurfaceDensity is the density of seawater at 0 dbar, kg/m³ (TEOS-10,
// SA 35.16504 g/kg, CT 2 °C, python3-gsw 3.6.16).
const SurfaceDensity = 1027.97

// Geometry is the inner geometry of a hull's pressure boundary.
type Geometry struct {
	// Shape is Cylinder or Sphere.
	Shape Shape
	// InnerRadiusM is the inner radius a in m, > 0.
	InnerRadiusM float64
	// LengthM is, for a cylinder, the inner length L in m of its
	// cylindrical part: between the inner faces of flat ends, or between
	// the tangent lines of hemispherical heads (the heads lie beyond
	// it). > 0 for flat ends, ≥ 0 for hemispherical heads; zero for a
	// sphere.
	LengthM float64
	// EndClosure is a cylinder's end closure; empty means EndFlat, and
	// the Result says it was assumed. The ledger's hull spec has no
	// closure field yet, so it gives none and flat ends are assumed.
	// Empty for a sphere.
	EndClosure EndClosure
}

// Volume returns the inner volume in m³: π·a²·L for a cylinder with flat
// ends, π·a²·L + 4/3·π·a³ with hemispherical heads, 4/3·π·a³ for a
// sphere.
func (g Geometry) Volume() (float64, error) {
	if err := g.Validate(); err != nil {
		return 0, err
	}
	a := g.InnerRadiusM
	sphere := 4.0 / 3.0 * math.Pi * a * a * a
	switch g.Shape {
	case Sphere:
		return sphere, nil
	default:
		v := math.Pi * a * a * g.LengthM
		if g.EndClosure == EndHemispherical {
			v += sphere
		}
		return v, nil
	}
}

// Validate checks the shape, a positive finite radius, and a length and
// closure that fit the shape.
func (g Geometry) Validate() error {
	if !(g.InnerRadiusM > 0) || math.IsInf(g.InnerRadiusM, 0) {
		return fmt.Errorf("inner radius %v m must be a positive finite number", g.InnerRadiusM)
	}
	if math.IsNaN(g.LengthM) || math.IsInf(g.LengthM, 0) || g.LengthM < 0 {
		return fmt.Errorf("length %v m must be a non-negative finite number", g.LengthM)
	}
	switch g.Shape {
	case Sphere:
		if g.LengthM != 0 {
			return errors.New("a sphere has no length")
		}
		if g.EndClosure != "" {
			return fmt.Errorf("a sphere has no end closure, got %q", g.EndClosure)
		}
	case Cylinder:
		switch g.EndClosure {
		case "", EndFlat:
			if g.LengthM == 0 {
				return errors.New("a cylinder with flat ends needs a positive length")
			}
		case EndHemispherical:
		default:
			return fmt.Errorf("end closure %q: want flat or hemispherical", g.EndClosure)
		}
	default:
		return fmt.Errorf("shape %q: want cylinder or sphere", g.Shape)
	}
	return nil
}

// node is one row of the seawater table.
type node struct {
	dbar float64
	v    float64
}

// bulkModulusTable is the adiabatic bulk modulus K = ρc² of seawater in
// GPa (TEOS-10, python3-gsw 3.6.16, SA 35.16504 g/kg, CT 2 °C). A
// function returning an array value, so that no table is package-level
// mutable state.
func bulkModulusTable() [5]node {
	return [5]node{{0, 2.185}, {1000, 2.245}, {4000, 2.436}, {6000, 2.573}, {10000, 2.859}}
}

// densityTable is the seawater density in kg/m³ (TEOS-10, as above).
func densityTable() [2]node {
	return [2]node{{0, SurfaceDensity}, {10000, 1070.01}}
}

// interp interpolates linearly in pressure, clamped at the ends; NaN
// gives NaN.
func interp(t []node, dbar float64) float64 {
	if math.IsNaN(dbar) {
		return dbar
	}
	if dbar <= t[0].dbar {
		return t[0].v
	}
	for i := 1; i < len(t); i++ {
		if dbar <= t[i].dbar {
			a, b := t[i-1], t[i]
			return a.v + (b.v-a.v)*(dbar-a.dbar)/(b.dbar-a.dbar)
		}
	}
	return t[len(t)-1].v
}

// BulkModulusGPa returns the adiabatic bulk modulus of seawater in GPa at
// a sea pressure in MPa, from the TEOS-10 table (see the package
// comment), linear in pressure and clamped outside 0…100 MPa. Clamping
// above 100 MPa keeps K lower than it is, which makes the elastic energy
// larger: the safe side.
func BulkModulusGPa(pMPa float64) float64 {
	t := bulkModulusTable()
	return interp(t[:], pMPa*100)
}

// DensityKgM3 returns the density of seawater in kg/m³ at a sea pressure
// in MPa: 1027.97 at 0 dbar to 1070.01 at 10000 dbar, linear (an
// approximation), clamped outside.
func DensityKgM3(pMPa float64) float64 {
	t := densityTable()
	return interp(t[:], pMPa*100)
}

// Result is the implosion hazard of one hull at one pressure.
type Result struct {
	// InternalVolumeM3 is the inner volume V in m³.
	InternalVolumeM3 float64
	// PressureMPa is the gauge (sea) pressure p in MPa.
	PressureMPa float64
	// EnergyMJ is the total energy, PVEnergyMJ + WaterElasticMJ, in MJ.
	EnergyMJ float64
	// PVEnergyMJ is p·V in MJ.
	PVEnergyMJ float64
	// WaterElasticMJ is p²·V/(2K) in MJ.
	WaterElasticMJ float64
	// TNTEquivalentKg is EnergyMJ / TNTMJPerKg, in kg of TNT.
	TNTEquivalentKg float64
	// CollapseTimeMS is Rayleigh's collapse time of an empty sphere of
	// volume V in ms, with the surface density (the shorter time).
	CollapseTimeMS float64
	// CollapseTimeInSituMS is the same with the density at pressure, in
	// ms, for information; at most 2 % longer.
	CollapseTimeInSituMS float64
	// EquivalentSphereRadiusM is the radius R of a sphere of volume V,
	// in m.
	EquivalentSphereRadiusM float64
	// BulkModulusGPa is the seawater bulk modulus K used, in GPa.
	BulkModulusGPa float64
	// DensityKgM3 is the seawater density at pressure, in kg/m³.
	DensityKgM3 float64
	// Assumptions are the caveats, in words, to print with the figures.
	Assumptions []string
}

// Estimate returns the implosion hazard of a hull of geometry g at a
// gauge (sea) pressure of pMPa MPa (> 0, finite): the hull's rated or
// planned depth converted by the caller.
func Estimate(g Geometry, pMPa float64) (Result, error) {
	v, err := g.Volume()
	if err != nil {
		return Result{}, fmt.Errorf("implosion: %w", err)
	}
	if !(pMPa > 0) || math.IsInf(pMPa, 0) {
		return Result{}, fmt.Errorf("implosion: pressure %v MPa must be a positive finite number", pMPa)
	}
	k := BulkModulusGPa(pMPa)
	rho := DensityKgM3(pMPa)
	r := Result{InternalVolumeM3: v, PressureMPa: pMPa, BulkModulusGPa: k, DensityKgM3: rho}
	// MPa × m³ = MJ.
	r.PVEnergyMJ = pMPa * v
	r.WaterElasticMJ = pMPa * pMPa * v / (2 * k * 1000)
	r.EnergyMJ = r.PVEnergyMJ + r.WaterElasticMJ
	r.TNTEquivalentKg = r.EnergyMJ / TNTMJPerKg
	r.EquivalentSphereRadiusM = math.Cbrt(3 * v / (4 * math.Pi))
	// The collapse time takes the surface density rather than the
	// density at pressure. Density rises with pressure, so the surface
	// value is the lowest in the water column and gives the SHORTER time
	// (by at most √(1070.01/1027.97) − 1 ≈ 2 %). A shorter collapse
	// releases the same energy faster, as a sharper pulse of higher
	// peak: the harsher case, which is the safe side for planning
	// stand-off distances. The in-situ figure is returned beside it.
	r.CollapseTimeMS = rayleighMS(r.EquivalentSphereRadiusM, SurfaceDensity, pMPa)
	r.CollapseTimeInSituMS = rayleighMS(r.EquivalentSphereRadiusM, rho, pMPa)
	r.Assumptions = assumptions(g, pMPa)
	return r, nil
}

// rayleighMS is 0.915·R·√(ρ/p) in ms, p in MPa.
func rayleighMS(rM, rho, pMPa float64) float64 {
	return RayleighFactor * rM * math.Sqrt(rho/(pMPa*1e6)) * 1000
}

func assumptions(g Geometry, pMPa float64) []string {
	a := []string{
		"order of magnitude only: for planning the safety distances of support vessels, divers, vehicles and neighbouring housings that could implode in sympathy; not a substitute for the rules in force or the design's own analysis",
		"energy = p·V, the work the sea does filling the empty volume at gauge pressure p, plus p²·V/(2K), the elastic energy of the compressed water that refills it; how it divides between the pressure pulse, heat, turbulence and the wreck is not modelled",
		"volume: the inner volume of the pressure boundary, ignoring the equipment inside — an upper bound of the air volume that collapses",
		"collapse time: Rayleigh (1917) for an empty spherical cavity of the same volume, t ≈ 0.915·R·√(ρ/p); a real hull fails at a fold or crack, a cylinder does not collapse as a sphere and the air inside cushions the end of the collapse; the surface density is used, giving the shorter (harsher) time",
		"TNT equivalent at 4.184 MJ/kg (the usual convention), of the total energy; an implosion's pulse is not a charge's, and the equivalent only scales the hazard",
		"seawater bulk modulus and density from TEOS-10 (python3-gsw 3.6.16, SA 35.16504 g/kg, CT 2 °C), linear in pressure between tabled points",
	}
	if g.Shape == Cylinder && g.EndClosure == "" {
		a = append(a, "end closures not specified: flat ends assumed (V = π·a²·L); domed heads beyond the length L add volume and energy, up to 4/3·π·a³ for hemispheres")
	}
	if pMPa > 100 {
		a = append(a, fmt.Sprintf("pressure %.4g MPa is beyond the seawater table (100 MPa): bulk modulus and density held at their 100 MPa values", pMPa))
	}
	return a
}
