package ledger

import (
	"fmt"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/damage"
	"hulltally/fatigue/fitness"
	"hulltally/fatigue/seawater"
)

// damageHoldLevel is the hold level of the damage rule in force (the
// ratio of the allowable the remaining life is projected to); 1 when no
// rule on damage has a hold level.
func (l *Ledger) damageHoldLevel() float64 {
	lvl := 1.0
	if l.rulesSet == nil {
		return lvl
	}
	for _, r := range l.rulesSet.Rules {
		if r.Measure == fitness.MeasureDamageRatio && r.Hold != nil && r.Hold.At > 0 && r.Hold.At < lvl {
			lvl = r.Hold.At
		}
	}
	return lvl
}

// designDive is the damage per component of one design dive: from the
// surface to the rated depth's pressure (at latitude 90°, the most
// pressure per metre) and back, with the configured bottom time at it.
func (l *Ledger) designDive(h *Hull) (map[string]damage.Damage, string, error) {
	comps, err := l.resolve(h.Spec)
	if err != nil {
		return nil, "", err
	}
	p := seawater.DepthToMPa(h.Spec.RatedDepthM, 90)
	bt := l.cfg.Fatigue.DesignBottomTimeMin
	d := assess.Dive{PressureCycles: joinCycles([]float64{p}, []float64{p / 2}, []float64{1}),
		Holds: []assess.Hold{{LevelMPa: p, Seconds: bt * 60}}}
	res, err := assess.DiveDamage(d, comps, l.fat.settings)
	if err != nil {
		return nil, "", err
	}
	out := make(map[string]damage.Damage, len(res))
	for _, r := range res {
		out[r.Component] = r.Damage
	}
	return out, fmt.Sprintf("one cycle to the rated depth %.0f m (%.3f MPa at latitude 90°) with %.0f min at it", h.Spec.RatedDepthM, p, bt), nil
}

// ProofDamage is the damage charged for proof tests recorded without
// samples.
type ProofDamage struct {
	Count     int    `json:"count"`
	Cyclic    Num    `json:"cyclic"`
	Sustained Num    `json:"sustained"`
	Basis     string `json:"basis"`
}

// proofTestDamage charges each proof test recorded without samples as one
// cycle from the surface to its recorded pressure with proof.hold_min at
// it, per component: a proof test is a load the hull carried, passed or
// failed, and without its samples it is charged as a plain profile.
func (l *Ledger) proofTestDamage(h *Hull, pressures []float64) (map[string]damage.Damage, error) {
	if len(pressures) == 0 {
		return nil, nil
	}
	comps, err := l.resolve(h.Spec)
	if err != nil {
		return nil, err
	}
	out := map[string]damage.Damage{}
	for _, p := range pressures {
		d := assess.Dive{PressureCycles: joinCycles([]float64{p}, []float64{p / 2}, []float64{1}),
			Holds: []assess.Hold{{LevelMPa: p, Seconds: l.cfg.Proof.HoldMin * 60}}}
		res, err := assess.DiveDamage(d, comps, l.fat.settings)
		if err != nil {
			return nil, err
		}
		for _, r := range res {
			out[r.Component] = out[r.Component].Add(r.Damage)
		}
	}
	return out, nil
}
