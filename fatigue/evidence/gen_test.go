package evidence

import "math"

// dive describes a generated dive sampled once a second: surface, linear
// descent to PeakMPa, hold at PeakMPa, linear ascent, surface.
//
// Strain model (µε), with x = p/PeakMPa:
//   - descent and surface before:      ε = C·p
//   - ascent:                          ε = C·p·(1 + H·4x(1−x))
//   - after the hold, where p < 2 % of peak (the samples the residual
//     measure averages): the branch value above + ResidualUE
//   - inside the hold as Phases finds it (p ≥ 0.95·peak, ramps included):
//     the branch value above plus CreepUEPerS·(t − HoldStartS)
//   - everywhere: + NoiseUE·sin(1.3·i) (deterministic)
//
// Pressure (MPa) carries PNoiseMPa·sin(0.7·i)·4x(1−x) on the ramps, so that
// it is zero at the surface and at the peak.
type dive struct {
	SurfaceS, DescentS, HoldS, AscentS, AfterS int
	PeakMPa                                    float64
	C, H, ResidualUE, CreepUEPerS              float64
	NoiseUE, PNoiseMPa                         float64
}

// profile generates the dive's profile with one gauge, "hoop".
func (d dive) profile() Profile {
	n := d.SurfaceS + d.DescentS + d.HoldS + d.AscentS + d.AfterS + 1
	p := Profile{TimeS: make([]float64, n), Pressure: make([]float64, n), Strain: map[string][]float64{"hoop": make([]float64, n)}}
	t1 := d.SurfaceS
	t2 := t1 + d.DescentS
	t3 := t2 + d.HoldS
	t4 := t3 + d.AscentS
	asc := make([]bool, n)
	for i := range n {
		var pr float64
		switch {
		case i <= t1:
		case i <= t2:
			pr = d.PeakMPa * float64(i-t1) / float64(d.DescentS)
		case i <= t3:
			pr = d.PeakMPa
		case i <= t4:
			pr = d.PeakMPa * (1 - float64(i-t3)/float64(d.AscentS))
			asc[i] = true
		}
		x := pr / d.PeakMPa
		pr += d.PNoiseMPa * math.Sin(0.7*float64(i)) * 4 * x * (1 - x)
		p.TimeS[i] = float64(i)
		p.Pressure[i] = pr
	}
	// Hold as Phases will find it, from the noiseless ramps.
	level := DefaultHoldFrac * d.PeakMPa
	hs, he := -1, -1
	for i, v := range p.Pressure {
		if v >= level {
			if hs < 0 {
				hs = i
			}
			he = i
		}
	}
	s := p.Strain["hoop"]
	for i := range n {
		pr := p.Pressure[i]
		x := pr / d.PeakMPa
		e := d.C * pr
		if asc[i] {
			e *= 1 + d.H*4*x*(1-x)
		}
		if i > he && pr < 0.02*d.PeakMPa {
			e += d.ResidualUE
		}
		if i >= hs && i <= he {
			e += d.CreepUEPerS * (p.TimeS[i] - p.TimeS[hs])
		}
		s[i] = e + d.NoiseUE*math.Sin(1.3*float64(i))
	}
	return p
}

// deepDive is a 40 MPa (about 4000 m) dive: 600 s at the surface, 1810 s
// descent, 1 h at depth, 1810 s ascent, 600 s at the surface. The ramps of
// 1810 s put the 95 % crossings between samples (at 1719.5 s into each
// ramp), so the hold found by Phases is symmetric: 91 ramp samples each
// side.
func deepDive() dive {
	return dive{SurfaceS: 600, DescentS: 1810, HoldS: 3600, AscentS: 1810, AfterS: 600, PeakMPa: 40}
}
