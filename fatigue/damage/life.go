package damage

import (
	"fmt"
	"math"
)

// LifeVoidReason is the reason a caller gives when it voids the
// remaining life of a hull on hold, withdrawn, or with evidence of damage
// open: a projection of undamaged behaviour means nothing then.
const LifeVoidReason = "fatigue projection void while evidence of damage is open"

// LifeOptions tune the remaining-life estimate; zero fields take the
// defaults (DefaultWindow, DefaultMinDives, DefaultLimitRatio,
// DefaultHorizon).
type LifeOptions struct {
	// Window is how many of the latest dives give the mean damage per
	// dive.
	Window int
	// MinDives is the fewest dives for an estimate from the recent dives.
	MinDives int
	// LimitRatio is the ratio to the allowable the life is projected to:
	// the hold level of the damage rule, in (0, 1]. Zero means 1 (the
	// allowable itself); a caller with a hold level should always give
	// it. Above 1 is refused: a projection past the allowable is never
	// on the safe side.
	LimitRatio float64
	// Horizon is the number of dives beyond which the life is reported
	// as "more than Horizon" (LifeBeyondHorizon), ≥ 1; zero means
	// DefaultHorizon.
	Horizon int64
	// DesignDive is the damage of one design dive per component, keyed
	// by component name: a dive to the rated depth with the configured
	// bottom time. Optional (nil: no design-dive projection); when given
	// it must list every component of the hull and no other. Its rate
	// also projects the life and the smaller of the two figures is
	// shown.
	DesignDive map[string]Damage
	// QualifiedCycles is the number of pressure cycles the design was
	// qualified for; nil when not known. When given, the dives left are
	// at most ⌊QualifiedCycles − CyclesUsed⌋.
	QualifiedCycles *float64
	// CyclesUsed is the number of pressure cycles the hull has already
	// seen (dives and proof cycles), counted against QualifiedCycles.
	CyclesUsed float64
}

// withDefaults fills the zero fields and checks the options.
func (o LifeOptions) withDefaults() (LifeOptions, error) {
	if o.Window == 0 {
		o.Window = DefaultWindow
	}
	if o.MinDives == 0 {
		o.MinDives = DefaultMinDives
	}
	if o.LimitRatio == 0 {
		o.LimitRatio = DefaultLimitRatio
	}
	if o.Horizon == 0 {
		o.Horizon = DefaultHorizon
	}
	if o.Window < 1 || o.MinDives < 1 || o.MinDives > o.Window {
		return o, fmt.Errorf("need 1 ≤ minimum dives (%d) ≤ window (%d)", o.MinDives, o.Window)
	}
	if !(o.LimitRatio > 0 && o.LimitRatio <= 1) {
		return o, fmt.Errorf("limit ratio %v must be in (0, 1] of the allowable", o.LimitRatio)
	}
	if o.Horizon < 1 {
		return o, fmt.Errorf("horizon %d dives must be at least 1", o.Horizon)
	}
	if q := o.QualifiedCycles; q != nil && (math.IsNaN(*q) || math.IsInf(*q, 0) || *q < 0) {
		return o, fmt.Errorf("qualified cycles %v must be a non-negative finite number", *q)
	}
	if math.IsNaN(o.CyclesUsed) || math.IsInf(o.CyclesUsed, 0) || o.CyclesUsed < 0 {
		return o, fmt.Errorf("cycles used %v must be a non-negative finite number", o.CyclesUsed)
	}
	return o, nil
}

// LifeStatus says what a remaining-life result is.
type LifeStatus string

// The remaining-life outcomes.
const (
	// LifeEstimated means Dives is an estimate.
	LifeEstimated LifeStatus = "estimated"
	// LifeTooFewDives means the hull has fewer dives than MinDives: no
	// estimate is given.
	LifeTooFewDives LifeStatus = "too_few_dives"
	// LifeNotLimited means the mean damage per dive is zero for every
	// component, and so is the design dive's if one is given, and no
	// qualified-cycle cap applies: the hull is not limited by damage at
	// this use.
	LifeNotLimited LifeStatus = "not_limited_by_damage"
	// LifeExhausted means a component has reached the limit ratio (the
	// allowable by default), or the qualified cycles are used: no dives
	// are left (Dives 0).
	LifeExhausted LifeStatus = "allowable_reached"
	// LifeBeyondHorizon means more than Horizon dives are left: Dives is
	// the horizon and means "more than", never a figure to count down.
	LifeBeyondHorizon LifeStatus = "beyond_horizon"
	// LifeVoid is for the caller: the hull is on hold, withdrawn, or has
	// evidence of damage open, and no projection is shown
	// (LifeVoidReason). RemainingLife never returns it.
	LifeVoid LifeStatus = "void_evidence_open"
)

// LifeBasis says which projection gives the figure shown.
type LifeBasis string

// The bases of the remaining life.
const (
	// BasisRecentMean is the mean damage per dive of the recent window.
	BasisRecentMean LifeBasis = "recent_mean"
	// BasisDesignDive is the damage of one design dive.
	BasisDesignDive LifeBasis = "design_dive"
	// BasisQualifiedCycles is the cap by the design's qualified pressure
	// cycles.
	BasisQualifiedCycles LifeBasis = "qualified_cycles"
	// BasisCurrentDamage is the damage already done (LifeExhausted by
	// damage).
	BasisCurrentDamage LifeBasis = "current_damage"
)

// Projection is the remaining life at one damage rate per dive.
type Projection struct {
	// Dives is the number of further dives before the limiting
	// component reaches the limit ratio, floored; when Beyond it is the
	// horizon.
	Dives int64
	// Beyond means more than Dives (the horizon) are left.
	Beyond bool
	// Component is the component that reaches the limit ratio first.
	Component string
	// PerDive is the limiting component's ratio increase per dive at this
	// rate (with separate combination, that of its limiting term).
	PerDive float64
}

// Life is a remaining-life estimate.
type Life struct {
	// Status says what the result is; Dives means something only for
	// LifeEstimated, LifeExhausted (0) and LifeBeyondHorizon ("more than
	// Dives").
	Status LifeStatus
	// Dives is the figure shown: the smaller of the two projections,
	// capped by the qualified cycles, floored; for LifeBeyondHorizon the
	// horizon.
	Dives int64
	// Basis says what gives Dives.
	Basis LifeBasis
	// Component is the component that limits the remaining life (empty
	// when the qualified cycles limit it).
	Component string
	// Governing is the component with the highest ratio now.
	Governing string
	// Ratio is the governing component's ratio now.
	Ratio float64
	// LimitRatio is the ratio projected to (the hold level).
	LimitRatio float64
	// Horizon is the horizon in dives.
	Horizon int64
	// AtRecentMean is the projection at the mean damage per dive of the
	// recent window; nil when too few dives or the mean is zero for
	// every component.
	AtRecentMean *Projection
	// AtDesignDive is the projection at the design dive's damage; nil
	// when no design dive is given or its damage is zero for every
	// component.
	AtDesignDive *Projection
	// CycleCap is ⌊QualifiedCycles − CyclesUsed⌋ (0 when used up); nil
	// when the qualified cycles are not known.
	CycleCap *int64
	// Window is the number of dives the mean was taken over.
	Window int
	// Reason explains the result in words, for reports.
	Reason string
}

// RemainingLife returns the dives left until a component reaches the
// limit ratio of its allowable (opt.LimitRatio, the hold level; 1 when
// not given).
//
// The rate is the MEAN damage per dive over the hull's latest dives
// (opt.Window, default 10): Miner's and Robinson's rules add, so the mean
// is the rate at which damage accrues — a median would hide a minority of
// deep dives. When opt.DesignDive is given, the damage of one design dive
// (rated depth, configured bottom time) is a second rate, and the smaller
// of the two figures is shown; both are returned. Every component is
// projected, not only the one governing now, and the earliest to reach
// the limit governs; with separate combination each allowable is
// projected on its own. When opt.QualifiedCycles is given the figure is
// at most ⌊QualifiedCycles − CyclesUsed⌋. A figure above opt.Horizon is
// LifeBeyondHorizon ("more than Horizon").
//
// A component at or above the limit ratio, or qualified cycles used up,
// give LifeExhausted whatever the number of dives. Fewer dives than
// opt.MinDives (default 3) give LifeTooFewDives (the design-dive
// projection is still returned, for information). Zero rates everywhere
// and no cycle cap give LifeNotLimited; a zero recent mean with a
// non-zero design dive still gives a figure. Quotients are floored:
// floating-point error may make an exact integer one dive fewer, never
// one more.
func (h Hull) RemainingLife(opt LifeOptions) (Life, error) {
	opt, err := opt.withDefaults()
	if err != nil {
		return Life{}, fmt.Errorf("remaining life: %w", err)
	}
	tot, err := h.Totals()
	if err != nil {
		return Life{}, fmt.Errorf("remaining life: %w", err)
	}
	if err := h.checkDesignDive(opt.DesignDive); err != nil {
		return Life{}, fmt.Errorf("remaining life: %w", err)
	}
	life := Life{Governing: tot.Governing, Ratio: tot.Ratio, LimitRatio: opt.LimitRatio, Horizon: opt.Horizon}
	if q := opt.QualifiedCycles; q != nil {
		c := floorDives(*q - opt.CyclesUsed)
		life.CycleCap = &c
	}
	if tot.Ratio >= opt.LimitRatio {
		life.Status, life.Basis, life.Component = LifeExhausted, BasisCurrentDamage, tot.Governing
		life.Reason = fmt.Sprintf("component %q is at %.4g of its allowable, at or above the limit of %.4g: no dives left", tot.Governing, tot.Ratio, opt.LimitRatio)
		return life, nil
	}
	if life.CycleCap != nil && *life.CycleCap == 0 {
		life.Status, life.Basis = LifeExhausted, BasisQualifiedCycles
		life.Reason = fmt.Sprintf("%.6g of the %.6g qualified pressure cycles are used: no dives left", opt.CyclesUsed, *opt.QualifiedCycles)
		return life, nil
	}

	// Rates per component and term, as ratio increase per dive.
	now := make([][]float64, len(h.Components))
	for ci, c := range h.Components {
		now[ci] = c.Limits.terms(tot.Components[ci].Total)
	}
	var designLeft float64
	if opt.DesignDive != nil {
		rate := make([][]float64, len(h.Components))
		for ci, c := range h.Components {
			rate[ci] = c.Limits.terms(opt.DesignDive[c.Name])
		}
		designLeft, life.AtDesignDive = h.project(now, rate, opt)
	}
	if len(h.Dives) < opt.MinDives {
		life.Status = LifeTooFewDives
		life.Reason = fmt.Sprintf("only %d dives recorded; at least %d are needed for a remaining-life estimate", len(h.Dives), opt.MinDives)
		return life, nil
	}
	recent := h.Dives[max(0, len(h.Dives)-opt.Window):]
	life.Window = len(recent)
	rate := make([][]float64, len(h.Components))
	for ci, c := range h.Components {
		sum := make([]float64, len(now[ci]))
		for _, d := range recent {
			for k, v := range c.Limits.terms(d.Damage[c.Name]) {
				sum[k] += v
			}
		}
		rate[ci] = make([]float64, len(sum))
		for k, s := range sum {
			rate[ci][k] = s / float64(len(recent))
		}
	}
	recentLeft, at := h.project(now, rate, opt)
	life.AtRecentMean = at

	// The smaller projection governs; then the cycle cap; then the
	// horizon.
	left := math.Inf(1)
	switch {
	case life.AtRecentMean != nil && (life.AtDesignDive == nil || recentLeft <= designLeft):
		left, life.Basis, life.Component = recentLeft, BasisRecentMean, life.AtRecentMean.Component
	case life.AtDesignDive != nil:
		left, life.Basis, life.Component = designLeft, BasisDesignDive, life.AtDesignDive.Component
	}
	dives := floorDives(left)
	if life.CycleCap != nil && (life.Basis == "" || *life.CycleCap < dives) {
		dives, life.Basis, life.Component = *life.CycleCap, BasisQualifiedCycles, ""
	}
	if life.Basis == "" {
		life.Status = LifeNotLimited
		life.Reason = fmt.Sprintf("mean damage per dive over the last %d dives is zero for every component", life.Window)
		if opt.DesignDive != nil {
			life.Reason += ", and so is the design dive's"
		}
		life.Reason += ": not limited by damage at this use"
		return life, nil
	}
	life.Status, life.Dives = LifeEstimated, dives
	if dives > opt.Horizon {
		life.Status, life.Dives = LifeBeyondHorizon, opt.Horizon
	}
	life.Reason = h.lifeReason(life, opt)
	return life, nil
}

// project returns the dives left, unfloored, at the given ratio increase
// per dive of each component and term, and the projection; nil when every
// rate is zero.
func (h Hull) project(now, rate [][]float64, opt LifeOptions) (float64, *Projection) {
	best := math.Inf(1)
	var p *Projection
	for ci, c := range h.Components {
		for k, r := range rate[ci] {
			if r == 0 {
				continue
			}
			left := (opt.LimitRatio - now[ci][k]) / r // r = +Inf gives 0
			if p == nil || left < best {
				best = left
				p = &Projection{Component: c.Name, PerDive: r}
			}
		}
	}
	if p == nil {
		return best, nil
	}
	p.Dives = floorDives(best)
	if p.Dives > opt.Horizon {
		p.Dives, p.Beyond = opt.Horizon, true
	}
	return best, p
}

// checkDesignDive checks that a design dive, when given, lists every
// component of the hull and no other, with valid damage.
func (h Hull) checkDesignDive(dd map[string]Damage) error {
	if dd == nil {
		return nil
	}
	for _, c := range h.Components {
		d, ok := dd[c.Name]
		if !ok {
			return fmt.Errorf("design dive: no damage for component %q", c.Name)
		}
		if err := d.validate(); err != nil {
			return fmt.Errorf("design dive: component %q: %w", c.Name, err)
		}
	}
	if len(dd) != len(h.Components) {
		names := make(map[string]bool, len(h.Components))
		for _, c := range h.Components {
			names[c.Name] = true
		}
		for name := range dd {
			if !names[name] {
				return fmt.Errorf("design dive: unknown component %q", name)
			}
		}
	}
	return nil
}

// lifeReason words an estimate (LifeEstimated or LifeBeyondHorizon).
func (h Hull) lifeReason(l Life, opt LifeOptions) string {
	figure := fmt.Sprintf("%d more dives", l.Dives)
	if l.Status == LifeBeyondHorizon {
		figure = fmt.Sprintf("more than %d dives (the horizon)", l.Dives)
	}
	limit := "its allowable"
	if opt.LimitRatio != 1 {
		limit = fmt.Sprintf("%.4g of its allowable (the limit projected to)", opt.LimitRatio)
	}
	describe := func(p *Projection, rate string) string {
		n := fmt.Sprintf("%d dives", p.Dives)
		if p.Beyond {
			n = fmt.Sprintf("more than %d dives", p.Dives)
		}
		return fmt.Sprintf("%s at %s (component %q, %.4g of the allowable per dive)", n, rate, p.Component, p.PerDive)
	}
	recent := fmt.Sprintf("the mean damage of the last %d dives", l.Window)
	design := "the damage of one design dive"
	var s string
	switch l.Basis {
	case BasisRecentMean:
		s = fmt.Sprintf("component %q reaches %s after %s at %s (%.4g of the allowable per dive)",
			l.Component, limit, figure, recent, l.AtRecentMean.PerDive)
		if l.AtDesignDive != nil {
			s += "; " + describe(l.AtDesignDive, design) + ", the smaller governs"
		}
	case BasisDesignDive:
		s = fmt.Sprintf("component %q reaches %s after %s at %s (%.4g of the allowable per dive)",
			l.Component, limit, figure, design, l.AtDesignDive.PerDive)
		if l.AtRecentMean != nil {
			s += "; " + describe(l.AtRecentMean, recent) + ", the smaller governs"
		} else {
			s += fmt.Sprintf("; the mean damage per dive over the last %d dives is zero", l.Window)
		}
	case BasisQualifiedCycles:
		s = fmt.Sprintf("%s: capped by the qualified pressure cycles (%.6g qualified, %.6g used)", figure, *opt.QualifiedCycles, opt.CyclesUsed)
		sep := "; by damage alone: "
		for _, p := range []struct {
			p    *Projection
			rate string
		}{{l.AtRecentMean, recent}, {l.AtDesignDive, design}} {
			if p.p != nil {
				s += sep + describe(p.p, p.rate)
				sep = " and "
			}
		}
		if l.AtRecentMean == nil && l.AtDesignDive == nil {
			s += "; damage per dive is zero for every component"
		}
	}
	if l.Component != "" && l.Component != l.Governing {
		s += fmt.Sprintf("; component %q governs now but accumulates damage more slowly", l.Governing)
	}
	return s
}

// floorDives floors a non-negative number of dives, saturating at the
// largest int64.
func floorDives(x float64) int64 {
	if !(x > 0) {
		return 0
	}
	if x >= math.MaxInt64 {
		return math.MaxInt64
	}
	return int64(math.Floor(x))
}
