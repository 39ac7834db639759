package damage

import (
	"errors"
	"fmt"
	"math"
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
	// DefaultWindow is the number of most recent dives whose mean damage
	// per dive projects the remaining life.
	DefaultWindow = 10
	// DefaultMinDives is the fewest dives for a remaining-life estimate.
	DefaultMinDives = 3
	// DefaultLimitRatio is the ratio projected to when none is given: the
	// allowable itself. A caller with a hold level below the allowable
	// should give it (LifeOptions.LimitRatio).
	DefaultLimitRatio = 1.0
	// DefaultHorizon is the number of dives beyond which the remaining
	// life is reported as "more than" this many rather than as a figure.
	DefaultHorizon int64 = 100000
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
