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
}

// Component is a component ready for assessment.
type Component struct {
	Name     string
	Transfer load.Choice
	Curve    sn.Curve
	Rupture  *sn.Rupture
}

// Resolve chooses each component's transfer and looks up its curves.
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
	c := Component{Name: s.Name}
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
	if s.Calibration != nil {
		cands = append(cands, *s.Calibration)
	}
	ch, err := load.Choose(cands...)
	if err != nil {
		return c, err
	}
	switch {
	case s.Basis == "gauge" && s.Calibration == nil:
		ch.Reason = "gauge calibration asked for but no proof test with strain is recorded yet; " + ch.Reason
	case s.Basis == "lame" && ch.Transfer.Basis != load.BasisLame:
		ch.Reason = "spec asks for Lamé; " + ch.Reason
	}
	if s.Kind != "laminate_cylinder" && s.Kind != "laminate_sphere" && ch.Transfer.Basis == load.BasisLame {
		ch.Reason += "; the shell's Lamé stress is used for a " + s.Kind + ", which has its own stress concentration: give the designer's factor"
	}
	c.Transfer = ch
	return c, nil
}

// Settings are the assessment's operator choices.
type Settings struct {
	DFF        float64
	MeanStress sn.MeanStress
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
}

// ErrNoComponents is returned for a hull without components.
var ErrNoComponents = errors.New("no components to assess")

// Assessor assesses dives on a hull's components with one set of
// settings; its curves are checked once, when it is made.
type Assessor struct {
	comps  []Component
	miners []*damage.MinerSum
	buf    []damage.Cycle
	holds  []damage.Hold
}

// NewAssessor checks the components' curves with the settings.
func NewAssessor(comps []Component, s Settings) (*Assessor, error) {
	if len(comps) == 0 {
		return nil, ErrNoComponents
	}
	a := &Assessor{comps: comps}
	for _, c := range comps {
		m, err := damage.NewMinerSum(c.Curve, s.MeanStress, s.DFF)
		if err != nil {
			return nil, fmt.Errorf("component %s: %w", c.Name, err)
		}
		a.miners = append(a.miners, m)
		if c.Rupture != nil {
			if err := c.Rupture.Validate(); err != nil {
				return nil, fmt.Errorf("component %s: %w", c.Name, err)
			}
		}
	}
	return a, nil
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
	out := make([]Result, 0, len(a.comps))
	for ci, c := range a.comps {
		f := c.Transfer.Transfer.Factor
		buf := a.buf[:0]
		for _, pc := range d.PressureCycles {
			buf = append(buf, damage.Cycle{Range: math.Abs(f) * pc.Range, Mean: f * pc.Mean, Count: pc.Count})
		}
		a.buf = buf
		cy, err := a.miners[ci].Sum(buf)
		if err != nil {
			return nil, fmt.Errorf("component %s: %w", c.Name, err)
		}
		r := Result{Component: c.Name, Cyclic: cy, Factor: f, Basis: c.Transfer.Transfer.Basis}
		r.Damage.Cyclic = cy.Damage
		if c.Rupture != nil {
			holds := a.holds[:0]
			for _, h := range d.Holds {
				holds = append(holds, damage.Hold{Stress: f * h.LevelMPa, Duration: h.Seconds})
			}
			a.holds = holds
			su, err := damage.Robinson(holds, *c.Rupture)
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
