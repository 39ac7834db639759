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
	// MaxTempDiffC is the largest difference of mean temperature between
	// the surface samples before and after the dive at which a residual
	// strain is still compared, °C (≥ 0); used when the profile carries
	// temperature.
	MaxTempDiffC float64
	// Quality is the data-quality check every gauge must pass before its
	// measures are computed (see GaugeQuality).
	Quality GaugeCriterion
	// QualityByGauge overrides Quality for the gauges it names (e.g. Sign
	// +1 for a gauge the design places in tension); nil for none.
	QualityByGauge map[string]GaugeCriterion
}

// DefaultStrainCriterion returns the strain constants, all common practice
// and the operator's choice: fit and hysteresis grid between 10 % and 90 %
// of the peak, at least 10 fit points, surface below 2 % of the peak with
// at least 3 samples each side, a 50-point hysteresis grid, creep only for
// holds of at least 60 s, averaged over the first and last 10 % of the
// hold; a residual strain compared only when the surface temperatures
// before and after the dive agree within 2 °C (operator's choice: a
// foil gauge's apparent strain on a composite can reach some µε per °C);
// and the gauge quality check of DefaultGaugeCriterion.
func DefaultStrainCriterion() StrainCriterion {
	return StrainCriterion{
		FitLowFrac: 0.10, FitHighFrac: 0.90, MinFitPoints: 10,
		SurfaceFrac: 0.02, MinSurfacePoints: 3,
		GridPoints: 50, MinHoldS: 60, CreepEdgeFrac: 0.10,
		MaxTempDiffC: 2, Quality: DefaultGaugeCriterion(),
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
	case !(c.MaxTempDiffC >= 0) || math.IsInf(c.MaxTempDiffC, 0):
		return fmt.Errorf("evidence: temperature tolerance %g °C must be finite and not negative", c.MaxTempDiffC)
	}
	if err := c.Quality.Validate(); err != nil {
		return err
	}
	for _, g := range sortedKeys(c.QualityByGauge) {
		if err := c.QualityByGauge[g].Validate(); err != nil {
			return fmt.Errorf("gauge %q: %w", g, err)
		}
	}
	return nil
}

// sortedKeys returns the map's keys in lexical order.
func sortedKeys[V any](m map[string]V) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
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
	// TempBeforeC and TempAfterC are the mean temperatures of the two
	// surface windows, °C, and TempDiffC after − before; nil when the
	// profile carries no temperature or the windows were not formed.
	TempBeforeC, TempAfterC, TempDiffC *float64
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
	Gauge string
	// QualityOK is false when the gauge failed the data-quality check
	// (GaugeQuality); its measures are then all not computed and
	// QualityReason says why.
	QualityOK     bool
	QualityReason string
	Compliance    Compliance
	Change        ComplianceChange
	Residual      Residual
	Hysteresis    Hysteresis
	Creep         Creep
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
	q, ok := c.QualityByGauge[name]
	if !ok {
		q = c.Quality
	}
	// A doubtful gauge is missing evidence (QualityOK false), but its
	// figures are still computed: a reading gone wild (creep of thousands
	// of µε) must not hide behind "doubtful", and the rules on its figures
	// can only make the verdict worse.
	r.QualityOK, r.QualityReason = GaugeQuality(p, name, q)
	r.Compliance = compliance(p.Pressure, s, ph, c)
	r.Change = change(r.Compliance, c0, haveBaseline)
	r.Residual = residual(p.Pressure, s, p.Temp, ph, r.Compliance, c)
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

// residual is the residual strain; temp is the profile's temperature
// (empty when not logged).
func residual(pr, s, temp []float64, ph Phase, cm Compliance, c StrainCriterion) Residual {
	level := c.SurfaceFrac * ph.PeakMPa
	var out Residual
	var sb, sa, pb, pa, tb, ta float64
	for i := 0; i < ph.N && pr[i] < level; i++ {
		sb += s[i]
		pb += pr[i]
		if len(temp) > 0 {
			tb += temp[i]
		}
		out.BeforePoints++
	}
	for i := ph.HoldEnd + 1; i < ph.N; i++ {
		if pr[i] < level {
			sa += s[i]
			pa += pr[i]
			if len(temp) > 0 {
				ta += temp[i]
			}
			out.AfterPoints++
		}
	}
	if out.BeforePoints < c.MinSurfacePoints || out.AfterPoints < c.MinSurfacePoints {
		out.Reason = fmt.Sprintf("residual strain not computed: %d surface samples before and %d after the dive (below %.4g MPa), fewer than %d", out.BeforePoints, out.AfterPoints, level, c.MinSurfacePoints)
		return out
	}
	if len(temp) > 0 {
		before, after := tb/float64(out.BeforePoints), ta/float64(out.AfterPoints)
		d := after - before
		if math.IsNaN(d) || math.IsInf(d, 0) {
			out.Reason = "residual strain not comparable: temperature unknown in a surface window (logged values not finite)"
			return out
		}
		out.TempBeforeC, out.TempAfterC, out.TempDiffC = &before, &after, &d
		if math.Abs(d) > c.MaxTempDiffC {
			out.Reason = fmt.Sprintf("residual strain not comparable: temperature differs by %.3g °C between the surface before (%.4g °C) and after (%.4g °C) the dive, more than %g °C", d, before, after, c.MaxTempDiffC)
			return out
		}
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

// GaugeCriterion holds the constants of a strain gauge's data-quality
// check. Use DefaultGaugeCriterion and change what the operator chooses.
type GaugeCriterion struct {
	// MinStdevUE is the standard deviation of strain over the dive below
	// which the gauge is constant (dead, disconnected or stuck), µε (≥ 0).
	MinStdevUE float64
	// MaxAbsUE is the largest plausible |strain| at any sample, µε (> 0):
	// beyond it the gauge is over range or debonded.
	MaxAbsUE float64
	// Sign is the expected sign of the compliance (dε/dp): −1 for a gauge
	// that shortens under external pressure (the hoop and axial gauges of
	// a compression hull), +1 for one known to stretch, 0 not checked.
	Sign int
	// MinCorrelation is the least correlation between strain and pressure
	// over the dive, taken with Sign (with Sign 0: its absolute value), in
	// [0, 1]: below it the strain does not follow the pressure.
	MinCorrelation float64
}

// DefaultGaugeCriterion returns the gauge quality constants, all the
// operator's choice and conservative: a gauge is doubtful when its strain
// varies by less than 1 µε (standard deviation) over the dive, when any
// |strain| exceeds 20 000 µε (2 %, beyond the compressive failure strain
// of carbon/epoxy laminates of about 1 to 1.5 % — common practice, from
// memory — so a reading there is more likely a broken or over-range gauge
// than a standing hull), when it does not shorten with pressure (Sign −1:
// every surface of a hull under external pressure is expected in
// compression; set Sign to +1 or 0 for a gauge the design places in
// tension, e.g. near a penetration), or when its correlation with
// pressure is below 0.8.
func DefaultGaugeCriterion() GaugeCriterion {
	return GaugeCriterion{MinStdevUE: 1, MaxAbsUE: 20000, Sign: -1, MinCorrelation: 0.8}
}

// Validate checks the criterion.
func (c GaugeCriterion) Validate() error {
	switch {
	case !(c.MinStdevUE >= 0) || math.IsInf(c.MinStdevUE, 0):
		return fmt.Errorf("evidence: gauge minimum standard deviation %g µε must be finite and not negative", c.MinStdevUE)
	case !(c.MaxAbsUE > 0):
		return fmt.Errorf("evidence: gauge strain limit %g µε must be positive", c.MaxAbsUE)
	case c.Sign < -1 || c.Sign > 1:
		return fmt.Errorf("evidence: gauge sign %d is not −1, 0 or +1", c.Sign)
	case !(c.MinCorrelation >= 0 && c.MinCorrelation <= 1):
		return fmt.Errorf("evidence: gauge minimum correlation %g outside [0, 1]", c.MinCorrelation)
	}
	return nil
}

// GaugeQuality checks one gauge of the profile: it reports false, with a
// reason, for a gauge that is absent, has samples missing or not finite,
// is constant (standard deviation below c.MinStdevUE), reads beyond
// ±c.MaxAbsUE, shortens or stretches against c.Sign, or does not follow
// the pressure (correlation below c.MinCorrelation). A doubtful gauge is
// missing evidence. It also reports false for an invalid criterion or a
// profile whose pressure does not vary.
func GaugeQuality(p Profile, gauge string, c GaugeCriterion) (bool, string) {
	if err := c.Validate(); err != nil {
		return false, fmt.Sprintf("quality not judged: %v", err)
	}
	s, ok := p.Strain[gauge]
	n := len(p.Pressure)
	switch {
	case !ok:
		return false, fmt.Sprintf("gauge %q has no column in the profile", gauge)
	case len(s) != n || n == 0:
		return false, fmt.Sprintf("gauge %q has %d samples for %d pressures", gauge, len(s), n)
	}
	for i, v := range s {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false, fmt.Sprintf("gauge %q strain at sample %d is %v", gauge, i, v)
		}
		if math.Abs(v) > c.MaxAbsUE {
			return false, fmt.Sprintf("gauge %q reads %.6g µε at %g s, beyond ±%g µε: over range or debonded", gauge, v, p.TimeS[min(i, len(p.TimeS)-1)], c.MaxAbsUE)
		}
	}
	for i, v := range p.Pressure {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false, fmt.Sprintf("pressure at sample %d is %v: gauge %q not judged", i, v, gauge)
		}
	}
	sd := stat.StdDev(s, nil)
	if n < 2 || !(sd >= c.MinStdevUE) || sd == 0 {
		return false, fmt.Sprintf("gauge %q is constant over the dive: standard deviation %.3g µε, below %g µε (dead, disconnected or stuck)", gauge, sd, c.MinStdevUE)
	}
	if stat.StdDev(p.Pressure, nil) == 0 {
		return false, fmt.Sprintf("pressure does not vary over the record: gauge %q not judged", gauge)
	}
	r := stat.Correlation(p.Pressure, s, nil)
	switch {
	case c.Sign != 0 && r*float64(c.Sign) < 0:
		want := "shorten (compression)"
		if c.Sign > 0 {
			want = "stretch (tension)"
		}
		return false, fmt.Sprintf("gauge %q has a compliance of the wrong sign: correlation with pressure %.3f, expected to %s (check wiring and orientation)", gauge, r, want)
	case c.Sign != 0 && r*float64(c.Sign) < c.MinCorrelation:
		return false, fmt.Sprintf("gauge %q does not follow the pressure: correlation %.3f, below %g", gauge, r*float64(c.Sign), c.MinCorrelation)
	case c.Sign == 0 && math.Abs(r) < c.MinCorrelation:
		return false, fmt.Sprintf("gauge %q does not follow the pressure: |correlation| %.3f, below %g", gauge, math.Abs(r), c.MinCorrelation)
	}
	return true, fmt.Sprintf("gauge %q follows the pressure: correlation %.3f, standard deviation %.4g µε", gauge, r, sd)
}
