package fitness

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"time"
)

// Flag is one rule tripped by the hull or by one dive.
type Flag struct {
	// Rule and Title are the rule's id and title.
	Rule, Title string
	// Level is watch or hold.
	Level Level
	// Value is the measured value; NaN when Missing.
	Value float64
	// Threshold is the threshold of Level, compared as When says.
	Threshold float64
	// When is the comparison of Value with Threshold.
	When Comparison
	// Unit is the unit of Value and Threshold, "" for a plain ratio.
	Unit string
	// Missing is true when the rule applied but its value was missing or
	// doubtful; the flag then carries the rule's missing-data level.
	Missing bool
	// Detail says what was measured in words: the gauge, the component,
	// what is missing.
	Detail string
	// Basis and Source are the rule's.
	Basis, Source string
	// Dive is the id of the dive that raised the flag, "" for a hull-level
	// rule.
	Dive string
	// At is when the flag was raised: the dive's start for a dive rule,
	// HullFacts.Now for a hull-level rule. Only records later than At can
	// clear the flag.
	At time.Time
}

// String says the flag in words.
func (f Flag) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %s", f.Level, f.Title)
	if f.Dive != "" {
		fmt.Fprintf(&b, " (dive %s)", f.Dive)
	}
	if f.Missing {
		fmt.Fprintf(&b, ": value not established, treated as %s", f.Level)
	} else {
		fmt.Fprintf(&b, ": %s %s %s", num(f.Value, f.Unit), f.When.Symbol(), num(f.Threshold, f.Unit))
	}
	if f.Detail != "" {
		fmt.Fprintf(&b, "; %s", f.Detail)
	}
	fmt.Fprintf(&b, " [rule %s; basis: %s; source: %s]", f.Rule, f.Basis, f.Source)
	return b.String()
}

func num(v float64, unit string) string {
	if unit == "" || strings.HasPrefix(unit, "of ") || unit == "relative change" {
		return fmt.Sprintf("%.4g", v)
	}
	return fmt.Sprintf("%.4g %s", v, unit)
}

// DiveFacts is what the ledger knows about one dive.
type DiveFacts struct {
	// ID is the dive's identifier in the ledger.
	ID string
	// Start is when the dive began.
	Start time.Time
	// MaxDepthM is the dive's greatest depth, m.
	MaxDepthM float64
	// RatedDepthM is the hull's rated depth when it made the dive, m; 0
	// means HullFacts.RatedDepthM.
	RatedDepthM float64
	// FelicityRatio is the dive's Felicity ratio; nil when it was not
	// evaluated, which on a hull with acoustic-emission channels is
	// missing evidence.
	FelicityRatio *float64
	// HoldDecays says whether acoustic emission during the hold at depth
	// decayed; nil when it was not evaluated.
	HoldDecays *bool
	// NoHoldPeriod is true when the dive had no hold at depth, so the
	// hold-emission rule does not apply. False (the zero value) means the
	// rule applies.
	NoHoldPeriod bool
	// ComplianceChange is, per gauge, the relative change of compliance
	// against the baseline (positive = softer, 0.05 = 5 %); nil when there
	// is no baseline, which the compliance rule takes as missing evidence
	// for every gauge that gave data.
	ComplianceChange map[string]float64
	// ResidualStrain is, per gauge, the strain at the surface after the
	// dive minus before, µε.
	ResidualStrain map[string]float64
	// Gauges and Channels are the strain gauges and acoustic-emission
	// channels the hull was configured with for the dive.
	Gauges, Channels []string
	// GaugesPresent and ChannelsPresent are those with data in the dive.
	GaugesPresent, ChannelsPresent []string
}

// HullFacts is what the ledger knows about one hull, as Evaluate needs it.
type HullFacts struct {
	// Hull is the hull's serial.
	Hull string
	// Now is the time of the evaluation (passed in, never read from a
	// clock); the zero time makes every time-based rule missing.
	Now time.Time
	// DamageRatio is the governing (largest) ratio of cumulative damage to
	// the allowable over the hull's components; nil when not assessed.
	DamageRatio *float64
	// GoverningComponent names the component DamageRatio comes from.
	GoverningComponent string
	// RatedDepthM is the hull's current rated depth, m.
	RatedDepthM float64
	// Dives are the dives since the last clearing event (more is
	// harmless: Status closes flags that later records cleared), in time
	// order.
	Dives []DiveFacts
	// DiveCount is the hull's total number of dives in the ledger.
	DiveCount int
	// Inspections and ProofTests are the hull's recorded inspections and
	// proof tests; only passing ones dated no later than Now count for the
	// overdue rules.
	Inspections []Inspection
	ProofTests  []ProofTest
}

// Evaluate applies every rule to the hull's facts: hull-level rules once
// (the flag dated Now), dive rules on every dive in f.Dives (each flag
// dated by its dive), so that a flag raised by an earlier dive stays
// raised until Status finds it cleared. A nil or empty rule set gives a
// single hold flag: without rules nothing can be shown fit. Flags come in
// rule order, then dive order.
func Evaluate(r *Rules, f HullFacts) []Flag {
	if r == nil || len(r.Rules) == 0 {
		return []Flag{{
			Rule: "no-rules", Title: "No fitness rules", Level: LevelHold,
			Value: math.NaN(), Missing: true, Detail: "no rule set was given",
			Basis: "without rules nothing can be shown fit", Source: "hulltally", At: f.Now,
		}}
	}
	dives := append([]DiveFacts(nil), f.Dives...)
	sort.SliceStable(dives, func(i, j int) bool { return dives[i].Start.Before(dives[j].Start) })
	var out []Flag
	for _, rule := range r.Rules {
		if rule.Measure.HullLevel() {
			v, detail, ok := hullValue(rule.Measure, f, dives)
			out = appendFlag(out, rule, v, detail, ok, "", f.Now)
			continue
		}
		if rule.Measure == MeasureResidualGrowth {
			out = append(out, growthFlags(rule, dives)...)
			continue
		}
		for _, d := range dives {
			for _, m := range diveValues(rule.Measure, d, f) {
				out = appendFlag(out, rule, m.v, m.detail, m.ok, d.ID, d.Start)
			}
		}
	}
	return out
}

// appendFlag adds the flag rule raises for value v (or for a missing
// value when !ok), if any.
func appendFlag(out []Flag, rule Rule, v float64, detail string, ok bool, dive string, at time.Time) []Flag {
	fl := Flag{
		Rule: rule.ID, Title: rule.Title, Unit: rule.Measure.Unit(), Detail: detail,
		Basis: rule.Basis, Source: rule.Source, Dive: dive, At: at,
	}
	if !ok || math.IsNaN(v) {
		lvl := rule.IfMissing
		if !lvl.valid() {
			lvl = LevelHold
		}
		t := rule.threshold(lvl)
		fl.Level, fl.Value, fl.Threshold, fl.When, fl.Missing = lvl, math.NaN(), t.At, t.When, true
		return append(out, fl)
	}
	lvl, t, tripped := rule.Level(v)
	if !tripped {
		return out
	}
	fl.Level, fl.Value, fl.Threshold, fl.When = lvl, v, t.At, t.When
	return append(out, fl)
}

// hullValue computes a hull-level measure; ok is false when the value is
// missing or doubtful.
func hullValue(m Measure, f HullFacts, dives []DiveFacts) (v float64, detail string, ok bool) {
	switch m {
	case MeasureDamageRatio:
		if f.DamageRatio == nil {
			return 0, "damage not assessed", false
		}
		v = *f.DamageRatio
		if math.IsNaN(v) || v < 0 {
			return 0, fmt.Sprintf("damage ratio %v is not a valid number", v), false
		}
		if f.GoverningComponent != "" {
			detail = "governing component " + f.GoverningComponent
		} else {
			detail = "governing component not named"
		}
		return v, detail, true
	case MeasureDivesSinceInspection, MeasureDaysSinceInspection:
		at, count, found := lastPassingInspection(f.Inspections, f.Now)
		return sinceValue(m, f, dives, "inspection", at, count, found)
	case MeasureDaysSinceProofTest:
		at, count, found := lastPassingProofTest(f.ProofTests, f.Now)
		return sinceValue(m, f, dives, "proof test", at, count, found)
	}
	return 0, "unknown measure " + string(m), false
}

func sinceValue(m Measure, f HullFacts, dives []DiveFacts, what string, at time.Time, count int, found bool) (float64, string, bool) {
	if f.Now.IsZero() {
		return 0, "the time of the evaluation is not known", false
	}
	if !found {
		return 0, "no passing " + what + " on record", false
	}
	detail := fmt.Sprintf("last passing %s on %s", what, at.UTC().Format(time.DateOnly))
	if m == MeasureDivesSinceInspection {
		n := f.DiveCount - count
		if f.DiveCount < 0 || count < 0 || n < 0 {
			return 0, fmt.Sprintf("dive counts do not agree (hull %d, at the %s %d)", f.DiveCount, what, count), false
		}
		// Take the larger of the two counts the facts allow: dives given
		// that started after the inspection may exceed a stale count.
		after := 0
		for _, d := range dives {
			if d.Start.After(at) {
				after++
			}
		}
		return float64(max(n, after)), detail, true
	}
	return f.Now.Sub(at).Hours() / 24, detail, true
}

type measured struct {
	v      float64
	detail string
	ok     bool
}

// diveValues computes a per-dive measure; it returns nothing when the rule
// does not apply to the dive, and may return a value and a missing entry
// (some gauges measured, others not).
func diveValues(m Measure, d DiveFacts, f HullFacts) []measured {
	switch m {
	case MeasureFelicityRatio:
		if len(d.Channels) == 0 || len(present(d.Channels, d.ChannelsPresent)) == 0 {
			return nil // no channels configured, or none reported: missing-evidence covers it
		}
		if d.FelicityRatio == nil {
			return []measured{{detail: "Felicity ratio not evaluated"}}
		}
		if v := *d.FelicityRatio; math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return []measured{{detail: fmt.Sprintf("Felicity ratio %v is not a valid number", v)}}
		}
		return []measured{{v: *d.FelicityRatio, ok: true}}
	case MeasureHoldEmission:
		if d.NoHoldPeriod || len(d.Channels) == 0 || len(present(d.Channels, d.ChannelsPresent)) == 0 {
			return nil
		}
		if d.HoldDecays == nil {
			return []measured{{detail: "hold emission not evaluated"}}
		}
		if *d.HoldDecays {
			return []measured{{v: 0, ok: true}}
		}
		return []measured{{v: 1, detail: "emission during the hold did not decay", ok: true}}
	case MeasureComplianceChange:
		return gaugeValues(d, d.ComplianceChange, "compliance change", func(g string, x float64) string {
			if x < 0 {
				return fmt.Sprintf("gauge %s stiffer by %.2f %% (a stiffer reading may be a debonded gauge: doubtful, not healthy)", g, -100*x)
			}
			return fmt.Sprintf("gauge %s softer by %.2f %%", g, 100*x)
		})
	case MeasureResidualStrain:
		return gaugeValues(d, d.ResidualStrain, "residual strain", func(g string, x float64) string {
			return fmt.Sprintf("gauge %s residual %.1f µε", g, x)
		})
	case MeasureDepthRatio:
		rated := d.RatedDepthM
		if rated == 0 {
			rated = f.RatedDepthM
		}
		if math.IsNaN(rated) || math.IsInf(rated, 0) || rated <= 0 {
			return []measured{{detail: "rated depth not known"}}
		}
		if math.IsNaN(d.MaxDepthM) || d.MaxDepthM < 0 {
			return []measured{{detail: fmt.Sprintf("maximum depth %v is not a valid number", d.MaxDepthM)}}
		}
		return []measured{{v: d.MaxDepthM / rated, ok: true,
			detail: fmt.Sprintf("maximum depth %.1f m against rated %.1f m", d.MaxDepthM, rated)}}
	case MeasureMissingEvidence:
		var miss []string
		for _, g := range absent(d.Gauges, d.GaugesPresent) {
			miss = append(miss, "strain gauge "+g)
		}
		for _, c := range absent(d.Channels, d.ChannelsPresent) {
			miss = append(miss, "acoustic-emission channel "+c)
		}
		detail := ""
		if len(miss) > 0 {
			detail = "no data from " + strings.Join(miss, ", ")
		}
		return []measured{{v: float64(len(miss)), detail: detail, ok: true}}
	}
	return []measured{{detail: "unknown measure " + string(m)}}
}

// gaugeValues takes the largest magnitude over the gauges of vals, and
// reports configured gauges that have data but no value as missing. Gauges
// without any data are left to the missing-evidence rule; values from
// gauges not configured count as well (evidence is evidence).
func gaugeValues(d DiveFacts, vals map[string]float64, what string, say func(string, float64) string) []measured {
	var out []measured
	best, bestGauge, found := 0.0, "", false
	var doubtful []string
	for _, g := range sortedKeys(vals) {
		x := vals[g]
		if math.IsNaN(x) || math.IsInf(x, 0) {
			doubtful = append(doubtful, g)
			continue
		}
		if !found || math.Abs(x) > math.Abs(best) {
			best, bestGauge, found = x, g, true
		}
	}
	if found {
		out = append(out, measured{v: math.Abs(best), detail: say(bestGauge, best), ok: true})
	}
	var missing []string
	for _, g := range present(d.Gauges, d.GaugesPresent) {
		if _, has := vals[g]; !has {
			missing = append(missing, g)
		}
	}
	if len(missing) > 0 || len(doubtful) > 0 {
		var parts []string
		if len(missing) > 0 {
			parts = append(parts, fmt.Sprintf("no %s for gauge %s", what, strings.Join(missing, ", ")))
		}
		if len(doubtful) > 0 {
			parts = append(parts, fmt.Sprintf("%s not a number for gauge %s", what, strings.Join(doubtful, ", ")))
		}
		out = append(out, measured{detail: strings.Join(parts, "; ")})
	}
	return out
}

// growthFlags sums each gauge's residual strain over the dives in order
// and applies the rule to the largest running magnitude after each dive.
func growthFlags(rule Rule, dives []DiveFacts) []Flag {
	var out []Flag
	sum := map[string]float64{}
	for i, d := range dives {
		for g, x := range d.ResidualStrain {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				continue // the residual-strain rule flags it
			}
			sum[g] += x
		}
		if len(sum) == 0 {
			continue
		}
		best, bestGauge := 0.0, ""
		for _, g := range sortedKeys(sum) {
			if math.Abs(sum[g]) > math.Abs(best) || bestGauge == "" {
				best, bestGauge = sum[g], g
			}
		}
		detail := fmt.Sprintf("gauge %s residual strain summed over %d dive(s): %.1f µε", bestGauge, i+1, best)
		out = appendFlag(out, rule, math.Abs(best), detail, true, d.ID, d.Start)
	}
	return out
}

// present returns the configured names that are in have.
func present(configured, have []string) []string {
	var out []string
	for _, c := range configured {
		if contains(have, c) {
			out = append(out, c)
		}
	}
	return out
}

// absent returns the configured names that are not in have.
func absent(configured, have []string) []string {
	var out []string
	for _, c := range configured {
		if !contains(have, c) {
			out = append(out, c)
		}
	}
	return out
}

func contains(xs []string, x string) bool {
	for _, s := range xs {
		if s == x {
			return true
		}
	}
	return false
}

func sortedKeys(m map[string]float64) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}
