package damage

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// Combination says whether cyclic and sustained damage add.
type Combination string

// The ways to combine cyclic and sustained damage.
const (
	// CombineAdd adds them against one allowable: (D + D_t)/Allowable.
	// Common practice for a linear damage rule; the default.
	CombineAdd Combination = "add"
	// CombineSeparate keeps them apart: max(D/Allowable,
	// D_t/SustainedAllowable).
	CombineSeparate Combination = "separate"
)

// Defaults of the remaining-life estimate.
const (
	// DefaultWindow is the number of most recent dives whose median
	// damage per dive projects the remaining life.
	DefaultWindow = 10
	// DefaultMinDives is the fewest dives for a remaining-life estimate.
	DefaultMinDives = 3
)

// Damage is the cyclic (Miner, factored) and sustained (Robinson) damage
// of one component, for one dive or summed.
type Damage struct {
	// Cyclic is the factored Miner damage.
	Cyclic float64
	// Sustained is the Robinson time-fraction damage.
	Sustained float64
}

// Add returns d + o.
func (d Damage) Add(o Damage) Damage {
	return Damage{Cyclic: d.Cyclic + o.Cyclic, Sustained: d.Sustained + o.Sustained}
}

func (d Damage) validate() error {
	for _, v := range []struct {
		name string
		x    float64
	}{{"cyclic", d.Cyclic}, {"sustained", d.Sustained}} {
		if math.IsNaN(v.x) || v.x < 0 {
			return fmt.Errorf("%s damage %v must be a non-negative number", v.name, v.x)
		}
	}
	return nil
}

// Limits are a component's allowable damage, configured by the operator.
type Limits struct {
	// Allowable is the allowable damage sum (cyclic with the design
	// fatigue factor already applied, plus sustained when they add),
	// > 0. Often 1 for metals and well below 1 for composites.
	Allowable float64
	// SustainedAllowable is the allowable Robinson sum when the two are
	// kept separate; unused with CombineAdd.
	SustainedAllowable float64
	// Combine is CombineAdd (also the zero value) or CombineSeparate.
	Combine Combination
}

// Combination returns the effective combination: CombineAdd when unset.
func (l Limits) Combination() Combination {
	if l.Combine == "" {
		return CombineAdd
	}
	return l.Combine
}

// Validate checks positive finite allowables and a known combination.
func (l Limits) Validate() error {
	if !(l.Allowable > 0) || math.IsInf(l.Allowable, 0) {
		return fmt.Errorf("allowable damage must be a positive finite number, got %v", l.Allowable)
	}
	switch l.Combination() {
	case CombineAdd:
	case CombineSeparate:
		if !(l.SustainedAllowable > 0) || math.IsInf(l.SustainedAllowable, 0) {
			return fmt.Errorf("sustained allowable must be a positive finite number when damage is kept separate, got %v", l.SustainedAllowable)
		}
	default:
		return fmt.Errorf("combination %q: want add or separate", l.Combine)
	}
	return nil
}

// terms returns the ratio terms of d against l: one term when the damages
// add, two when they are separate. The ratio is the largest term.
func (l Limits) terms(d Damage) []float64 {
	if l.Combination() == CombineSeparate {
		return []float64{d.Cyclic / l.Allowable, d.Sustained / l.SustainedAllowable}
	}
	return []float64{(d.Cyclic + d.Sustained) / l.Allowable}
}

// Ratio returns the damage d as a fraction of the allowable: 1 means the
// allowable is reached.
func (l Limits) Ratio(d Damage) float64 {
	r := 0.0
	for _, t := range l.terms(d) {
		r = math.Max(r, t)
	}
	return r
}

// Component is one hull component in the damage ledger.
type Component struct {
	// Name is the component's name, unique within the hull.
	Name string
	// Limits are its allowables.
	Limits Limits
	// Prior is damage done before the first dive listed (proof tests,
	// earlier records).
	Prior Damage
}

// Dive is one dive's damage per component, keyed by component name.
type Dive struct {
	// ID identifies the dive in messages.
	ID string
	// Damage is the dive's damage on each component; every component of
	// the hull must be present.
	Damage map[string]Damage
}

// Hull is a hull's components and its dives, oldest first.
type Hull struct {
	// Components are the hull's components.
	Components []Component
	// Dives are the hull's dives, oldest first.
	Dives []Dive
}

// ComponentTotal is a component's cumulative damage.
type ComponentTotal struct {
	// Name is the component.
	Name string
	// Limits are its allowables.
	Limits Limits
	// Total is Prior plus the sum over all dives.
	Total Damage
	// Ratio is Total against the allowable (1 = allowable reached).
	Ratio float64
}

// Totals are a hull's cumulative damage.
type Totals struct {
	// Components are the per-component totals, in the hull's order.
	Components []ComponentTotal
	// Governing is the component with the highest ratio (the first one
	// on a tie).
	Governing string
	// Ratio is the governing component's ratio.
	Ratio float64
}

// Validate checks the hull: at least one component, unique names, valid
// limits, non-negative damage, and every dive listing exactly the hull's
// components.
func (h Hull) Validate() error {
	if len(h.Components) == 0 {
		return errors.New("hull damage: no components")
	}
	names := make(map[string]bool, len(h.Components))
	for _, c := range h.Components {
		if c.Name == "" {
			return errors.New("hull damage: a component has no name")
		}
		if names[c.Name] {
			return fmt.Errorf("hull damage: component %q listed twice", c.Name)
		}
		names[c.Name] = true
		if err := c.Limits.Validate(); err != nil {
			return fmt.Errorf("hull damage: component %q: %w", c.Name, err)
		}
		if err := c.Prior.validate(); err != nil {
			return fmt.Errorf("hull damage: component %q: prior %w", c.Name, err)
		}
	}
	for i, d := range h.Dives {
		for _, c := range h.Components {
			dd, ok := d.Damage[c.Name]
			if !ok {
				return fmt.Errorf("hull damage: dive %d (%s): no damage for component %q", i+1, d.ID, c.Name)
			}
			if err := dd.validate(); err != nil {
				return fmt.Errorf("hull damage: dive %d (%s): component %q: %w", i+1, d.ID, c.Name, err)
			}
		}
		if len(d.Damage) != len(h.Components) {
			for name := range d.Damage {
				if !names[name] {
					return fmt.Errorf("hull damage: dive %d (%s): unknown component %q", i+1, d.ID, name)
				}
			}
		}
	}
	return nil
}

// Totals returns the cumulative damage per component after all dives and
// the governing component.
func (h Hull) Totals() (Totals, error) {
	all, err := h.Cumulative()
	if err != nil {
		return Totals{}, err
	}
	return all[len(all)-1], nil
}

// Cumulative returns the totals before any dive (index 0, Prior only) and
// after each dive (index i after dive i), for histories and charts.
func (h Hull) Cumulative() ([]Totals, error) {
	if err := h.Validate(); err != nil {
		return nil, err
	}
	sum := make([]Damage, len(h.Components))
	for i, c := range h.Components {
		sum[i] = c.Prior
	}
	out := make([]Totals, 0, len(h.Dives)+1)
	out = append(out, h.totals(sum))
	for _, d := range h.Dives {
		for i, c := range h.Components {
			sum[i] = sum[i].Add(d.Damage[c.Name])
		}
		out = append(out, h.totals(sum))
	}
	return out, nil
}

func (h Hull) totals(sum []Damage) Totals {
	t := Totals{Components: make([]ComponentTotal, len(h.Components)), Ratio: -1}
	for i, c := range h.Components {
		r := c.Limits.Ratio(sum[i])
		t.Components[i] = ComponentTotal{Name: c.Name, Limits: c.Limits, Total: sum[i], Ratio: r}
		if r > t.Ratio {
			t.Governing, t.Ratio = c.Name, r
		}
	}
	return t
}

// LifeOptions tune the remaining-life estimate; zero fields take the
// defaults (DefaultWindow, DefaultMinDives).
type LifeOptions struct {
	// Window is how many of the latest dives give the median damage per
	// dive.
	Window int
	// MinDives is the fewest dives for an estimate.
	MinDives int
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
	// LifeNotLimited means the median damage per dive is zero for every
	// component: the hull is not limited by damage at its recent use.
	LifeNotLimited LifeStatus = "not_limited_by_damage"
	// LifeExhausted means a component has reached its allowable: no dives
	// are left.
	LifeExhausted LifeStatus = "allowable_reached"
)

// Life is a remaining-life estimate.
type Life struct {
	// Status says what the result is; Dives means something only for
	// LifeEstimated and LifeExhausted (0).
	Status LifeStatus
	// Dives is the number of further dives, at the median damage per
	// dive, before the limiting component reaches its allowable, floored.
	Dives int64
	// Component is the component that limits the remaining life.
	Component string
	// Governing is the component with the highest ratio now.
	Governing string
	// Ratio is the governing component's ratio now.
	Ratio float64
	// MedianPerDive is the median increase per dive of the limiting
	// component's ratio over the window.
	MedianPerDive float64
	// Window is the number of dives the median was taken over.
	Window int
	// Reason explains the result in words, for reports.
	Reason string
}

// RemainingLife returns the dives left until a component reaches its
// allowable, at the median damage per dive of the hull's latest dives
// (opt.Window, default 10). Every component is projected, not only the
// one governing now, and the earliest to reach its allowable limits the
// life; with separate combination each allowable is projected on its own.
// The median of an even number of dives is the mean of the two middle
// ones. Fewer dives than opt.MinDives (default 3) give LifeTooFewDives, a
// zero median for every component LifeNotLimited; a component already at
// its allowable gives LifeExhausted whatever the number of dives. The
// quotient is floored: floating-point error may make an exact integer
// one dive fewer, never one more.
func (h Hull) RemainingLife(opt LifeOptions) (Life, error) {
	if opt.Window == 0 {
		opt.Window = DefaultWindow
	}
	if opt.MinDives == 0 {
		opt.MinDives = DefaultMinDives
	}
	if opt.Window < 1 || opt.MinDives < 1 || opt.MinDives > opt.Window {
		return Life{}, fmt.Errorf("remaining life: need 1 ≤ minimum dives (%d) ≤ window (%d)", opt.MinDives, opt.Window)
	}
	tot, err := h.Totals()
	if err != nil {
		return Life{}, fmt.Errorf("remaining life: %w", err)
	}
	life := Life{Governing: tot.Governing, Ratio: tot.Ratio}
	if tot.Ratio >= 1 {
		life.Status, life.Component = LifeExhausted, tot.Governing
		life.Reason = fmt.Sprintf("component %q is at %.4g of its allowable: no dives left", tot.Governing, tot.Ratio)
		return life, nil
	}
	if len(h.Dives) < opt.MinDives {
		life.Status = LifeTooFewDives
		life.Reason = fmt.Sprintf("only %d dives recorded; at least %d are needed for a remaining-life estimate", len(h.Dives), opt.MinDives)
		return life, nil
	}
	recent := h.Dives[max(0, len(h.Dives)-opt.Window):]
	life.Window = len(recent)
	best := math.Inf(1)
	for ci, c := range h.Components {
		now := c.Limits.terms(tot.Components[ci].Total)
		per := make([][]float64, len(now))
		for _, d := range recent {
			for k, v := range c.Limits.terms(d.Damage[c.Name]) {
				per[k] = append(per[k], v)
			}
		}
		for k := range now {
			m := median(per[k])
			if m == 0 {
				continue
			}
			left := (1 - now[k]) / m
			if left < best || life.Component == "" {
				best, life.Component, life.MedianPerDive = left, c.Name, m
			}
		}
	}
	if life.Component == "" {
		life.Status = LifeNotLimited
		life.Reason = fmt.Sprintf("median damage per dive over the last %d dives is zero for every component: not limited by damage at this use", life.Window)
		return life, nil
	}
	life.Status = LifeEstimated
	life.Dives = floorDives(best)
	life.Reason = fmt.Sprintf("component %q reaches its allowable after %d more dives at the median of the last %d dives (%.4g of the allowable per dive)",
		life.Component, life.Dives, life.Window, life.MedianPerDive)
	if life.Component != life.Governing {
		life.Reason += fmt.Sprintf("; component %q governs now but accumulates damage more slowly", life.Governing)
	}
	return life, nil
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

// median returns the median of xs (not empty); for an even count, the
// mean of the two middle values.
func median(xs []float64) float64 {
	s := append([]float64(nil), xs...)
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	a, b := s[n/2-1], s[n/2]
	if math.IsInf(a, 1) || math.IsInf(b, 1) {
		return math.Inf(1)
	}
	return a/2 + b/2
}
