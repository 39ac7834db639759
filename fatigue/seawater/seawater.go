// Package seawater converts between depth in seawater and sea pressure.
//
// hulltally uses the UNESCO 1983 algorithm (Fofonoff & Millard, "Algorithms
// for computation of fundamental properties of seawater", UNESCO Technical
// Papers in Marine Science 44, 1983), depth from pressure, with its inverse
// found by Newton's method from the closed-form start of Saunders (1981,
// "Practical conversion of pressure to depth", J. Phys. Oceanogr. 11).
// The UNESCO formula assumes a standard ocean (0 °C, 35 PSU); TEOS-10
// (gsw.z_from_p) differs from it by about 1 m at full ocean depth. The
// tool records which one it used: UNESCO 1983.
//
// Sea pressure is gauge pressure: absolute pressure minus one standard
// atmosphere (0.101325 MPa). 1 dbar = 0.01 MPa = 10 kPa.
package seawater

import (
	"errors"
	"fmt"
	"math"
)

// Pressure units, as multiples of one MPa.
const (
	// StandardAtmosphereMPa is one standard atmosphere (exact by definition).
	StandardAtmosphereMPa = 0.101325
	// DbarPerMPa is the number of decibar in one megapascal.
	DbarPerMPa = 100.0
	// BarPerMPa is the number of bar in one megapascal.
	BarPerMPa = 10.0
	// PsiPerMPa is the number of pound-force per square inch in one
	// megapascal (1 psi = 6894.757293168 Pa, from the definition of the
	// pound-force and the inch).
	PsiPerMPa = 1e6 / 6894.757293168
)

// Method names the depth–pressure algorithm, for reports and records.
const Method = "UNESCO 1983 (Fofonoff & Millard), inverse by Newton from Saunders 1981"

// ErrLatitude is returned for a latitude outside [-90, 90] degrees.
var ErrLatitude = errors.New("latitude must be between -90 and 90 degrees")

func gravity(lat, pDbar float64) float64 {
	x := math.Sin(lat * math.Pi / 180)
	x *= x
	return 9.780318*(1.0+(5.2788e-3+2.36e-5*x)*x) + 1.092e-6*pDbar
}

// DepthFromPressure returns the depth in metres (positive down) for a sea
// pressure in dbar at latitude lat in degrees, by UNESCO 1983.
func DepthFromPressure(pDbar, lat float64) (float64, error) {
	if math.IsNaN(lat) || lat < -90 || lat > 90 {
		return 0, fmt.Errorf("depth from pressure: %w (got %v)", ErrLatitude, lat)
	}
	return depth(pDbar, lat), nil
}

func depth(p, lat float64) float64 {
	return ((((-1.82e-15*p+2.279e-10)*p-2.2512e-5)*p + 9.72659) * p) / gravity(lat, p)
}

// ddepth is d(depth)/dp, analytic.
func ddepth(p, lat float64) float64 {
	num := ((((-1.82e-15*p+2.279e-10)*p-2.2512e-5)*p + 9.72659) * p)
	dnum := ((-4*1.82e-15*p+3*2.279e-10)*p-2*2.2512e-5)*p + 9.72659
	g := gravity(lat, p)
	return (dnum*g - num*1.092e-6) / (g * g)
}

// PressureFromDepth returns the sea pressure in dbar at depth z metres
// (positive down) and latitude lat in degrees: the inverse of
// DepthFromPressure to better than 1e-9 dbar.
func PressureFromDepth(z, lat float64) (float64, error) {
	if math.IsNaN(lat) || lat < -90 || lat > 90 {
		return 0, fmt.Errorf("pressure from depth: %w (got %v)", ErrLatitude, lat)
	}
	if math.IsNaN(z) || math.IsInf(z, 0) {
		return 0, fmt.Errorf("pressure from depth: depth %v is not a finite number", z)
	}
	return pressure(z, lat), nil
}

func pressure(z, lat float64) float64 {
	// Saunders (1981) closed form as the start.
	s := math.Sin(lat * math.Pi / 180)
	c1 := (5.92 + 5.25*s*s) * 1e-3
	disc := (1-c1)*(1-c1) - 8.84e-6*z
	var p float64
	if disc > 0 {
		p = ((1 - c1) - math.Sqrt(disc)) / 4.42e-6
	} else {
		p = z
	}
	for i := 0; i < 20; i++ {
		f := depth(p, lat) - z
		step := f / ddepth(p, lat)
		p -= step
		if math.Abs(step) < 1e-10 {
			break
		}
	}
	return p
}

// DepthToMPa converts a depth in metres to gauge pressure in MPa.
func DepthToMPa(z, lat float64) float64 { return pressure(z, lat) / DbarPerMPa }

// MPaToDepth converts gauge pressure in MPa to depth in metres.
func MPaToDepth(pMPa, lat float64) float64 { return depth(pMPa*DbarPerMPa, lat) }

// ValidLatitude reports whether lat is a usable latitude in degrees.
func ValidLatitude(lat float64) bool { return !math.IsNaN(lat) && lat >= -90 && lat <= 90 }
