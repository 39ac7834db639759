package fitness

import (
	"errors"
	"strings"
	"testing"
)

func TestShippedRules(t *testing.T) {
	rs := shipped(t)
	th := func(w Comparison, at float64) *Threshold { return &Threshold{When: w, At: at} }
	want := []struct {
		id          string
		measure     Measure
		watch, hold *Threshold
		missing     Level
		label       Label
	}{
		{"damage-against-allowable", MeasureDamageRatio, th(AtOrAbove, 0.5), th(AtOrAbove, 1.0), LevelHold, LabelOperator},
		{"felicity-below-limit", MeasureFelicityRatio, th(Below, 1.0), th(AtOrBelow, 0.95), LevelWatch, LabelFromMemory},
		{"hold-emission-not-decaying", MeasureHoldEmission, nil, th(AtOrAbove, 1), LevelWatch, LabelFromMemory},
		{"compliance-change", MeasureComplianceChange, th(AtOrAbove, 0.03), th(AtOrAbove, 0.05), LevelWatch, LabelOperator},
		{"residual-strain", MeasureResidualStrain, th(AtOrAbove, 50), th(AtOrAbove, 100), LevelWatch, LabelOperator},
		{"residual-strain-growth", MeasureResidualGrowth, th(AtOrAbove, 100), th(AtOrAbove, 200), LevelHold, LabelOperator},
		{"beyond-rated-depth", MeasureDepthRatio, nil, th(Above, 1.0), LevelHold, LabelCommonPractice},
		{"inspection-due-by-dives", MeasureDivesSinceInspection, th(AtOrAbove, 40), th(AtOrAbove, 50), LevelHold, LabelOperator},
		{"inspection-due-by-days", MeasureDaysSinceInspection, th(AtOrAbove, 292), th(AtOrAbove, 365), LevelHold, LabelOperator},
		{"proof-test-due", MeasureDaysSinceProofTest, th(AtOrAbove, 1461), th(AtOrAbove, 1826), LevelHold, LabelOperator},
		{"missing-evidence", MeasureMissingEvidence, th(AtOrAbove, 1), nil, LevelWatch, LabelOperator},
		{"hold-hits-after-settle", MeasureHoldHitsAfterSettle, th(AtOrAbove, 2), th(Above, 5), LevelWatch, LabelOperator},
		{"historic-index", MeasureHistoricIndex, th(AtOrAbove, 1.5), th(AtOrAbove, 2.0), LevelWatch, LabelOperator},
		{"severity", MeasureSeverity, th(AtOrAbove, 5000), th(AtOrAbove, 10000), LevelWatch, LabelOperator},
		{"high-amplitude-hits", MeasureHighAmplitudeHits, th(AtOrAbove, 1), th(AtOrAbove, 5), LevelWatch, LabelOperator},
		{"total-counts", MeasureTotalCounts, th(AtOrAbove, 5000), th(AtOrAbove, 20000), LevelWatch, LabelOperator},
		{"creep-strain", MeasureCreepStrain, th(AtOrAbove, 50), th(AtOrAbove, 100), LevelWatch, LabelOperator},
		{"strain-hysteresis", MeasureStrainHysteresis, th(AtOrAbove, 0.05), th(AtOrAbove, 0.10), LevelWatch, LabelOperator},
		{"data-quality", MeasureDataQuality, th(AtOrAbove, 1), nil, LevelWatch, LabelOperator},
		{"proof-overshoot", MeasureProofOvershoot, th(Above, 1.01), th(Above, 1.03), LevelHold, LabelOperator},
		{"collapse-fraction", MeasureCollapseFraction, th(AtOrAbove, 0.8), th(AtOrAbove, 0.9), LevelHold, LabelOperator},
		{"design-cycles-used", MeasureDesignCyclesUsed, th(AtOrAbove, 0.8), th(AtOrAbove, 1.0), LevelHold, LabelOperator},
	}
	if len(rs.Rules) != len(want) {
		t.Fatalf("%d rules, want %d", len(rs.Rules), len(want))
	}
	eq := func(a, b *Threshold) bool { return (a == nil) == (b == nil) && (a == nil || *a == *b) }
	for i, w := range want {
		r := rs.Rules[i]
		if r.ID != w.id || r.Measure != w.measure || !eq(r.Watch, w.watch) || !eq(r.Hold, w.hold) || r.IfMissing != w.missing || r.Label != w.label {
			t.Errorf("rule %d: got %+v watch %v hold %v", i, r, r.Watch, r.Hold)
		}
		if r.Basis == "" || r.Source == "" || r.Title == "" {
			t.Errorf("rule %s lacks text", r.ID)
		}
	}
	if r, ok := rs.Find("proof-test-due"); !ok || !strings.Contains(r.Source, "classification society") {
		t.Errorf("proof test source must defer to the classification society: %q", r.Source)
	}
	for _, id := range []string{"felicity-below-limit", "hold-emission-not-decaying"} {
		if r, _ := rs.Find(id); !strings.Contains(r.Source, "ASME") || !strings.Contains(r.Source, "from memory") {
			t.Errorf("%s source %q", id, r.Source)
		}
	}
}

func TestComparison(t *testing.T) {
	cases := []struct {
		c    Comparison
		v, t float64
		want bool
	}{
		{AtOrAbove, 1, 1, true}, {AtOrAbove, 0.9, 1, false},
		{Above, 1, 1, false}, {Above, 1.1, 1, true},
		{AtOrBelow, 1, 1, true}, {AtOrBelow, 1.1, 1, false},
		{Below, 1, 1, false}, {Below, 0.9, 1, true},
		{"sideways", 1, 1, false},
	}
	for _, c := range cases {
		if got := c.c.Trips(c.v, c.t); got != c.want {
			t.Errorf("%s.Trips(%v, %v) = %v", c.c, c.v, c.t, got)
		}
	}
}

// replaced returns the shipped rules with old replaced by new once; it
// fails if old is not there.
func replaced(t *testing.T, old, new string) string {
	t.Helper()
	s := shippedText(t)
	if !strings.Contains(s, old) {
		t.Fatalf("shipped rules lack %q", old)
	}
	return strings.Replace(s, old, new, 1)
}

func TestParseRulesErrors(t *testing.T) {
	cases := []struct {
		name, data, want string
	}{
		{"empty", "", "no rules"},
		{"empty list", "rules: []", "no rules"},
		{"not YAML", "rules: [", "parse rules"},
		{"unknown top-level key", replaced(t, "rules:\n", "rulez: 1\nrules:\n"), "rulez"},
		{"unknown rule key", replaced(t, "    measure: damage_ratio\n", "    measure: damage_ratio\n    severity: 3\n"), "severity"},
		{"unknown threshold key", replaced(t, "{when: at_or_above, at: 0.5}", "{when: at_or_above, at: 0.5, by: 1}"), "by"},
		{"second document", shippedText(t) + "\n---\nrules: []\n", "more than one"},
		{"bad id", replaced(t, "id: damage-against-allowable", "id: Damage_Allowable"), "kebab"},
		{"double hyphen id", replaced(t, "id: damage-against-allowable", "id: damage--allowable"), "kebab"},
		{"duplicate id", replaced(t, "id: compliance-change", "id: damage-against-allowable"), "duplicate"},
		{"no title", replaced(t, "title: Cumulative damage against the allowable", "title: \"\""), "title"},
		{"unknown measure", replaced(t, "measure: residual_strain_growth", "measure: vibes"), "unknown measure"},
		{"required measure left out", replaced(t, "measure: depth_ratio", "measure: residual_strain_growth"), "no rule for measure \"depth_ratio\""},
		{"no level", replaced(t, "    watch: {when: at_or_above, at: 1}\n    basis: >-\n      Number of configured", "    basis: >-\n      Number of configured"), "neither"},
		{"no threshold value", replaced(t, "{when: at_or_above, at: 0.5}", "{when: at_or_above}"), "no threshold value"},
		{"threshold not a number", replaced(t, "{when: at_or_above, at: 0.5}", "{when: at_or_above, at: .nan}"), "finite"},
		{"threshold infinite", replaced(t, "{when: at_or_above, at: 50}", "{when: at_or_above, at: .inf}"), "finite"},
		{"threshold not numeric", replaced(t, "{when: at_or_above, at: 0.5}", "{when: at_or_above, at: half}"), "parse rules"},
		{"unknown comparison", replaced(t, "{when: at_or_above, at: 0.5}", "{when: sometimes, at: 0.5}"), "unknown comparison"},
		{"wrong direction", replaced(t, "{when: at_or_above, at: 0.03}", "{when: at_or_below, at: 0.03}"), "other way"},
		{"Felicity the wrong way", replaced(t, "{when: below, at: 1.0}", "{when: above, at: 1.0}"), "other way"},
		{"watch after hold", replaced(t, "{when: at_or_above, at: 0.03}", "{when: at_or_above, at: 0.07}"), "before hold"},
		{"watch equal to hold", replaced(t, "{when: at_or_above, at: 50}", "{when: at_or_above, at: 100}"), "before hold"},
		{"negative threshold", replaced(t, "{when: at_or_above, at: 0.5}", "{when: at_or_above, at: -0.5}"), "negative"},
		{"damage hold beyond the allowable", replaced(t, "{when: at_or_above, at: 1.0}", "{when: at_or_above, at: 1.2}"), "allowable"},
		{"damage hold strictly above 1", replaced(t, "{when: at_or_above, at: 1.0}", "{when: above, at: 1.0}"), "allowable"},
		{"depth hold beyond the rating", replaced(t, "{when: above, at: 1.0}", "{when: above, at: 1.1}"), "rated depth"},
		{"depth without hold", replaced(t, "    hold: {when: above, at: 1.0}\n", "    watch: {when: above, at: 0.9}\n"), "needs a hold"},
		{"boolean threshold unreachable", replaced(t, "    hold: {when: at_or_above, at: 1}\n    if_missing: watch\n    basis: >-\n      Emission", "    hold: {when: at_or_above, at: 2}\n    if_missing: watch\n    basis: >-\n      Emission"), "cannot tell"},
		{"unknown missing level", replaced(t, "if_missing: hold", "if_missing: shrug"), "if_missing"},
		{"no basis", replaced(t, "measure: missing_evidence\n    watch: {when: at_or_above, at: 1}\n    basis: >-", "measure: missing_evidence\n    watch: {when: at_or_above, at: 1}\n    basis: \"\"\n    xbasis: >-"), "xbasis"},
		{"no source", replaced(t, "    source: operator's choice\n    label: operator's choice\n\n  - id: felicity", "    source: \"\"\n    label: operator's choice\n\n  - id: felicity"), "no source"},
		{"no label", replaced(t, "    label: common practice\n", ""), "label"},
		{"unknown label", replaced(t, "label: common practice", "label: gut feeling"), "label"},
		{"operator label, cited source", replaced(t, "    source: operator's choice\n    label: operator's choice\n\n  - id: felicity", "    source: DNV rules\n    label: operator's choice\n\n  - id: felicity"), "does not say so"},
		{"from memory label without saying so", replaced(t, "emission examination of fiber-reinforced plastic vessels), hold-period\n      criteria, from memory: check", "emission examination of fiber-reinforced plastic vessels), hold-period\n      criteria: check"), "from memory"},
		{"memory source labelled published", replaced(t, "label: from memory", "label: published"), "from memory"},
		{"collapse hold beyond the collapse pressure", replaced(t, "hold: {when: at_or_above, at: 0.9}", "hold: {when: at_or_above, at: 1.05}"), "collapse pressure"},
		{"collapse hold strictly above 1", replaced(t, "hold: {when: at_or_above, at: 0.9}", "hold: {when: above, at: 1.0}"), "collapse pressure"},
		{"cycles hold beyond the qualified", replaced(t, "    hold: {when: at_or_above, at: 1.0}\n    if_missing: hold\n    basis: >-\n      Pressure cycles", "    hold: {when: at_or_above, at: 1.2}\n    if_missing: hold\n    basis: >-\n      Pressure cycles"), "qualified"},
		{"collapse rule left out", replaced(t, "measure: collapse_fraction", "measure: design_cycles_used"), "no rule for measure \"collapse_fraction\""},
		{"proof overshoot rule left out", replaced(t, "measure: proof_overshoot", "measure: data_quality_findings"), "no rule for measure \"proof_overshoot\""},
		{"proof overshoot without hold", replaced(t, "    hold: {when: above, at: 1.03}\n", ""), "needs a hold"},
		{"operator source labelled published", replaced(t, "    source: operator's choice\n    label: operator's choice\n\n  - id: felicity", "    source: operator's choice\n    label: published\n\n  - id: felicity"), "operator's choice"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rs, err := ParseRules([]byte(c.data))
			if err == nil {
				t.Fatal("accepted")
			}
			if rs != nil {
				t.Fatal("rules returned with an error")
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %q lacks %q", err, c.want)
			}
		})
	}
}

func TestParseRulesNoBasis(t *testing.T) {
	_, err := ParseRules([]byte(replaced(t, "measure: missing_evidence\n    watch: {when: at_or_above, at: 1}\n    basis: >-\n      Number", "measure: missing_evidence\n    watch: {when: at_or_above, at: 1}\n    basis: \"\"\n    source: x\n    label: published\n    title: >-\n      Number")))
	if err == nil {
		t.Fatal("accepted") // duplicate keys or no basis: refused either way
	}
}

func TestParseRulesEmptyIsErrNoRules(t *testing.T) {
	for _, d := range []string{"", "rules: []", "# only a comment\n"} {
		if _, err := ParseRules([]byte(d)); !errors.Is(err, ErrNoRules) {
			t.Errorf("%q: %v", d, err)
		}
	}
}

func TestParseRulesDefaultMissingLevel(t *testing.T) {
	rs, err := ParseRules([]byte(replaced(t, "    if_missing: hold\n    basis: >-\n      Governing", "    basis: >-\n      Governing")))
	if err != nil {
		t.Fatal(err)
	}
	if r, _ := rs.Find("damage-against-allowable"); r.IfMissing != LevelHold {
		t.Fatalf("default missing level %q, want the strongest (hold)", r.IfMissing)
	}
	if r, _ := rs.Find("missing-evidence"); r.IfMissing != LevelWatch {
		t.Fatalf("watch-only rule default %q", r.IfMissing)
	}
}
