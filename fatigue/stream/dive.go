// Package stream counts a dive's load while its samples stream past, block
// by block, in bounded memory: the rainflow cycles of gauge pressure and of
// each strain gauge, the time at pressure, the decimated profile, and the
// data-quality findings of the record.
//
// The package is pure: plain slices in (times in s from the dive's first
// sample, gauge pressures in MPa, strains in µε, temperatures in °C), no
// I/O, no clock, no package-level state. Converting a logged column to
// gauge pressure, and storing what is counted, is the caller's job.
//
// A record cut off below the surface is counted on the safe side: its
// pressure cycle is closed to the surface so that it is counted whole, not
// as a half, and the unrecorded legs between the surface and the first or
// last recorded pressure are charged as time at the dive's highest
// recorded pressure, for the time they take at a configured slow rate.
package stream

import (
	"math"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/rainflow"
)

// Config is the settings of a dive's count.
type Config struct {
	// GateMPa is the rainflow hysteresis gate of the gauge pressure, MPa.
	GateMPa float64
	// GateUE is the rainflow hysteresis gate of each strain gauge, µε.
	GateUE float64
	// HoldBinMPa is the bin width of the time-at-pressure histogram, MPa.
	HoldBinMPa float64
	// HoldMaxBins bounds the levels of the time at pressure (0: no limit).
	HoldMaxBins int
	// SurfaceToleranceMPa: a sample above this gauge pressure is below the
	// surface; a record that starts or ends above it is cut off.
	SurfaceToleranceMPa float64
	// MaxGapS is the longest interval between samples below the surface
	// that is not a gap, s.
	MaxGapS float64
	// MaxIntervalS is the coarsest sample interval below the surface that
	// is not coarse, s.
	MaxIntervalS float64
	// CutLegMPaPerS is the slow rate of travel, MPa/s, at which the
	// unrecorded leg of a cut-off record is charged.
	CutLegMPaPerS float64
}

// Counts is what a dive's count found.
type Counts struct {
	// Pressure is the rainflow cycles of gauge pressure, MPa.
	Pressure []rainflow.Cycle
	// Strain is per gauge (in the order given to NewDive) the rainflow
	// cycles of strain, µε.
	Strain [][]rainflow.Cycle
	// Holds is the time at pressure, levels at their bins' upper edges.
	Holds []assess.Hold
	// Profile is the decimated profile.
	Profile *Profile
}

// Dive counts one dive's load from blocks of samples.
type Dive struct {
	cfg      Config
	pressure *rainflow.Counter
	strains  []*rainflow.Counter
	holds    *assess.HoldHistogram
	profile  *Decimator
	quality  *Quality
}

// NewDive makes a counter for a dive with the named strain gauges.
func NewDive(cfg Config, gauges []string) *Dive {
	d := &Dive{cfg: cfg, pressure: rainflow.NewCounter(cfg.GateMPa), holds: assess.NewHoldHistogram(cfg.HoldBinMPa),
		profile: NewDecimator(gauges), quality: NewQuality(cfg.SurfaceToleranceMPa, cfg.MaxGapS, cfg.MaxIntervalS)}
	for range gauges {
		d.strains = append(d.strains, rainflow.NewCounter(cfg.GateUE))
	}
	return d
}

// Add feeds a block: times t (s from the dive's first sample, not
// decreasing), gauge pressures p (MPa), per gauge strains (µε) and
// temperatures temp (°C; nil when not logged), all of the length of t.
func (d *Dive) Add(t, p []float64, strains [][]float64, temp []float64) {
	if len(t) == 0 {
		return
	}
	if !d.quality.have && len(p) > 0 && p[0] > d.cfg.SurfaceToleranceMPa {
		// The record starts below the surface: the dive began from the
		// surface all the same, so its first cycle starts at 0.
		d.pressure.Add([]float64{0})
	}
	d.pressure.Add(p)
	d.quality.Add(t, p, temp)
	d.holds.Add(t, p)
	for i, c := range d.strains {
		c.Add(strains[i])
	}
	d.profile.Add(t, p, strains)
}

// Quality is the record's data-quality watch; its findings are complete
// once Finish has run.
func (d *Dive) Quality() *Quality { return d.quality }

// cutLegS is the time charged for the unrecorded leg of a cut-off record
// from pressure p to the surface.
func (d *Dive) cutLegS(p float64) float64 { return math.Max(p, 0) / d.cfg.CutLegMPaPerS }

// Drain hands over the cycles counted so far of every series holding at
// least atLeast of them, and forgets them (see rainflow.Counter.Drain):
// series 0 is gauge pressure, series i > 0 the strain of gauge i-1. The
// slice given to fn is valid only during the call. Finish then returns
// only the cycles not drained.
func (d *Dive) Drain(atLeast int, fn func(series int, cs []rainflow.Cycle)) {
	if d.pressure.Pending() >= max(atLeast, 1) {
		fn(0, d.pressure.Drain())
	}
	for i, c := range d.strains {
		if c.Pending() >= max(atLeast, 1) {
			fn(i+1, c.Drain())
		}
	}
}

// Finish closes the residues and returns the counts (the cycles not
// drained). Call it once, after the last Add.
func (d *Dive) Finish() Counts {
	prof := d.profile.Finish()
	q := d.quality
	if q.EndsCut() {
		// The record ends below the surface: close the cycle to the
		// surface so it is counted whole, not as a half.
		d.pressure.Add([]float64{0})
	}
	// The unrecorded legs of a cut-off record (from the surface to its
	// first pressure, from its last pressure to the surface) are charged
	// at the highest pressure recorded, for the time they take at the
	// configured slow rate: what happened there is unknown, so never in
	// the hull's favour.
	leg := 0.0
	if q.StartsCut() {
		leg += d.cutLegS(q.firstP)
	}
	if q.EndsCut() {
		leg += d.cutLegS(q.lastP)
	}
	if leg > 0 {
		d.holds.Add([]float64{q.prevT + leg}, []float64{q.maxP})
	}
	out := Counts{Pressure: d.pressure.Finish(), Holds: d.holds.Holds(d.cfg.HoldMaxBins), Profile: prof}
	for _, c := range d.strains {
		out.Strain = append(out.Strain, c.Finish())
	}
	return out
}
