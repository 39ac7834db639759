// Package assess turns one dive's counted pressure cycles and time at
// pressure into damage per hull component: it chooses each component's
// load transfer (gauge calibration > designer factor > Lamé default),
// scales the pressure cycles to stress cycles, applies the component's S-N
// curve with the mean-stress correction and the design fatigue factor
// (Palmgren–Miner), and its stress-rupture curve to the time at stress
// (Robinson). Pure: plain values in, plain values out.
package assess

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"hulltally/fatigue/damage"
	"hulltally/fatigue/load"
	"hulltally/fatigue/rainflow"
	"hulltally/fatigue/sn"
)

// Geometry is the hull shell the Lamé default is computed from.
type Geometry struct {
	// Shape is "cylinder" or "sphere".
	Shape string
	// InnerRadiusM and WallM are the shell's inner radius and wall.
	InnerRadiusM, WallM float64
}

// ComponentSpec is a component as the hull spec gives it.
type ComponentSpec struct {
	Name, Kind string
	// Basis asked for in the spec: lame, designer or gauge.
	Basis string
	// Factor is the designer's factor (MPa per MPa), if any.
	Factor *float64
	// Source of the designer's factor.
	Source string
	// Curve and RuptureCurve name library entries; RuptureCurve may be
	// empty (no sustained-load assessment: metallic parts at sea
	// temperatures, common practice).
	Curve, RuptureCurve string
	// Calibration is the gauge calibration from the latest proof test, if
	// one is recorded.
	Calibration *load.Transfer
	// NoCalibration says why a component with basis gauge has no
	// Calibration (for example "the proof test of 2026-04-01 measured no
	// compliance on gauge axial1"), for the reason of the fallback; empty
	// means no proof test with strain is recorded yet.
	NoCalibration string
	// MeanStress is the component's own mean-stress correction from the
	// hull spec (none or goodman); empty means the global setting.
	MeanStress sn.MeanStress
	// DFF is the component's own design fatigue factor from the hull
	// spec (≥ 1); zero means the global setting. It can raise the global
	// factor, never lower it (EffectiveSettings).
	DFF float64
}

// Component is a component ready for assessment.
type Component struct {
	Name     string
	Transfer load.Choice
	Curve    sn.Curve
	Rupture  *sn.Rupture
	// Own are the component's own settings from the hull spec; a zero
	// field (DFF 0, MeanStress "") means the global setting applies. The
	// assessor combines them with the global settings by
	// EffectiveSettings.
	Own Settings
	// Warnings are remarks for the report that do not stop the
	// assessment, for example a metallic curve in air on a hull part that
	// is usually immersed.
	Warnings []string
}

// Resolve chooses each component's transfer and looks up its curves.
// A gauge calibration (ComponentSpec.Calibration) takes precedence over
// the designer's factor and Lamé, except when its sign contradicts the
// designer's factor or, on a laminate shell, Lamé: then it is not used,
// the fallback's reason says why and the component carries a warning. A
// calibration of the right sign outside half to twice that reference is
// used with a warning.
func Resolve(g Geometry, specs []ComponentSpec, lib *sn.Library) ([]Component, error) {
	out := make([]Component, 0, len(specs))
	for _, s := range specs {
		c, err := resolve(g, s, lib)
		if err != nil {
			return nil, fmt.Errorf("component %s: %w", s.Name, err)
		}
		out = append(out, c)
	}
	return out, nil
}

func resolve(g Geometry, s ComponentSpec, lib *sn.Library) (Component, error) {
	c := Component{Name: s.Name, Own: Settings{DFF: s.DFF, MeanStress: s.MeanStress}}
	curve, err := lib.Curve(s.Curve)
	if err != nil {
		return c, err
	}
	c.Curve = curve
	if s.RuptureCurve != "" {
		r, err := lib.Rupture(s.RuptureCurve)
		if err != nil {
			return c, err
		}
		c.Rupture = &r
	}
	lameCase := load.CylinderHoopInner
	if g.Shape == "sphere" {
		lameCase = load.SphereHoopInner
	}
	lame, err := load.NewLame(lameCase, g.InnerRadiusM, g.InnerRadiusM+g.WallM)
	if err != nil {
		return c, err
	}
	cands := []load.Transfer{lame}
	if s.Factor != nil {
		d, err := load.NewDesigner(*s.Factor, fmt.Sprintf("designer's factor %.6g MPa/MPa (%s)", *s.Factor, s.Source))
		if err != nil {
			return c, err
		}
		cands = append(cands, d)
	}
	fallback, err := load.Choose(cands...)
	if err != nil {
		return c, err
	}
	ch := fallback
	refused := ""
	if s.Calibration != nil {
		cal := *s.Calibration
		ch, err = load.Choose(append(cands, cal)...)
		if err != nil {
			return c, err
		}
		// A calibration whose sign contradicts the designer's factor (or,
		// on a laminate shell, Lamé) is a gauge wired or labelled the
		// wrong way round, not a measurement of this part: it is not used.
		ref := fallback.Transfer
		signed := ref.Basis == load.BasisDesigner || s.Kind == "laminate_cylinder" || s.Kind == "laminate_sphere"
		if signed && (cal.Factor > 0) != (ref.Factor > 0) {
			refused = fmt.Sprintf("the gauge calibration %.6g MPa/MPa is not used: its sign contradicts the %s factor %.6g MPa/MPa (a gauge reversed or on the wrong direction?)", cal.Factor, ref.Basis, ref.Factor)
			ch = fallback
			c.Warnings = append(c.Warnings, refused)
		} else if r := math.Abs(cal.Factor / ref.Factor); signed && (r < 0.5 || r > 2) {
			c.Warnings = append(c.Warnings, fmt.Sprintf("the gauge calibration %.6g MPa/MPa is %.3g times the %s factor %.6g MPa/MPa: check the gauges, the modulus and the Poisson ratio", cal.Factor, r, ref.Basis, ref.Factor))
		}
	}
	switch {
	case refused != "":
		ch.Reason = refused + "; " + ch.Reason
	case s.Basis == "gauge" && s.Calibration == nil && s.NoCalibration != "":
		ch.Reason = "gauge calibration asked for but not available: " + s.NoCalibration + "; " + ch.Reason
	case s.Basis == "gauge" && s.Calibration == nil:
		ch.Reason = "gauge calibration asked for but no proof test with strain is recorded yet; " + ch.Reason
	case s.Basis == "lame" && ch.Transfer.Basis != load.BasisLame:
		ch.Reason = "spec asks for Lamé; " + ch.Reason
	}
	if s.Kind != "laminate_cylinder" && s.Kind != "laminate_sphere" && ch.Transfer.Basis == load.BasisLame {
		ch.Reason += "; the shell's Lamé stress is used for a " + s.Kind + ", which has its own stress concentration: give the designer's factor"
	}
	c.Transfer = ch
	if err := CheckMode(s.Name, ch.Transfer.Factor, c.Curve, c.Rupture); err != nil {
		return c, err
	}
	switch c.Curve.Environment {
	case sn.EnvAir:
		c.Warnings = append(c.Warnings, fmt.Sprintf("S-N curve %s is a curve in air: a part wetted by seawater needs a seawater curve (cathodic protection or free corrosion), which gives fewer cycles", c.Curve.Name))
	case "":
		c.Warnings = append(c.Warnings, fmt.Sprintf("S-N curve %s does not state its environment", c.Curve.Name))
	}
	return c, nil
}

// CheckMode checks that a component's curves fit the sign of its stress
// under external pressure, given by the sign of its transfer factor
// (MPa per MPa): negative (Lamé always; a designer's or a gauge factor
// usually) is compression, positive is tension. The S-N curve's loading
// mode must be range (metallic detail curves, any sign) or the mode of
// that sign (compression-compression, tension-tension); the
// stress-rupture curve, if any, must be on that side. Otherwise a tensile
// component would be read on a compressive curve (the wrong strength), and
// its stress-rupture damage would be zero because the curve counts only
// the other sign. The error names the component. A zero or non-finite
// factor is refused.
func CheckMode(component string, factor float64, curve sn.Curve, rupture *sn.Rupture) error {
	if factor == 0 || math.IsNaN(factor) || math.IsInf(factor, 0) {
		return fmt.Errorf("component %s: transfer factor %v MPa/MPa: the sign of its stress is unknown", component, factor)
	}
	sign, mode, side := "compressive", sn.ModeCompression, sn.SideCompression
	if factor > 0 {
		sign, mode, side = "tensile", sn.ModeTension, sn.SideTension
	}
	var errs []string
	if curve.Mode != sn.ModeRange && curve.Mode != mode {
		errs = append(errs, fmt.Sprintf("S-N curve %s is %s; use a %s or range curve", curve.Name, curve.Mode, mode))
	}
	if rupture != nil && rupture.Side != side {
		errs = append(errs, fmt.Sprintf("stress-rupture curve %s counts %s stress only and would give this component no sustained-load damage; use a %s curve", rupture.Name, rupture.Side, side))
	}
	if len(errs) > 0 {
		return fmt.Errorf("component %s: its stress under external pressure is %s (transfer factor %.6g MPa/MPa), but %s",
			component, sign, factor, strings.Join(errs, "; and "))
	}
	return nil
}

// Settings are the assessment's operator choices.
type Settings struct {
	// DFF is the design fatigue factor, ≥ 1.
	DFF float64
	// MeanStress is the mean-stress correction (none or goodman).
	MeanStress sn.MeanStress
}

// Effective are the settings an assessor uses for one component, with
// the reason, for the report.
type Effective struct {
	Settings
	// Reason says where each setting comes from (the hull spec or the
	// global configuration) and any override.
	Reason string
}

// EffectiveSettings combines the global settings with a component's own
// (from the hull spec; zero fields mean "not given"):
//
//   - design fatigue factor: the component's own if given and at least
//     the global one; a component's factor below the global one is
//     overridden by the global one, and the reason says so. A component
//     can raise the factor, never lower it: never looser than the global
//     configuration.
//   - mean-stress correction: the component's own if given, else the
//     global one. Which of none and goodman is the more conservative
//     depends on the curve's form and the cycle, so a component's choice
//     is used as given and the reason names it beside the global one.
//
// Invalid global or own values are errors.
func EffectiveSettings(global, own Settings) (Effective, error) {
	if err := sn.CheckDFF(global.DFF); err != nil {
		return Effective{}, fmt.Errorf("global settings: %w", err)
	}
	if _, err := sn.ParseMeanStress(string(global.MeanStress)); err != nil {
		return Effective{}, fmt.Errorf("global settings: %w", err)
	}
	e := Effective{Settings: global}
	var why []string
	switch {
	case own.DFF == 0:
		why = append(why, fmt.Sprintf("design fatigue factor %.6g (global)", global.DFF))
	case sn.CheckDFF(own.DFF) != nil:
		return Effective{}, fmt.Errorf("component settings: %w", sn.CheckDFF(own.DFF))
	case own.DFF < global.DFF:
		why = append(why, fmt.Sprintf("design fatigue factor %.6g (global; the hull spec's %.6g is lower and a component may raise the factor, never lower it)", global.DFF, own.DFF))
	default:
		e.DFF = own.DFF
		why = append(why, fmt.Sprintf("design fatigue factor %.6g (hull spec; global %.6g)", own.DFF, global.DFF))
	}
	if own.MeanStress == "" {
		why = append(why, fmt.Sprintf("mean stress %s (global)", global.MeanStress))
	} else {
		ms, err := sn.ParseMeanStress(string(own.MeanStress))
		if err != nil {
			return Effective{}, fmt.Errorf("component settings: %w", err)
		}
		e.MeanStress = ms
		why = append(why, fmt.Sprintf("mean stress %s (hull spec; global %s)", ms, global.MeanStress))
	}
	e.Reason = strings.Join(why, "; ")
	return e, nil
}

// Check resolves the components of a hull spec against the library and
// the global settings, as the ledger must before it accepts a hull: the
// curves exist, their loading modes fit the sign of each component's
// stress (CheckMode), the component's own settings are valid and goodman
// has the strengths it needs. Every problem is reported, each naming its
// component.
func Check(g Geometry, specs []ComponentSpec, lib *sn.Library, global Settings) error {
	var errs []error
	for _, s := range specs {
		c, err := resolve(g, s, lib)
		if err != nil {
			errs = append(errs, fmt.Errorf("component %s: %w", s.Name, err))
			continue
		}
		if _, err := newComponentSum(c, global); err != nil {
			errs = append(errs, err)
		}
	}
	return errors.Join(errs...)
}

// newComponentSum checks one component for assessment and returns its
// effective settings and Miner sum.
func newComponentSum(c Component, global Settings) (*damage.MinerSum, error) {
	if err := CheckMode(c.Name, c.Transfer.Transfer.Factor, c.Curve, c.Rupture); err != nil {
		return nil, err
	}
	eff, err := EffectiveSettings(global, c.Own)
	if err != nil {
		return nil, fmt.Errorf("component %s: %w", c.Name, err)
	}
	if eff.MeanStress == sn.MeanStressGoodman && !c.Curve.Strengths.Present() {
		return nil, fmt.Errorf("component %s: goodman mean-stress correction needs the strengths of curve %s, which the library does not give", c.Name, c.Curve.Name)
	}
	m, err := damage.NewMinerSum(c.Curve, eff.MeanStress, eff.DFF)
	if err != nil {
		return nil, fmt.Errorf("component %s: %w", c.Name, err)
	}
	if c.Rupture != nil {
		if err := c.Rupture.Validate(); err != nil {
			return nil, fmt.Errorf("component %s: %w", c.Name, err)
		}
	}
	return m, nil
}

// Hold is time spent at (or below) a pressure level.
type Hold struct {
	LevelMPa, Seconds float64
}

// Dive is one dive's counted load: the rainflow cycles of gauge pressure
// in MPa and the time at pressure.
type Dive struct {
	PressureCycles []rainflow.Cycle
	Holds          []Hold
}

// Result is one component's damage for one dive.
type Result struct {
	Component string
	Damage    damage.Damage
	Cyclic    damage.Cyclic
	Sustained damage.Sustained
	// Factor is the transfer factor used, MPa per MPa.
	Factor float64
	Basis  load.Basis
	// Settings are the design fatigue factor and mean-stress correction
	// used for this component, with where they come from.
	Settings Effective
}

// ErrNoComponents is returned for a hull without components.
var ErrNoComponents = errors.New("no components to assess")

// Assessor assesses dives on a hull's components with one set of
// settings; its curves are checked once, when it is made.
type Assessor struct {
	comps  []Component
	eff    []Effective
	miners []*damage.MinerSum
	buf    []damage.Cycle
	holds  []damage.Hold
}

// NewAssessor checks the components' curves with the global settings s
// and each component's own (EffectiveSettings), and each curve's loading
// mode against the sign of the component's stress (CheckMode).
func NewAssessor(comps []Component, s Settings) (*Assessor, error) {
	if len(comps) == 0 {
		return nil, ErrNoComponents
	}
	a := &Assessor{comps: comps}
	for _, c := range comps {
		m, err := newComponentSum(c, s)
		if err != nil {
			return nil, err
		}
		eff, _ := EffectiveSettings(s, c.Own) // checked by newComponentSum
		a.miners = append(a.miners, m)
		a.eff = append(a.eff, eff)
	}
	return a, nil
}

// Settings returns the effective settings of each component, in the
// components' order.
func (a *Assessor) Settings() []Effective {
	return append([]Effective(nil), a.eff...)
}

// DiveDamage assesses one dive on every component (a convenience for a
// single dive; use an Assessor for many).
func DiveDamage(d Dive, comps []Component, s Settings) ([]Result, error) {
	a, err := NewAssessor(comps, s)
	if err != nil {
		return nil, err
	}
	return a.Dive(d)
}

// Dive assesses one dive on every component, in the components' order.
func (a *Assessor) Dive(d Dive) ([]Result, error) {
	s := a.Begin()
	if err := s.Add(d.PressureCycles); err != nil {
		return nil, err
	}
	return s.Finish(d.Holds)
}

// DiveSum assesses one dive whose pressure cycles arrive in parts (a long
// record counted while it streams), in bounded memory. It gives exactly
// what Assessor.Dive gives for the whole dive: every component's Miner
// sum is continued term by term in the cycles' order.
type DiveSum struct {
	a   *Assessor
	cy  []damage.Cyclic
	err error
}

// Begin starts assessing one dive. The Assessor must not assess another
// dive until the DiveSum is finished.
func (a *Assessor) Begin() *DiveSum {
	s := &DiveSum{a: a, cy: make([]damage.Cyclic, len(a.comps))}
	for i, m := range a.miners {
		s.cy[i] = m.Start()
	}
	return s
}

// Add takes the next pressure cycles of the dive, in counting order. After
// an error every later call returns it.
func (s *DiveSum) Add(cycles []rainflow.Cycle) error {
	if s.err != nil {
		return s.err
	}
	a := s.a
	for ci, c := range a.comps {
		f := c.Transfer.Transfer.Factor
		buf := a.buf[:0]
		for _, pc := range cycles {
			buf = append(buf, damage.Cycle{Range: math.Abs(f) * pc.Range, Mean: f * pc.Mean, Count: pc.Count})
		}
		a.buf = buf
		if err := a.miners[ci].Add(&s.cy[ci], buf); err != nil {
			s.err = fmt.Errorf("component %s: %w", c.Name, err)
			return s.err
		}
	}
	return nil
}

// Finish ends the dive with its time at pressure and returns every
// component's damage, in the components' order.
func (s *DiveSum) Finish(holds []Hold) ([]Result, error) {
	if s.err != nil {
		return nil, s.err
	}
	a := s.a
	out := make([]Result, 0, len(a.comps))
	for ci, c := range a.comps {
		f := c.Transfer.Transfer.Factor
		cy := s.cy[ci]
		r := Result{Component: c.Name, Cyclic: cy, Factor: f, Basis: c.Transfer.Transfer.Basis, Settings: a.eff[ci]}
		r.Damage.Cyclic = cy.Damage
		if c.Rupture != nil {
			hs := a.holds[:0]
			for _, h := range holds {
				hs = append(hs, damage.Hold{Stress: f * h.LevelMPa, Duration: h.Seconds})
			}
			a.holds = hs
			su, err := damage.Robinson(hs, *c.Rupture)
			if err != nil {
				return nil, fmt.Errorf("component %s: %w", c.Name, err)
			}
			r.Sustained = su
			r.Damage.Sustained = su.Damage
		}
		out = append(out, r)
	}
	return out, nil
}

// HoldHistogram accumulates time at pressure from a sampled pressure
// history, binned at a fixed width. Each interval between two samples is
// charged to the bin of the higher of its two ends, at that bin's upper
// edge: an upper bound for a history that is monotonic between samples,
// never in the hull's favour. Pressures at or below zero are not charged.
type HoldHistogram struct {
	Bin     float64
	seconds []float64
	prevT   float64
	prevP   float64
	started bool
}

// NewHoldHistogram makes a histogram of bin width binMPa.
func NewHoldHistogram(binMPa float64) *HoldHistogram { return &HoldHistogram{Bin: binMPa} }

// Add adds samples at times t (s) with gauge pressures p (MPa).
func (h *HoldHistogram) Add(t, p []float64) {
	for i := range t {
		if h.started {
			hi := math.Max(p[i], h.prevP)
			if hi > 0 {
				k := int(math.Ceil(hi/h.Bin)) - 1
				if k < 0 {
					k = 0
				}
				for k >= len(h.seconds) {
					h.seconds = append(h.seconds, 0)
				}
				h.seconds[k] += t[i] - h.prevT
			}
		}
		h.prevT, h.prevP, h.started = t[i], p[i], true
	}
}

// Holds returns the non-empty bins as holds at their upper edges, merged
// down to at most maxBins (0: no limit). Merging moves a bin's time up to
// the level of the next bin above it — never in the hull's favour — and
// each step merges the pair that adds the least excess pressure × time,
// so the descent and ascent, which pass through many levels briefly, are
// coarsened first and the hold at depth is kept sharp.
func (h *HoldHistogram) Holds(maxBins int) []Hold {
	var out []Hold
	for k, s := range h.seconds {
		if s > 0 {
			out = append(out, Hold{LevelMPa: float64(k+1) * h.Bin, Seconds: s})
		}
	}
	return MergeHolds(out, maxBins)
}

// MergeHolds merges holds (ascending levels) down to at most maxBins as
// Holds describes; maxBins ≤ 0 means no limit.
func MergeHolds(hs []Hold, maxBins int) []Hold {
	if maxBins <= 0 {
		return hs
	}
	for len(hs) > maxBins {
		best, cost := -1, math.Inf(1)
		for i := 0; i+1 < len(hs); i++ {
			if c := hs[i].Seconds * (hs[i+1].LevelMPa - hs[i].LevelMPa); c < cost {
				best, cost = i, c
			}
		}
		if best < 0 {
			// A single level cannot be merged further.
			break
		}
		hs[best+1].Seconds += hs[best].Seconds
		hs = append(hs[:best], hs[best+1:]...)
	}
	return hs
}
