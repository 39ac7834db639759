// Package damage sums the fatigue damage of a composite pressure hull:
// Palmgren–Miner for counted stress cycles, Robinson's time-fraction rule
// for sustained load at depth, cumulative sums per component and per hull,
// the governing component, and the dives left.
//
// Cyclic damage (Miner): D = DFF × Σ nᵢ/Nᵢ over the counted cycles of one
// component, Nᵢ from the component's S-N curve with its mean-stress
// correction (package sn). A cycle of zero range, below a curve's cut-off
// or otherwise of infinite life adds nothing.
//
// Sustained damage (Robinson): D_t = Σ Δtᵢ / t_r(σᵢ), t_r from the
// material's stress-rupture curve. Only the stress on the curve's side
// counts (compression for a laminate under external pressure); stress of
// the other sign, or zero, adds nothing.
//
// Combination: by default cyclic and sustained damage ADD against one
// allowable, (D + D_t)/allowable — common practice for a linear
// damage rule, and the operator's choice: Limits.Combine may instead keep
// them separate, each against its own allowable, and the larger ratio
// governs. The allowable is a configured limit; for composites it is
// usually well below 1 because the linear rule is not conservative for
// them.
//
// Rounding: nothing here is rounded; sums are kept in float64. Counts
// below one cycle of life, or a stress at or above the static strength,
// give +Inf damage rather than a large finite number. Dives left are
// floored, never rounded up. For display, RoundUp rounds damage up — never
// in the hull's favour.
package damage

import (
	"errors"
	"fmt"
	"math"

	"hulltally/fatigue/sn"
)

// Cycle is one counted stress cycle of a component, as rainflow gives it:
// range (≥ 0) and mean (signed, compression negative) in MPa, and count
// (1 for a full cycle, 0.5 for a half cycle).
type Cycle struct {
	// Range is the stress range in MPa.
	Range float64
	// Mean is the mean stress in MPa, compression negative.
	Mean float64
	// Count is the number of cycles, 0.5 for a half cycle.
	Count float64
}

// Cyclic is the Miner damage of a set of cycles on one component.
type Cyclic struct {
	// Damage is the factored damage DFF × Σ n/N.
	Damage float64
	// Unfactored is Σ n/N before the design fatigue factor.
	Unfactored float64
	// DFF is the design fatigue factor applied.
	DFF float64
	// Curve names the S-N curve used.
	Curve string
	// MeanStress names the mean-stress correction used.
	MeanStress sn.MeanStress
	// Cycles is the total count given.
	Cycles float64
	// Damaging is the count of cycles that added damage.
	Damaging float64
	// Overload is the count of cycles with a life below one cycle (static
	// strength reached); any such cycle makes the damage at least its
	// count times DFF, or +Inf.
	Overload float64
}

// Miner returns the Palmgren–Miner damage of cycles on a component with
// the S-N curve c, mean-stress correction ms and design fatigue factor dff
// (≥ 1): D = dff × Σ nᵢ/Nᵢ. Cycles with N = +Inf (zero range, below the
// cut-off) add nothing; N = 0 gives +Inf.
func Miner(cycles []Cycle, c sn.Curve, ms sn.MeanStress, dff float64) (Cyclic, error) {
	m, err := NewMinerSum(c, ms, dff)
	if err != nil {
		return Cyclic{}, err
	}
	return m.Sum(cycles)
}

// MinerSum is a checked curve, mean-stress correction and design fatigue
// factor, for summing the damage of many cycle sets without checking the
// curve again each time.
type MinerSum struct {
	c   sn.Curve
	ms  sn.MeanStress
	dff float64
}

// NewMinerSum checks the curve, the correction and the factor once.
func NewMinerSum(c sn.Curve, ms sn.MeanStress, dff float64) (*MinerSum, error) {
	if err := c.Validate(); err != nil {
		return nil, fmt.Errorf("miner: %w", err)
	}
	if _, err := sn.ParseMeanStress(string(ms)); err != nil {
		return nil, fmt.Errorf("miner on curve %q: %w", c.Name, err)
	}
	if err := sn.CheckDFF(dff); err != nil {
		return nil, fmt.Errorf("miner on curve %q: %w", c.Name, err)
	}
	return &MinerSum{c: c, ms: ms, dff: dff}, nil
}

// Sum is Miner's rule on cycles (see Miner).
func (m *MinerSum) Sum(cycles []Cycle) (Cyclic, error) {
	out := m.Start()
	if err := m.Add(&out, cycles); err != nil {
		return Cyclic{}, err
	}
	return out, nil
}

// Start returns an empty sum, to be continued by Add.
func (m *MinerSum) Start() Cyclic {
	return Cyclic{DFF: m.dff, Curve: m.c.Name, MeanStress: m.ms}
}

// Add continues the sum out with more cycles of the same record. The terms
// are added one by one in the order given, so a record summed in parts
// gives exactly (bit for bit) what Sum gives for the whole. On an error
// out is left part-summed and must not be used.
func (m *MinerSum) Add(out *Cyclic, cycles []Cycle) error {
	c, ms, dff := m.c, m.ms, m.dff
	for i, cy := range cycles {
		if err := cy.validate(); err != nil {
			return fmt.Errorf("miner on curve %q: cycle %d: %w", c.Name, i+1, err)
		}
		out.Cycles += cy.Count
		if cy.Count == 0 || cy.Range == 0 {
			continue
		}
		n, err := c.CyclesToFailure(cy.Range, cy.Mean, ms)
		if err != nil {
			return fmt.Errorf("miner: cycle %d: %w", i+1, err)
		}
		if math.IsInf(n, 1) {
			continue
		}
		out.Damaging += cy.Count
		if n < 1 {
			out.Overload += cy.Count
		}
		if n == 0 {
			out.Unfactored = math.Inf(1)
			continue
		}
		out.Unfactored += cy.Count / n
	}
	out.Damage = out.Unfactored * dff
	return nil
}

func (c Cycle) validate() error {
	if math.IsNaN(c.Range) || math.IsInf(c.Range, 0) || c.Range < 0 {
		return fmt.Errorf("range %v MPa must be a non-negative finite number", c.Range)
	}
	if math.IsNaN(c.Mean) || math.IsInf(c.Mean, 0) {
		return fmt.Errorf("mean %v MPa must be a finite number", c.Mean)
	}
	if math.IsNaN(c.Count) || math.IsInf(c.Count, 0) || c.Count < 0 {
		return fmt.Errorf("count %v must be a non-negative finite number", c.Count)
	}
	return nil
}

// Hold is a stress held for a duration: stress in MPa (compression
// negative), duration in seconds.
type Hold struct {
	// Stress is the sustained stress in MPa.
	Stress float64
	// Duration is the time at that stress in s.
	Duration float64
}

// Sample is one point of a stress history: time in s, stress in MPa.
type Sample struct {
	// Time is the time in s, strictly increasing along a history.
	Time float64
	// Stress is the stress in MPa, compression negative.
	Stress float64
}

// Sustained is the Robinson damage of a stress history on one component.
type Sustained struct {
	// Damage is Σ Δt/t_r.
	Damage float64
	// Curve names the stress-rupture curve used.
	Curve string
	// Seconds is the time under stress on the curve's side.
	Seconds float64
	// Overload is the time in s at or above the static strength, where
	// t_r = 0 and the damage is +Inf.
	Overload float64
}

// Robinson returns the time-fraction damage Σ Δtᵢ / t_r(σᵢ) of the holds
// with the stress-rupture curve r (t_r in hours, durations in seconds).
// Stress on the other side of the curve adds nothing; a stress at or
// above the static strength for any positive time gives +Inf.
func Robinson(holds []Hold, r sn.Rupture) (Sustained, error) {
	if err := r.Validate(); err != nil {
		return Sustained{}, fmt.Errorf("robinson: %w", err)
	}
	out := Sustained{Curve: r.Name}
	for i, h := range holds {
		if math.IsNaN(h.Stress) || math.IsInf(h.Stress, 0) {
			return Sustained{}, fmt.Errorf("robinson on curve %q: hold %d: stress %v MPa is not a finite number", r.Name, i+1, h.Stress)
		}
		if math.IsNaN(h.Duration) || math.IsInf(h.Duration, 0) || h.Duration < 0 {
			return Sustained{}, fmt.Errorf("robinson on curve %q: hold %d: duration %v s must be a non-negative finite number", r.Name, i+1, h.Duration)
		}
		if h.Duration == 0 || r.Magnitude(h.Stress) == 0 {
			continue
		}
		out.Seconds += h.Duration
		tr := r.Hours(h.Stress)
		if tr == 0 {
			out.Overload += h.Duration
			out.Damage = math.Inf(1)
			continue
		}
		out.Damage += (h.Duration / 3600) / tr
	}
	return out, nil
}

// HoldsFromSamples turns a sampled stress history into holds: each
// interval between two samples becomes one hold at the stress of whichever
// end is the more damaging for r (the larger magnitude on the curve's
// side) — an upper bound for a history that is monotonic between samples,
// never in the hull's favour. Times must be finite and strictly
// increasing.
func HoldsFromSamples(samples []Sample, r sn.Rupture) ([]Hold, error) {
	holds := make([]Hold, 0, max(len(samples)-1, 0))
	for i, s := range samples {
		if math.IsNaN(s.Time) || math.IsInf(s.Time, 0) {
			return nil, fmt.Errorf("stress history: sample %d: time %v s is not a finite number", i+1, s.Time)
		}
		if math.IsNaN(s.Stress) || math.IsInf(s.Stress, 0) {
			return nil, fmt.Errorf("stress history: sample %d: stress %v MPa is not a finite number", i+1, s.Stress)
		}
		if i == 0 {
			continue
		}
		p := samples[i-1]
		if !(s.Time > p.Time) {
			return nil, fmt.Errorf("stress history: sample %d: time %v s does not follow %v s", i+1, s.Time, p.Time)
		}
		st := p.Stress
		if r.Magnitude(s.Stress) > r.Magnitude(p.Stress) {
			st = s.Stress
		}
		holds = append(holds, Hold{Stress: st, Duration: s.Time - p.Time})
	}
	return holds, nil
}

// RobinsonSamples is Robinson over HoldsFromSamples.
func RobinsonSamples(samples []Sample, r sn.Rupture) (Sustained, error) {
	holds, err := HoldsFromSamples(samples, r)
	if err != nil {
		return Sustained{}, fmt.Errorf("robinson on curve %q: %w", r.Name, err)
	}
	return Robinson(holds, r)
}

// RoundUp rounds a damage value up to the given number of decimals, for
// display: never in the hull's favour. +Inf stays +Inf.
func RoundUp(x float64, decimals int) (float64, error) {
	if math.IsNaN(x) {
		return 0, errors.New("round up: damage is NaN")
	}
	if decimals < 0 || decimals > 15 {
		return 0, fmt.Errorf("round up: %d decimals is outside 0…15", decimals)
	}
	if math.IsInf(x, 0) {
		return x, nil
	}
	f := math.Pow(10, float64(decimals))
	k := math.Ceil(x * f)
	if k/f < x { // x·f rounded down onto an integer
		k++
	}
	return k / f, nil
}
