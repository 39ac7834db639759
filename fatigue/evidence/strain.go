package evidence

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/stat"
)

// StrainCriterion holds the constants of the strain measures. Use
// DefaultStrainCriterion and change what the operator chooses.
type StrainCriterion struct {
	// FitLowFrac and FitHighFrac bound the descent pressures used for the
	// compliance fit and the hysteresis grid, as fractions of the dive's
	// peak (keeps surface noise and the hold out).
	FitLowFrac, FitHighFrac float64
	// MinFitPoints is the fewest descent samples for a compliance fit.
	MinFitPoints int
	// SurfaceFrac: a sample is at the surface when its pressure is below
	// SurfaceFrac × the peak.
	SurfaceFrac float64
	// MinSurfacePoints is the fewest surface samples on either side of the
	// dive for a residual strain.
	MinSurfacePoints int
	// GridPoints is the number of pressures on the hysteresis grid (≥ 2).
	GridPoints int
	// MinHoldS is the shortest hold for a creep figure, s.
	MinHoldS float64
	// CreepEdgeFrac is the fraction of the hold's duration averaged at its
	// start and at its end for creep.
	CreepEdgeFrac float64
}

// DefaultStrainCriterion returns the strain constants, all common practice
// and the operator's choice: fit and hysteresis grid between 10 % and 90 %
// of the peak, at least 10 fit points, surface below 2 % of the peak with
// at least 3 samples each side, a 50-point hysteresis grid, creep only for
// holds of at least 60 s, averaged over the first and last 10 % of the
// hold.
func DefaultStrainCriterion() StrainCriterion {
	return StrainCriterion{
		FitLowFrac: 0.10, FitHighFrac: 0.90, MinFitPoints: 10,
		SurfaceFrac: 0.02, MinSurfacePoints: 3,
		GridPoints: 50, MinHoldS: 60, CreepEdgeFrac: 0.10,
	}
}

// Validate checks the criterion.
func (c StrainCriterion) Validate() error {
	switch {
	case !(c.FitLowFrac >= 0 && c.FitLowFrac < c.FitHighFrac && c.FitHighFrac <= 1):
		return fmt.Errorf("evidence: strain fit range %g–%g of peak is not 0 ≤ low < high ≤ 1", c.FitLowFrac, c.FitHighFrac)
	case c.MinFitPoints < 2:
		return fmt.Errorf("evidence: strain fit needs at least 2 points, got %d", c.MinFitPoints)
	case !(c.SurfaceFrac > 0 && c.SurfaceFrac < 1):
		return fmt.Errorf("evidence: surface fraction %g outside (0, 1)", c.SurfaceFrac)
	case c.MinSurfacePoints < 1:
		return fmt.Errorf("evidence: surface points %d must be at least 1", c.MinSurfacePoints)
	case c.GridPoints < 2:
		return fmt.Errorf("evidence: hysteresis grid of %d points needs at least 2", c.GridPoints)
	case !(c.MinHoldS >= 0):
		return fmt.Errorf("evidence: minimum hold %g s is negative", c.MinHoldS)
	case !(c.CreepEdgeFrac > 0 && c.CreepEdgeFrac <= 0.5):
		return fmt.Errorf("evidence: creep edge fraction %g outside (0, 0.5]", c.CreepEdgeFrac)
	}
	return nil
}

// Compliance is the least-squares slope of strain on pressure over the
// descent.
type Compliance struct {
	// Computed is false when the fit was not made; Reason says why.
	Computed bool
	Reason   string
	// UEPerMPa is the slope, µε/MPa (negative in compression).
	UEPerMPa float64
	// InterceptUE is the fitted strain at 0 MPa, µε.
	InterceptUE float64
	// R2 is the coefficient of determination of the fit.
	R2 float64
	// Points is the number of samples fitted.
	Points int
}

// ComplianceChange compares a compliance with its baseline (proof test or
// first dives).
type ComplianceChange struct {
	// Computed is false without a usable baseline; Reason says why.
	Computed bool
	Reason   string
	// BaselineUEPerMPa is the baseline compliance c0, µε/MPa.
	BaselineUEPerMPa float64
	// Fraction is (|c| − |c0|)/|c0|: positive when the hull is softer
	// (more strain per MPa) than at baseline, negative when stiffer.
	Fraction float64
}

// Residual is the strain left at the surface after the dive.
type Residual struct {
	// Computed is false when either side has too few surface samples.
	Computed bool
	Reason   string
	// UE is mean strain after the dive minus mean strain before, µε
	// (negative: left more compressed).
	UE float64
	// BeforeUE and AfterUE are the two surface means, µε, over
	// BeforePoints and AfterPoints samples.
	BeforeUE, AfterUE         float64
	BeforePoints, AfterPoints int
	// PressureCorrectedUE is the same difference of means of ε − c·p,
	// with c the dive's compliance, when it is computed (otherwise equal
	// to UE): it takes out the strain of the near-surface pressure that
	// the surface samples still carry (2 % of 40 MPa is 80 m of water).
	PressureCorrectedUE float64
}

// Hysteresis is the area between the ascent and descent branches of strain
// against pressure.
type Hysteresis struct {
	// Computed is false when a branch does not span the grid.
	Computed bool
	Reason   string
	// SignedAreaUEMPa is ∫ (ε_ascent − ε_descent) dp over the grid by the
	// trapezoid rule, µε·MPa.
	SignedAreaUEMPa float64
	// AreaUEMPa is |SignedAreaUEMPa|.
	AreaUEMPa float64
	// Normalised is AreaUEMPa / (peak pressure × |strain at peak|),
	// dimensionless; 0 when the strain at peak is 0 (see Reason).
	Normalised float64
	// GridLowMPa and GridHighMPa bound the grid, MPa.
	GridLowMPa, GridHighMPa float64
}

// Creep is the drift of strain during the hold.
type Creep struct {
	// Computed is false for a hold shorter than the minimum.
	Computed bool
	Reason   string
	// UE is mean strain over the last edge of the hold minus mean strain
	// over its first edge, µε.
	UE float64
	// UEPerHour is UE divided by the time between the two edges' mean
	// sample times, µε/h (the drift rate for a linear drift).
	UEPerHour float64
	// PressureCorrectedUE is UE less compliance × the change of mean
	// pressure between the edges, µε, when the compliance is computed
	// (otherwise equal to UE): the part not explained by the sea state.
	PressureCorrectedUE float64
	// HoldS is the hold's duration, s.
	HoldS float64
}

// StrainResult is one gauge's strain evidence for one dive.
type StrainResult struct {
	// Gauge is the strain gauge's name.
	Gauge      string
	Compliance Compliance
	Change     ComplianceChange
	Residual   Residual
	Hysteresis Hysteresis
	Creep      Creep
}

// Strain computes the strain evidence of every gauge of the profile, in
// gauge-name order. baseline maps a gauge to its baseline compliance c0
// (µε/MPa); a gauge without one has no change figure. ph must come from
// Phases on the same profile.
func Strain(p Profile, ph Phase, baseline map[string]float64, c StrainCriterion) ([]StrainResult, error) {
	if err := c.Validate(); err != nil {
		return nil, fmt.Errorf("strain: %w", err)
	}
	if err := p.Validate(); err != nil {
		return nil, fmt.Errorf("strain: %w", err)
	}
	if ph.N != len(p.TimeS) || ph.HoldStart < 0 || ph.HoldEnd < ph.HoldStart || ph.HoldEnd >= ph.N || !(ph.PeakMPa > 0) {
		return nil, fmt.Errorf("strain: phase (%d samples, hold %d–%d) does not belong to a profile of %d samples", ph.N, ph.HoldStart, ph.HoldEnd, len(p.TimeS))
	}
	names := sortedGauges(p.Strain)
	out := make([]StrainResult, 0, len(names))
	for _, g := range names {
		c0, ok := baseline[g]
		out = append(out, gauge(p, ph, g, c0, ok, c))
	}
	return out, nil
}

// gauge computes one gauge's measures on a validated profile.
func gauge(p Profile, ph Phase, name string, c0 float64, haveBaseline bool, c StrainCriterion) StrainResult {
	s := p.Strain[name]
	r := StrainResult{Gauge: name}
	r.Compliance = compliance(p.Pressure, s, ph, c)
	r.Change = change(r.Compliance, c0, haveBaseline)
	r.Residual = residual(p.Pressure, s, ph, r.Compliance, c)
	r.Hysteresis = hysteresis(p.Pressure, s, ph, c)
	r.Creep = creep(p, s, ph, r.Compliance, c)
	return r
}

func compliance(pr, s []float64, ph Phase, c StrainCriterion) Compliance {
	lo, hi := c.FitLowFrac*ph.PeakMPa, c.FitHighFrac*ph.PeakMPa
	var x, y []float64
	for i := 0; i < ph.HoldStart; i++ {
		if pr[i] >= lo && pr[i] <= hi {
			x = append(x, pr[i])
			y = append(y, s[i])
		}
	}
	out := Compliance{Points: len(x)}
	if len(x) < c.MinFitPoints {
		out.Reason = fmt.Sprintf("compliance not computed: %d descent samples between %.4g and %.4g MPa, fewer than %d", len(x), lo, hi, c.MinFitPoints)
		return out
	}
	if stat.Variance(x, nil) == 0 {
		out.Reason = "compliance not computed: the descent samples in the fit range share one pressure"
		return out
	}
	alpha, beta := stat.LinearRegression(x, y, nil, false)
	out.Computed = true
	out.UEPerMPa, out.InterceptUE = beta, alpha
	out.R2 = stat.RSquared(x, y, nil, alpha, beta)
	return out
}

func change(cm Compliance, c0 float64, have bool) ComplianceChange {
	out := ComplianceChange{BaselineUEPerMPa: c0}
	switch {
	case !have:
		out.Reason = "change not computed: no baseline compliance for this gauge"
	case c0 == 0 || math.IsNaN(c0) || math.IsInf(c0, 0):
		out.Reason = fmt.Sprintf("change not computed: baseline compliance %g µε/MPa is unusable", c0)
	case !cm.Computed:
		out.Reason = "change not computed: no compliance for this dive"
	case cm.UEPerMPa*c0 < 0:
		out.Reason = fmt.Sprintf("change not computed: compliance %.4g and baseline %.4g µε/MPa have opposite signs (check gauge wiring and orientation)", cm.UEPerMPa, c0)
	default:
		out.Computed = true
		out.Fraction = (math.Abs(cm.UEPerMPa) - math.Abs(c0)) / math.Abs(c0)
	}
	return out
}

func residual(pr, s []float64, ph Phase, cm Compliance, c StrainCriterion) Residual {
	level := c.SurfaceFrac * ph.PeakMPa
	var out Residual
	var sb, sa, pb, pa float64
	for i := 0; i < ph.N && pr[i] < level; i++ {
		sb += s[i]
		pb += pr[i]
		out.BeforePoints++
	}
	for i := ph.HoldEnd + 1; i < ph.N; i++ {
		if pr[i] < level {
			sa += s[i]
			pa += pr[i]
			out.AfterPoints++
		}
	}
	if out.BeforePoints < c.MinSurfacePoints || out.AfterPoints < c.MinSurfacePoints {
		out.Reason = fmt.Sprintf("residual strain not computed: %d surface samples before and %d after the dive (below %.4g MPa), fewer than %d", out.BeforePoints, out.AfterPoints, level, c.MinSurfacePoints)
		return out
	}
	out.Computed = true
	out.BeforeUE = sb / float64(out.BeforePoints)
	out.AfterUE = sa / float64(out.AfterPoints)
	out.UE = out.AfterUE - out.BeforeUE
	out.PressureCorrectedUE = out.UE
	if cm.Computed {
		out.PressureCorrectedUE -= cm.UEPerMPa * (pa/float64(out.AfterPoints) - pb/float64(out.BeforePoints))
	}
	return out
}

// branch is one branch of strain against pressure, sorted by pressure.
type branch struct{ p, s []float64 }

func newBranch(pr, s []float64, from, to int) branch {
	idx := make([]int, 0, to-from)
	for i := from; i < to; i++ {
		idx = append(idx, i)
	}
	sort.SliceStable(idx, func(a, b int) bool { return pr[idx[a]] < pr[idx[b]] })
	b := branch{p: make([]float64, len(idx)), s: make([]float64, len(idx))}
	for k, i := range idx {
		b.p[k], b.s[k] = pr[i], s[i]
	}
	return b
}

// covers reports whether the branch spans [lo, hi].
func (b branch) covers(lo, hi float64) bool {
	return len(b.p) >= 2 && b.p[0] <= lo && b.p[len(b.p)-1] >= hi
}

// at is the branch's strain at pressure v by linear interpolation; equal
// pressures are averaged.
func (b branch) at(v float64) float64 {
	i := sort.SearchFloat64s(b.p, v)
	if i < len(b.p) && b.p[i] == v {
		var sum float64
		n := 0
		for j := i; j < len(b.p) && b.p[j] == v; j++ {
			sum += b.s[j]
			n++
		}
		return sum / float64(n)
	}
	if i == 0 {
		return b.s[0]
	}
	if i == len(b.p) {
		return b.s[len(b.s)-1]
	}
	x0, x1 := b.p[i-1], b.p[i]
	return b.s[i-1] + (b.s[i]-b.s[i-1])*(v-x0)/(x1-x0)
}

func hysteresis(pr, s []float64, ph Phase, c StrainCriterion) Hysteresis {
	lo, hi := c.FitLowFrac*ph.PeakMPa, c.FitHighFrac*ph.PeakMPa
	out := Hysteresis{GridLowMPa: lo, GridHighMPa: hi}
	desc := newBranch(pr, s, 0, ph.HoldStart+1)
	asc := newBranch(pr, s, ph.HoldEnd, ph.N)
	if !desc.covers(lo, hi) || !asc.covers(lo, hi) {
		out.Reason = fmt.Sprintf("hysteresis not computed: descent or ascent does not span %.4g–%.4g MPa", lo, hi)
		return out
	}
	step := (hi - lo) / float64(c.GridPoints-1)
	var area, prev float64
	for k := 0; k < c.GridPoints; k++ {
		v := lo + float64(k)*step
		d := asc.at(v) - desc.at(v)
		if k > 0 {
			area += 0.5 * (prev + d) * step
		}
		prev = d
	}
	out.Computed = true
	out.SignedAreaUEMPa = area
	out.AreaUEMPa = math.Abs(area)
	ref := ph.PeakMPa * math.Abs(s[ph.PeakIndex])
	if ref > 0 {
		out.Normalised = out.AreaUEMPa / ref
	} else {
		out.Reason = "hysteresis not normalised: strain at peak pressure is 0"
	}
	return out
}

func creep(p Profile, s []float64, ph Phase, cm Compliance, c StrainCriterion) Creep {
	dur := ph.HoldDurationS()
	out := Creep{HoldS: dur}
	if dur < c.MinHoldS || !(dur > 0) {
		out.Reason = fmt.Sprintf("creep not computed: hold of %.4g s shorter than %.4g s", dur, c.MinHoldS)
		return out
	}
	edge := c.CreepEdgeFrac * dur
	var fs, fp, ft, ls, lp, lt float64
	var fn, ln int
	for i := ph.HoldStart; i <= ph.HoldEnd; i++ {
		t := p.TimeS[i]
		if t <= ph.HoldStartS+edge {
			fs += s[i]
			fp += p.Pressure[i]
			ft += t
			fn++
		}
		if t >= ph.HoldEndS-edge {
			ls += s[i]
			lp += p.Pressure[i]
			lt += t
			ln++
		}
	}
	// fn, ln ≥ 1: the hold's first and last samples are always in.
	gap := lt/float64(ln) - ft/float64(fn)
	out.Computed = true
	out.UE = ls/float64(ln) - fs/float64(fn)
	if gap > 0 {
		out.UEPerHour = out.UE / (gap / 3600)
	}
	out.PressureCorrectedUE = out.UE
	if cm.Computed {
		out.PressureCorrectedUE -= cm.UEPerMPa * (lp/float64(ln) - fp/float64(fn))
	}
	return out
}
