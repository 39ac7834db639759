package fitness

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"

	"gopkg.in/yaml.v3"
)

// Level is the severity of a flag.
type Level string

// The flag levels, from the milder to the stronger.
const (
	// LevelWatch asks for attention: the hull may dive, and the crew and
	// maintenance staff keep an eye on the cause.
	LevelWatch Level = "watch"
	// LevelHold stops the hull from diving until the cause is cleared.
	LevelHold Level = "hold"
)

func (l Level) valid() bool { return l == LevelWatch || l == LevelHold }

// Comparison says on which side of its threshold a value raises a flag.
type Comparison string

// The comparisons a threshold may use.
const (
	// AtOrAbove raises the flag when value ≥ threshold.
	AtOrAbove Comparison = "at_or_above"
	// Above raises the flag when value > threshold.
	Above Comparison = "above"
	// AtOrBelow raises the flag when value ≤ threshold.
	AtOrBelow Comparison = "at_or_below"
	// Below raises the flag when value < threshold.
	Below Comparison = "below"
)

// Rising reports whether the comparison flags large values (AtOrAbove,
// Above) rather than small ones.
func (c Comparison) Rising() bool { return c == AtOrAbove || c == Above }

// Trips reports whether value v raises a flag against threshold t. A NaN
// value never trips: missing values are handled by the rule's missing-data
// level, not by the comparison.
func (c Comparison) Trips(v, t float64) bool {
	switch c {
	case AtOrAbove:
		return v >= t
	case Above:
		return v > t
	case AtOrBelow:
		return v <= t
	case Below:
		return v < t
	}
	return false
}

// Symbol is the comparison as a mathematical sign: ≥, >, ≤ or <.
func (c Comparison) Symbol() string {
	switch c {
	case AtOrAbove:
		return "≥"
	case Above:
		return ">"
	case AtOrBelow:
		return "≤"
	case Below:
		return "<"
	}
	return "?"
}

func (c Comparison) valid() bool {
	return c == AtOrAbove || c == Above || c == AtOrBelow || c == Below
}

// Measure names the quantity a rule compares with its thresholds. Each
// measure is computed by Evaluate from HullFacts; a rule's measure binds the
// configured thresholds to that computation.
type Measure string

// The measures a rule may use.
const (
	// MeasureDamageRatio is the governing component's cumulative damage
	// divided by its allowable (hull level).
	MeasureDamageRatio Measure = "damage_ratio"
	// MeasureFelicityRatio is a dive's Felicity ratio (per dive; lower is
	// worse).
	MeasureFelicityRatio Measure = "felicity_ratio"
	// MeasureHoldEmission is 1 when a dive's acoustic emission during the
	// hold at depth does not decay, 0 when it does (per dive).
	MeasureHoldEmission Measure = "hold_emission_not_decaying"
	// MeasureComplianceChange is the largest magnitude, over the gauges,
	// of a dive's relative compliance change against the baseline (per
	// dive; a fraction, 0.05 = 5 %).
	MeasureComplianceChange Measure = "compliance_change"
	// MeasureResidualStrain is the largest magnitude, over the gauges, of a
	// dive's residual strain after surfacing, µε (per dive).
	MeasureResidualStrain Measure = "residual_strain"
	// MeasureResidualGrowth is the largest magnitude, over the gauges, of
	// the residual strain summed over the dives given to Evaluate, µε,
	// taken after each dive (per dive).
	MeasureResidualGrowth Measure = "residual_strain_growth"
	// MeasureDepthRatio is a dive's maximum depth divided by the hull's
	// rated depth (per dive).
	MeasureDepthRatio Measure = "depth_ratio"
	// MeasureDivesSinceInspection is the number of dives since the last
	// passing inspection (hull level).
	MeasureDivesSinceInspection Measure = "dives_since_inspection"
	// MeasureDaysSinceInspection is the number of days since the last
	// passing inspection (hull level).
	MeasureDaysSinceInspection Measure = "days_since_inspection"
	// MeasureDaysSinceProofTest is the number of days since the last
	// passing proof test (hull level).
	MeasureDaysSinceProofTest Measure = "days_since_proof_test"
	// MeasureMissingEvidence is the number of configured strain gauges and
	// acoustic-emission channels with no data in a dive (per dive).
	MeasureMissingEvidence Measure = "missing_evidence"
	// MeasureHoldHitsAfterSettle is the number of acoustic-emission hits,
	// over all channels, during a dive's hold at depth after the settling
	// time (per dive): the absolute test paired with the decay test of
	// MeasureHoldEmission.
	MeasureHoldHitsAfterSettle Measure = "hold_hits_after_settle"
	// MeasureHistoricIndex is the largest historic index over a dive's
	// acoustic-emission channels (per dive; the channel is named).
	MeasureHistoricIndex Measure = "historic_index"
	// MeasureSeverity is the largest severity (mean of the largest signal
	// strengths, the instrument's unit) over a dive's channels (per dive).
	MeasureSeverity Measure = "severity"
	// MeasureHighAmplitudeHits is the largest number of hits above the
	// reference amplitude over a dive's channels (per dive).
	MeasureHighAmplitudeHits Measure = "high_amplitude_hits"
	// MeasureTotalCounts is the largest sum of threshold-crossing counts
	// over a dive's channels (per dive).
	MeasureTotalCounts Measure = "total_counts"
	// MeasureCreepStrain is the largest magnitude, over the gauges, of the
	// pressure-corrected strain drift during a dive's hold at depth, µε
	// (per dive).
	MeasureCreepStrain Measure = "creep_strain"
	// MeasureStrainHysteresis is the largest magnitude, over the gauges,
	// of a dive's normalised strain hysteresis (per dive).
	MeasureStrainHysteresis Measure = "strain_hysteresis"
	// MeasureDataQuality is the number of findings against the quality of
	// a dive's record (per dive).
	MeasureDataQuality Measure = "data_quality_findings"
	// MeasureProofOvershoot is a proof-test dive's peak pressure divided
	// by the spec's proof pressure (per proof-test dive).
	MeasureProofOvershoot Measure = "proof_overshoot"
	// MeasureCollapseFraction is the highest pressure the hull has been
	// recorded at, proof tests included, divided by its collapse pressure
	// (hull level).
	MeasureCollapseFraction Measure = "collapse_fraction"
	// MeasureDesignCyclesUsed is the number of pressure cycles used
	// divided by the number the design was qualified for (hull level; the
	// rule does not apply when the spec does not say).
	MeasureDesignCyclesUsed Measure = "design_cycles_used"
)

// Measures lists every measure in the order rules are usually written.
func Measures() []Measure {
	return []Measure{
		MeasureDamageRatio, MeasureFelicityRatio, MeasureHoldEmission,
		MeasureComplianceChange, MeasureResidualStrain, MeasureResidualGrowth,
		MeasureDepthRatio, MeasureDivesSinceInspection, MeasureDaysSinceInspection,
		MeasureDaysSinceProofTest, MeasureMissingEvidence,
		MeasureHoldHitsAfterSettle, MeasureHistoricIndex, MeasureSeverity,
		MeasureHighAmplitudeHits, MeasureTotalCounts, MeasureCreepStrain,
		MeasureStrainHysteresis, MeasureDataQuality, MeasureProofOvershoot,
		MeasureCollapseFraction, MeasureDesignCyclesUsed,
	}
}

// measureSpec is what the package knows about a measure.
type measureSpec struct {
	// rising: larger values are worse.
	rising bool
	// hull: evaluated once for the hull, not per dive.
	hull bool
	// boolean: the value is 0 or 1.
	boolean bool
	// required: a rule set without a rule for it is refused.
	required bool
	// needsHold: the rule must have a hold level.
	needsHold bool
	// unit of the value, in words.
	unit string
}

func specOf(m Measure) (measureSpec, bool) {
	switch m {
	case MeasureDamageRatio:
		return measureSpec{rising: true, hull: true, required: true, needsHold: true, unit: "of the allowable"}, true
	case MeasureFelicityRatio:
		return measureSpec{rising: false, required: true, unit: ""}, true
	case MeasureHoldEmission:
		return measureSpec{rising: true, boolean: true, required: true, unit: ""}, true
	case MeasureComplianceChange:
		return measureSpec{rising: true, required: true, unit: "relative change"}, true
	case MeasureResidualStrain:
		return measureSpec{rising: true, required: true, unit: "µε"}, true
	case MeasureResidualGrowth:
		return measureSpec{rising: true, unit: "µε"}, true
	case MeasureDepthRatio:
		return measureSpec{rising: true, required: true, needsHold: true, unit: "of the rated depth"}, true
	case MeasureDivesSinceInspection:
		return measureSpec{rising: true, hull: true, required: true, unit: "dives"}, true
	case MeasureDaysSinceInspection:
		return measureSpec{rising: true, hull: true, required: true, unit: "days"}, true
	case MeasureDaysSinceProofTest:
		return measureSpec{rising: true, hull: true, required: true, unit: "days"}, true
	case MeasureMissingEvidence:
		return measureSpec{rising: true, required: true, unit: "missing"}, true
	case MeasureHoldHitsAfterSettle:
		return measureSpec{rising: true, unit: "hits"}, true
	case MeasureHistoricIndex:
		return measureSpec{rising: true, unit: ""}, true
	case MeasureSeverity:
		return measureSpec{rising: true, unit: "signal-strength units"}, true
	case MeasureHighAmplitudeHits:
		return measureSpec{rising: true, unit: "hits"}, true
	case MeasureTotalCounts:
		return measureSpec{rising: true, unit: "counts"}, true
	case MeasureCreepStrain:
		return measureSpec{rising: true, unit: "µε"}, true
	case MeasureStrainHysteresis:
		return measureSpec{rising: true, unit: ""}, true
	case MeasureDataQuality:
		return measureSpec{rising: true, unit: "findings"}, true
	case MeasureProofOvershoot:
		// Required: proof-test dives are left out of the depth rule.
		return measureSpec{rising: true, required: true, needsHold: true, unit: "of the proof pressure"}, true
	case MeasureCollapseFraction:
		return measureSpec{rising: true, hull: true, required: true, needsHold: true, unit: "of the collapse pressure"}, true
	case MeasureDesignCyclesUsed:
		return measureSpec{rising: true, hull: true, needsHold: true, unit: "of the qualified cycles"}, true
	}
	return measureSpec{}, false
}

// Unit is the unit of the measure's value in words ("days", "µε", …), or
// "" for a plain ratio.
func (m Measure) Unit() string {
	s, _ := specOf(m)
	return s.unit
}

// HullLevel reports whether the measure is evaluated once for the hull
// rather than for each dive.
func (m Measure) HullLevel() bool {
	s, _ := specOf(m)
	return s.hull
}

// Label says where a rule's thresholds come from.
type Label string

// The labels a rule may carry.
const (
	// LabelOperator marks thresholds the operator chose; the source must
	// begin with "operator's choice".
	LabelOperator Label = "operator's choice"
	// LabelPublished marks thresholds taken from a cited document that was
	// checked; the source cites it.
	LabelPublished Label = "published"
	// LabelFromMemory marks thresholds recalled from a document without
	// checking it; the source cites it and says "from memory".
	LabelFromMemory Label = "from memory"
	// LabelCommonPractice marks thresholds that follow common practice;
	// the source says whose.
	LabelCommonPractice Label = "common practice"
)

func (l Label) valid() bool {
	return l == LabelOperator || l == LabelPublished || l == LabelFromMemory || l == LabelCommonPractice
}

// Threshold is one level of a rule: the flag rises when the value compares
// with At as When says.
type Threshold struct {
	// When is the comparison.
	When Comparison
	// At is the threshold value, in the measure's unit.
	At float64
}

// String writes the threshold as "≥ 0.5".
func (t Threshold) String() string { return fmt.Sprintf("%s %g", t.When.Symbol(), t.At) }

// Rule is one configured fitness rule.
type Rule struct {
	// ID is the rule's kebab-case identifier.
	ID string
	// Title says in a few words what the rule watches.
	Title string
	// Measure is the quantity the rule compares.
	Measure Measure
	// Watch and Hold are the rule's levels; at least one is set.
	Watch, Hold *Threshold
	// IfMissing is the level raised when the rule applies but its value is
	// missing or doubtful; never empty after ParseRules (defaults to the
	// strongest configured level).
	IfMissing Level
	// Basis explains why the thresholds are what they are.
	Basis string
	// Source cites the document the thresholds come from, or says
	// "operator's choice".
	Source string
	// Label says what kind of source it is.
	Label Label
}

// Level returns the strongest level that value v trips (hold before
// watch), the threshold it tripped, and whether any did. NaN trips nothing.
func (r Rule) Level(v float64) (Level, Threshold, bool) {
	if math.IsNaN(v) {
		return "", Threshold{}, false
	}
	if r.Hold != nil && r.Hold.When.Trips(v, r.Hold.At) {
		return LevelHold, *r.Hold, true
	}
	if r.Watch != nil && r.Watch.When.Trips(v, r.Watch.At) {
		return LevelWatch, *r.Watch, true
	}
	return "", Threshold{}, false
}

// threshold returns the threshold of level l, falling back to the other
// level when the rule does not have l.
func (r Rule) threshold(l Level) Threshold {
	if l == LevelHold && r.Hold != nil {
		return *r.Hold
	}
	if r.Watch != nil {
		return *r.Watch
	}
	return *r.Hold
}

// Rules is a validated rule set.
type Rules struct {
	// Rules in the order of the file.
	Rules []Rule
}

// Find returns the rule with the given id.
func (rs *Rules) Find(id string) (Rule, bool) {
	if rs == nil {
		return Rule{}, false
	}
	for _, r := range rs.Rules {
		if r.ID == id {
			return r, true
		}
	}
	return Rule{}, false
}

// ByMeasure returns the rules that use measure m, in file order.
func (rs *Rules) ByMeasure(m Measure) []Rule {
	if rs == nil {
		return nil
	}
	var out []Rule
	for _, r := range rs.Rules {
		if r.Measure == m {
			out = append(out, r)
		}
	}
	return out
}

// ErrNoRules is returned for a rule file without rules.
var ErrNoRules = errors.New("fitness: no rules")

// isKebab reports whether id is lower-case words of letters and digits
// joined by single hyphens.
func isKebab(id string) bool {
	if id == "" || id[0] == '-' || id[len(id)-1] == '-' || strings.Contains(id, "--") {
		return false
	}
	for _, c := range id {
		if !(c >= 'a' && c <= 'z' || c >= '0' && c <= '9' || c == '-') {
			return false
		}
	}
	return true
}

// Validate checks every rule (see ParseRules) and that every required
// measure has a rule.
func (rs *Rules) Validate() error {
	if rs == nil || len(rs.Rules) == 0 {
		return ErrNoRules
	}
	seen := make(map[string]bool, len(rs.Rules))
	have := make(map[Measure]bool, len(rs.Rules))
	for i, r := range rs.Rules {
		if err := r.Validate(); err != nil {
			return fmt.Errorf("fitness: rule %d: %w", i+1, err)
		}
		if seen[r.ID] {
			return fmt.Errorf("fitness: rule %d: duplicate id %q", i+1, r.ID)
		}
		seen[r.ID] = true
		have[r.Measure] = true
	}
	for _, m := range Measures() {
		if s, _ := specOf(m); s.required && !have[m] {
			return fmt.Errorf("fitness: no rule for measure %q: leaving it out would make hulls look better", m)
		}
	}
	return nil
}

// Validate checks one rule: a kebab-case id, a title, a known measure, at
// least one level with a known comparison and a finite threshold, both
// levels pointing the way the measure gets worse and in order (the watch
// level trips before the hold level), a hold level where the measure
// needs one, a known missing-data level, a basis, a source and a label
// that agrees with the source.
func (r Rule) Validate() error {
	if !isKebab(r.ID) {
		return fmt.Errorf("id %q is not kebab-case (lower-case words joined by '-')", r.ID)
	}
	if strings.TrimSpace(r.Title) == "" {
		return fmt.Errorf("rule %q: no title", r.ID)
	}
	spec, ok := specOf(r.Measure)
	if !ok {
		return fmt.Errorf("rule %q: unknown measure %q", r.ID, r.Measure)
	}
	if r.Watch == nil && r.Hold == nil {
		return fmt.Errorf("rule %q: neither a watch nor a hold level", r.ID)
	}
	if spec.needsHold && r.Hold == nil {
		return fmt.Errorf("rule %q: measure %q needs a hold level", r.ID, r.Measure)
	}
	for _, lt := range []struct {
		name string
		t    *Threshold
	}{{"watch", r.Watch}, {"hold", r.Hold}} {
		if lt.t == nil {
			continue
		}
		if err := checkThreshold(r.Measure, spec, *lt.t); err != nil {
			return fmt.Errorf("rule %q: %s level: %w", r.ID, lt.name, err)
		}
	}
	if r.Watch != nil && r.Hold != nil {
		w, h := r.Watch.At, r.Hold.At
		if (spec.rising && !(w < h)) || (!spec.rising && !(w > h)) {
			return fmt.Errorf("rule %q: watch level %s must trip before hold level %s", r.ID, r.Watch, r.Hold)
		}
	}
	if err := checkLimits(r); err != nil {
		return fmt.Errorf("rule %q: %w", r.ID, err)
	}
	if r.IfMissing != "" && !r.IfMissing.valid() {
		return fmt.Errorf("rule %q: if_missing %q is neither watch nor hold", r.ID, r.IfMissing)
	}
	if strings.TrimSpace(r.Basis) == "" {
		return fmt.Errorf("rule %q: no basis", r.ID)
	}
	return checkSource(r)
}

func checkThreshold(m Measure, spec measureSpec, t Threshold) error {
	if !t.When.valid() {
		return fmt.Errorf("unknown comparison %q (at_or_above, above, at_or_below or below)", t.When)
	}
	if math.IsNaN(t.At) || math.IsInf(t.At, 0) {
		return fmt.Errorf("threshold %v is not a finite number", t.At)
	}
	if t.When.Rising() != spec.rising {
		want := "at_or_above or above"
		if !spec.rising {
			want = "at_or_below or below"
		}
		return fmt.Errorf("measure %q gets worse the other way: use %s", m, want)
	}
	if t.At < 0 {
		return fmt.Errorf("threshold %g is negative; %q is never negative", t.At, m)
	}
	if spec.boolean {
		// 0 or 1: the flag must be able to rise on 1 and not on 0.
		if (t.When == AtOrAbove && !(t.At > 0 && t.At <= 1)) || (t.When == Above && !(t.At < 1)) {
			return fmt.Errorf("threshold %s cannot tell 1 from 0", t)
		}
	}
	if !spec.rising && t.At == 0 && t.When == Below {
		return fmt.Errorf("threshold %s can never trip", t)
	}
	return nil
}

// checkLimits refuses hold levels that would let a hull past its
// allowable damage, its rated depth, its collapse pressure or its
// qualified cycles.
func checkLimits(r Rule) error {
	if r.Hold == nil {
		return nil
	}
	h := *r.Hold
	switch r.Measure {
	case MeasureDamageRatio:
		if (h.When == AtOrAbove && h.At > 1) || (h.When == Above && h.At >= 1) {
			return fmt.Errorf("hold level %s lets the damage reach or pass the allowable", h)
		}
	case MeasureDepthRatio:
		if h.At > 1 {
			return fmt.Errorf("hold level %s lets dives beyond the rated depth pass", h)
		}
	case MeasureCollapseFraction:
		if (h.When == AtOrAbove && h.At > 1) || (h.When == Above && h.At >= 1) {
			return fmt.Errorf("hold level %s lets the hull reach or pass its collapse pressure", h)
		}
	case MeasureDesignCyclesUsed:
		if (h.When == AtOrAbove && h.At > 1) || (h.When == Above && h.At >= 1) {
			return fmt.Errorf("hold level %s lets the hull reach or pass the cycles it was qualified for", h)
		}
	}
	return nil
}

func checkSource(r Rule) error {
	src := strings.TrimSpace(r.Source)
	if src == "" {
		return fmt.Errorf("rule %q: no source (cite a document or say \"operator's choice\")", r.ID)
	}
	if !r.Label.valid() {
		return fmt.Errorf("rule %q: label %q is not one of operator's choice, published, from memory, common practice", r.ID, r.Label)
	}
	low := strings.ToLower(src)
	operator := strings.HasPrefix(low, string(LabelOperator))
	memory := strings.Contains(low, "from memory")
	switch r.Label {
	case LabelOperator:
		if !operator {
			return fmt.Errorf("rule %q: labelled operator's choice but the source does not say so", r.ID)
		}
	case LabelFromMemory:
		if !memory {
			return fmt.Errorf("rule %q: labelled from memory but the source does not say \"from memory\"", r.ID)
		}
	default:
		if operator {
			return fmt.Errorf("rule %q: the source says operator's choice but the label is %q", r.ID, r.Label)
		}
		if memory {
			return fmt.Errorf("rule %q: the source is from memory but the label is %q", r.ID, r.Label)
		}
	}
	return nil
}

// The file form of the rules; every field is a pointer or a string so that
// a missing key can be told from a zero.
type rulesFile struct {
	Rules []ruleFile `yaml:"rules"`
}

type ruleFile struct {
	ID        string         `yaml:"id"`
	Title     string         `yaml:"title"`
	Measure   string         `yaml:"measure"`
	Watch     *thresholdFile `yaml:"watch"`
	Hold      *thresholdFile `yaml:"hold"`
	IfMissing string         `yaml:"if_missing"`
	Basis     string         `yaml:"basis"`
	Source    string         `yaml:"source"`
	Label     string         `yaml:"label"`
}

type thresholdFile struct {
	When string   `yaml:"when"`
	At   *float64 `yaml:"at"`
}

// ParseRules reads a rule set (the form of configs/rules.yaml) strictly:
// unknown keys, a second YAML document, a missing threshold value and any
// rule that fails Rule.Validate are refused, as is a rule set without a
// rule for every required measure. A rule without if_missing gets its
// strongest level.
func ParseRules(data []byte) (*Rules, error) {
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	var f rulesFile
	if err := dec.Decode(&f); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, ErrNoRules
		}
		return nil, fmt.Errorf("fitness: parse rules: %w", err)
	}
	var extra yaml.Node
	if err := dec.Decode(&extra); !errors.Is(err, io.EOF) {
		if err != nil {
			return nil, fmt.Errorf("fitness: parse rules: after the first document: %w", err)
		}
		return nil, errors.New("fitness: parse rules: more than one YAML document")
	}
	rs := &Rules{Rules: make([]Rule, 0, len(f.Rules))}
	for i, rf := range f.Rules {
		r := Rule{
			ID:        rf.ID,
			Title:     strings.TrimSpace(rf.Title),
			Measure:   Measure(rf.Measure),
			IfMissing: Level(rf.IfMissing),
			Basis:     strings.TrimSpace(rf.Basis),
			Source:    strings.TrimSpace(rf.Source),
			Label:     Label(rf.Label),
		}
		var err error
		if r.Watch, err = rf.Watch.threshold(); err != nil {
			return nil, fmt.Errorf("fitness: rule %d (%q): watch: %w", i+1, rf.ID, err)
		}
		if r.Hold, err = rf.Hold.threshold(); err != nil {
			return nil, fmt.Errorf("fitness: rule %d (%q): hold: %w", i+1, rf.ID, err)
		}
		if r.IfMissing == "" {
			r.IfMissing = LevelWatch
			if r.Hold != nil {
				r.IfMissing = LevelHold
			}
		}
		rs.Rules = append(rs.Rules, r)
	}
	if err := rs.Validate(); err != nil {
		return nil, err
	}
	return rs, nil
}

func (t *thresholdFile) threshold() (*Threshold, error) {
	if t == nil {
		return nil, nil
	}
	if t.At == nil {
		return nil, errors.New("no threshold value (at)")
	}
	return &Threshold{When: Comparison(t.When), At: *t.At}, nil
}
