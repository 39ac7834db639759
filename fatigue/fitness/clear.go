package fitness

import (
	"fmt"
	"math"
	"sort"

	"hulltally/fatigue/seawater"
)

// Plan is a dive the operator means to make.
type Plan struct {
	// DepthM is the planned maximum depth, m.
	DepthM float64
	// PressureMPa is the planned maximum gauge pressure, MPa; 0 means not
	// given. Clear takes the larger of it and the pressure of DepthM at
	// latitude 90° (the most pressure per metre: the safe side).
	PressureMPa float64
	// BottomTimeMin is the planned time at depth, minutes (reported only;
	// its damage is in PredictedDamageRatio).
	BottomTimeMin float64
	// PredictedDamageRatio is the damage the caller predicts the planned
	// dive will do to the governing component, as a ratio of its
	// allowable.
	PredictedDamageRatio float64
	// RemainingRatio is the caller's own figure for what is left of the
	// allowable, as a ratio; 0 means not given. When given and smaller
	// than what the facts leave, it is used instead (the safe side).
	RemainingRatio float64
}

// Clearance is the answer to "may this hull make this dive?".
type Clearance struct {
	// Go is true only when no reason is a no-go.
	Go bool
	// Reasons lists every check, the no-go ones first, then the passed
	// and informational ones.
	Reasons []Reason
}

// Clear decides go or no-go for the planned dive. It is no-go when the
// status is hold or withdrawn (or unknown); when the plan is not a valid
// set of numbers; when the rated depth is not known or the planned depth
// exceeds it (or trips the depth rule's hold level); when the predicted
// damage exceeds what is left of the allowable (the damage rule's hold
// level, at most 1, minus the governing ratio; unknown damage leaves
// nothing); when the planned pressure reaches the collapse-fraction
// rule's hold level of the collapse pressure (or the collapse pressure is
// not known); when a rule on the time or dives since the last inspection
// or proof test stands at hold; and when there are no rules. A watch
// status is go with a reason saying so. Every check is listed, passed or
// not.
func Clear(v Verdict, f HullFacts, p Plan, r *Rules) Clearance {
	var reasons []Reason
	check := func(code string, nogo bool, state State, format string, args ...any) {
		reasons = append(reasons, Reason{Kind: "check", Code: code, NoGo: nogo, State: state, Text: fmt.Sprintf(format, args...)})
	}

	// Status.
	switch v.State {
	case Fit:
		check("status", false, Fit, "status fit: no open flag")
	case Watch:
		n := 0
		for _, x := range v.Reasons {
			if x.State == Watch {
				n++
			}
		}
		check("status", false, Watch, "status watch: the dive may go, with %d open watch reason(s) to keep in view", n)
	case Hold:
		check("status", true, Hold, "status hold: the hull does not dive until the holds are cleared")
	case Withdrawn:
		check("status", true, Withdrawn, "status withdrawn: the hull is out of service until a decision returns it")
	default:
		check("status", true, Hold, "status %q is not known: taken as hold", v.State)
	}
	for _, x := range v.Reasons {
		if x.State == Hold || x.State == Withdrawn || x.State == Watch {
			reasons = append(reasons, Reason{Kind: x.Kind, Code: x.Code, State: x.State,
				NoGo: x.State != Watch, Text: x.Text, At: x.At})
		}
	}

	if r == nil || len(r.Rules) == 0 {
		check("rules", true, Hold, "no fitness rules: nothing can be shown fit")
		return finish(reasons)
	}

	// The plan itself.
	planOK := true
	for _, n := range []struct {
		name string
		x    float64
	}{{"depth", p.DepthM}, {"pressure", p.PressureMPa}, {"bottom time", p.BottomTimeMin}, {"predicted damage", p.PredictedDamageRatio}, {"remaining damage", p.RemainingRatio}} {
		if math.IsNaN(n.x) || math.IsInf(n.x, 0) || n.x < 0 {
			check("plan", true, Hold, "planned %s %v is not a valid number", n.name, n.x)
			planOK = false
		}
	}
	if planOK {
		// No bottom time given is not a dive of none: the prediction
		// takes the typical recent dive's time at depth, or the design
		// dive's with no dive on record (ledger.predict, fatigue/plan).
		bottom := fmt.Sprintf("%.0f min at depth", p.BottomTimeMin)
		if p.BottomTimeMin == 0 {
			bottom = "bottom time 0 or not given (predicted with the typical recent dive's time at depth, or the design dive's)"
		}
		check("plan", false, Fit, "plan: %.1f m, %s, predicted damage %.4g of the allowable", p.DepthM, bottom, p.PredictedDamageRatio)
	}

	// Depth against the rating.
	rated := f.RatedDepthM
	if rated == 0 && len(f.Dives) > 0 {
		rated = latest(f.Dives).RatedDepthM
	}
	switch {
	case math.IsNaN(rated) || math.IsInf(rated, 0) || rated <= 0:
		check("depth", true, Hold, "rated depth not known: the planned %.1f m cannot be checked", p.DepthM)
	case !planOK:
		check("depth", true, Hold, "planned depth not checked: the plan is not valid")
	default:
		ratio := p.DepthM / rated
		tripped := p.DepthM > rated
		for _, rule := range r.ByMeasure(MeasureDepthRatio) {
			if lvl, _, ok := rule.Level(ratio); ok && lvl == LevelHold {
				tripped = true
			}
		}
		if tripped {
			check("depth", true, Hold, "planned depth %.1f m is beyond what the rating allows (rated %.1f m, %.3g of it)", p.DepthM, rated, ratio)
		} else {
			check("depth", false, Fit, "planned depth %.1f m within the rated %.1f m (%.3g of it)", p.DepthM, rated, ratio)
		}
	}

	// Damage against what is left of the allowable.
	limit := 1.0
	for _, rule := range r.ByMeasure(MeasureDamageRatio) {
		if rule.Hold != nil && rule.Hold.At < limit {
			limit = rule.Hold.At
		}
	}
	switch {
	case f.DamageRatio == nil || math.IsNaN(*f.DamageRatio) || *f.DamageRatio < 0:
		check("damage", true, Hold, "damage not assessed: nothing can be shown left of the allowable")
	case !planOK:
		check("damage", true, Hold, "predicted damage not checked: the plan is not valid")
	default:
		left := limit - *f.DamageRatio
		if p.RemainingRatio > 0 && p.RemainingRatio < left {
			left = p.RemainingRatio
		}
		comp := f.GoverningComponent
		if comp == "" {
			comp = "not named"
		}
		if p.PredictedDamageRatio > left {
			check("damage", true, Hold, "predicted damage %.4g exceeds what is left of the allowable, %.4g (governing ratio %.4g, component %s, limit %.4g)", p.PredictedDamageRatio, math.Max(left, 0), *f.DamageRatio, comp, limit)
		} else {
			check("damage", false, Fit, "predicted damage %.4g within what is left of the allowable, %.4g (governing ratio %.4g, component %s)", p.PredictedDamageRatio, left, *f.DamageRatio, comp)
		}
	}

	// Pressure against the collapse pressure.
	clearCollapse(check, f, p, planOK, r)

	// Inspection and proof test due.
	for _, rule := range r.Rules {
		switch rule.Measure {
		case MeasureDivesSinceInspection, MeasureDaysSinceInspection, MeasureDaysSinceProofTest:
		default:
			continue
		}
		val, detail, ok, _ := hullValue(rule.Measure, f, f.Dives)
		fl := appendFlag(nil, rule, val, detail, ok, "", f.Now, f.Now)
		switch {
		case len(fl) == 0:
			check(rule.ID, false, Fit, "%s: %s, not due (%s)", rule.Title, num(val, rule.Measure.Unit()), detail)
		case fl[0].Level == LevelHold:
			check(rule.ID, true, Hold, "overdue: %s", fl[0])
		default:
			check(rule.ID, false, Watch, "due soon: %s", fl[0])
		}
	}
	return finish(reasons)
}

func finish(reasons []Reason) Clearance {
	sort.SliceStable(reasons, func(i, j int) bool { return reasons[i].NoGo && !reasons[j].NoGo })
	c := Clearance{Go: true, Reasons: reasons}
	for _, x := range reasons {
		if x.NoGo {
			c.Go = false
		}
	}
	return c
}

// latest returns the dive the ledger recorded last.
func latest(ds []DiveFacts) DiveFacts {
	s := append([]DiveFacts(nil), ds...)
	sortByRecording(s)
	return s[len(s)-1]
}

// clearCollapse checks the planned pressure against the collapse-fraction
// rules' hold level of the collapse pressure.
func clearCollapse(check func(code string, nogo bool, state State, format string, args ...any), f HullFacts, p Plan, planOK bool, r *Rules) {
	rules := r.ByMeasure(MeasureCollapseFraction)
	var holds []Rule
	for _, rule := range rules {
		if rule.Hold != nil {
			holds = append(holds, rule)
		}
	}
	c := f.CollapsePressureMPa
	planned := math.Max(p.PressureMPa, seawater.DepthToMPa(p.DepthM, 90))
	switch {
	case len(holds) == 0:
		check("collapse", true, Hold, "no collapse-fraction rule with a hold level: the planned pressure cannot be checked against the collapse pressure")
	case bad(c) || c == 0:
		check("collapse", true, Hold, "collapse pressure not known: the planned pressure cannot be checked against it")
	case !planOK || bad(planned):
		check("collapse", true, Hold, "planned pressure not checked: the plan is not valid")
	default:
		frac := planned / c
		for _, rule := range holds {
			if lvl, t, ok := rule.Level(frac); ok && lvl == LevelHold {
				check("collapse", true, Hold, "planned pressure %.3f MPa is %.3g of the collapse pressure %.3f MPa (%s %s: rule %s)", planned, frac, c, t.When.Symbol(), num(t.At, ""), rule.ID)
				return
			}
		}
		check("collapse", false, Fit, "planned pressure %.3f MPa is %.3g of the collapse pressure %.3f MPa, below the hold level %s", planned, frac, c, *holds[0].Hold)
	}
}
