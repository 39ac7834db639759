package fitness

import (
	"math"
	"strings"
	"testing"
	"time"
)

func TestGoodHullRaisesNothing(t *testing.T) {
	if fs := Evaluate(shipped(t), goodHull()); len(fs) != 0 {
		t.Fatalf("good hull raised %v", fs)
	}
}

func TestEvaluateWithoutRulesHolds(t *testing.T) {
	for _, r := range []*Rules{nil, {}} {
		fs := Evaluate(r, goodHull())
		if len(fs) != 1 || fs[0].Level != LevelHold || !fs[0].Missing {
			t.Fatalf("no rules: got %v", fs)
		}
	}
}

func TestRuleDamageAgainstAllowable(t *testing.T) {
	set := func(x float64) func(*HullFacts) { return func(f *HullFacts) { f.DamageRatio = fp(x) } }
	runRuleCases(t, "damage-against-allowable", []ruleCase{
		{"below watch", set(0.4999), "", false, 0},
		{"at watch", set(0.5), LevelWatch, false, 0.5},
		{"between", set(0.99), LevelWatch, false, 0.99},
		{"at hold", set(1.0), LevelHold, false, 1.0},
		{"above hold", set(1.7), LevelHold, false, 1.7},
		{"infinite", set(math.Inf(1)), LevelHold, false, math.Inf(1)},
		{"not assessed", func(f *HullFacts) { f.DamageRatio = nil }, LevelHold, true, 0},
		{"not a number", set(math.NaN()), LevelHold, true, 0},
		{"negative", set(-0.1), LevelHold, true, 0},
	})
}

func TestRuleFelicity(t *testing.T) {
	set := func(x float64) func(*HullFacts) { return func(f *HullFacts) { f.Dives[0].FelicityRatio = fp(x) } }
	runRuleCases(t, "felicity-below-limit", []ruleCase{
		{"Kaiser behaviour above 1", set(1.2), "", false, 0},
		{"at 1", set(1.0), "", false, 0},
		{"just below 1", set(0.99), LevelWatch, false, 0.99},
		{"just above hold", set(0.9501), LevelWatch, false, 0.9501},
		{"at hold (inclusive)", set(0.95), LevelHold, false, 0.95},
		{"below hold", set(0.80), LevelHold, false, 0.80},
		{"not evaluated", func(f *HullFacts) { f.Dives[0].FelicityRatio = nil }, LevelWatch, true, 0},
		{"not a number", set(math.NaN()), LevelWatch, true, 0},
		{"negative", set(-1), LevelWatch, true, 0},
		{"no AE configured", func(f *HullFacts) {
			f.Dives[0].Channels, f.Dives[0].ChannelsPresent, f.Dives[0].FelicityRatio = nil, nil, nil
		}, "", false, 0},
		{"no channel reported (missing-evidence covers it)", func(f *HullFacts) {
			f.Dives[0].ChannelsPresent, f.Dives[0].FelicityRatio = nil, nil
		}, "", false, 0},
	})
}

func TestRuleHoldEmission(t *testing.T) {
	runRuleCases(t, "hold-emission-not-decaying", []ruleCase{
		{"decays", func(f *HullFacts) { f.Dives[0].HoldDecays = bp(true) }, "", false, 0},
		{"does not decay", func(f *HullFacts) { f.Dives[0].HoldDecays = bp(false) }, LevelHold, false, 1},
		{"not evaluated", func(f *HullFacts) { f.Dives[0].HoldDecays, f.Dives[0].HoldEmissionSignificant = nil, nil }, LevelWatch, true, 0},
		{"no hold period", func(f *HullFacts) { f.Dives[0].HoldDecays, f.Dives[0].NoHoldPeriod = nil, true }, "", false, 0},
		{"no AE configured", func(f *HullFacts) { f.Dives[0].Channels, f.Dives[0].HoldDecays = nil, nil }, "", false, 0},
	})
}

func TestRuleComplianceChange(t *testing.T) {
	set := func(x float64) func(*HullFacts) {
		return func(f *HullFacts) { f.Dives[0].ComplianceChange = map[string]float64{"g1": x, "g2": 0.001} }
	}
	runRuleCases(t, "compliance-change", []ruleCase{
		{"below watch", set(0.0299), "", false, 0},
		{"at watch", set(0.03), LevelWatch, false, 0.03},
		{"between", set(0.049), LevelWatch, false, 0.049},
		{"at hold", set(0.05), LevelHold, false, 0.05},
		{"above hold", set(0.12), LevelHold, false, 0.12},
		{"much stiffer is doubtful", set(-0.06), LevelHold, false, 0.06},
		{"no baseline", func(f *HullFacts) { f.Dives[0].ComplianceChange = nil }, LevelWatch, true, 0},
		{"one gauge without value", func(f *HullFacts) { f.Dives[0].ComplianceChange = map[string]float64{"g1": 0.001} }, LevelWatch, true, 0},
		{"not a number", func(f *HullFacts) {
			f.Dives[0].ComplianceChange = map[string]float64{"g1": math.NaN(), "g2": 0.001}
		}, LevelWatch, true, 0},
		{"no gauges configured", func(f *HullFacts) {
			d := &f.Dives[0]
			d.Gauges, d.GaugesPresent, d.ComplianceChange = nil, nil, nil
		}, "", false, 0},
	})
}

func TestRuleResidualStrain(t *testing.T) {
	set := func(x float64) func(*HullFacts) {
		return func(f *HullFacts) { f.Dives[0].ResidualStrain = map[string]float64{"g1": 1, "g2": x} }
	}
	runRuleCases(t, "residual-strain", []ruleCase{
		{"below watch", set(49.9), "", false, 0},
		{"at watch", set(50), LevelWatch, false, 50},
		{"compressive at watch", set(-50), LevelWatch, false, 50},
		{"at hold", set(100), LevelHold, false, 100},
		{"above hold", set(-250), LevelHold, false, 250},
		{"gauge without residual", func(f *HullFacts) { f.Dives[0].ResidualStrain = map[string]float64{"g1": 1} }, LevelWatch, true, 0},
		{"none at all", func(f *HullFacts) { f.Dives[0].ResidualStrain = nil }, LevelWatch, true, 0},
		{"infinite", set(math.Inf(-1)), LevelWatch, true, 0},
	})
}

func TestRuleResidualStrainGrowth(t *testing.T) {
	dives := func(res ...float64) func(*HullFacts) {
		return func(f *HullFacts) {
			f.Dives = nil
			for i, x := range res {
				d := goodDive(string(rune('a'+i)), t0.Add(-day(float64(len(res)-i))))
				d.ResidualStrain = map[string]float64{"g1": x, "g2": 0}
				f.Dives = append(f.Dives, d)
			}
		}
	}
	runRuleCases(t, "residual-strain-growth", []ruleCase{
		{"noise cancels", dives(40, -40, 40, -40), "", false, 0},
		{"just below watch", dives(40, 40, 19.9), "", false, 0},
		{"reaches watch on the last dive", dives(40, 40, 20), LevelWatch, false, 100},
		{"reaches hold", dives(-45, -45, -45, -45, -20), LevelHold, false, 200},
	})
	// A ratchet keeps every later dive flagged.
	f := goodHull()
	dives(45, 45, 45, 45, 45)(&f)
	got := flagsOf(Evaluate(shipped(t), f), "residual-strain-growth")
	if len(got) != 3 || got[0].Dive != "c" || got[0].Level != LevelWatch || got[2].Dive != "e" || got[2].Level != LevelHold {
		t.Fatalf("ratchet flags %v", got)
	}
}

func TestRuleBeyondRatedDepth(t *testing.T) {
	depth := func(x float64) func(*HullFacts) { return func(f *HullFacts) { f.Dives[0].MaxDepthM = x } }
	runRuleCases(t, "beyond-rated-depth", []ruleCase{
		{"below rating", depth(999), "", false, 0},
		{"at rating", depth(1000), "", false, 0},
		{"beyond rating", depth(1000.5), LevelHold, false, 1.0005},
		{"far beyond", depth(1500), LevelHold, false, 1.5},
		{"rating from the hull when the dive has none", func(f *HullFacts) {
			f.Dives[0].RatedDepthM, f.RatedDepthM, f.Dives[0].MaxDepthM = 0, 500, 600
		}, LevelHold, false, 1.2},
		{"rating unknown", func(f *HullFacts) { f.Dives[0].RatedDepthM, f.RatedDepthM = 0, 0 }, LevelHold, true, 0},
		{"depth not a number", depth(math.NaN()), LevelHold, true, 0},
	})
}

func TestRuleInspectionDueByDives(t *testing.T) {
	count := func(n int) func(*HullFacts) { return func(f *HullFacts) { f.DiveCount = 100 + n } }
	runRuleCases(t, "inspection-due-by-dives", []ruleCase{
		{"39 dives", count(39), "", false, 0},
		{"40 dives: 80 %", count(40), LevelWatch, false, 40},
		{"49 dives", count(49), LevelWatch, false, 49},
		{"50 dives: the interval", count(50), LevelHold, false, 50},
		{"60 dives", count(60), LevelHold, false, 60},
		{"no inspection on record", func(f *HullFacts) { f.Inspections = nil }, LevelHold, true, 0},
		{"only a failed inspection", func(f *HullFacts) { f.Inspections[0].Result = ResultFail }, LevelHold, true, 0},
		{"inspection dated after now", func(f *HullFacts) { f.Inspections[0].At = t0.Add(time.Hour) }, LevelHold, true, 0},
		{"counts disagree", count(-5), LevelHold, true, 0},
		{"stale count: dives given after the inspection win", func(f *HullFacts) {
			f.DiveCount = 100
			f.Dives = nil
			for i := range 45 {
				f.Dives = append(f.Dives, goodDive("x", t0.Add(-day(9)).Add(time.Duration(i)*time.Hour)))
			}
		}, LevelWatch, false, 45},
		{"time unknown", func(f *HullFacts) { f.Now = time.Time{} }, LevelHold, true, 0},
	})
}

func TestRuleInspectionDueByDays(t *testing.T) {
	ago := func(d float64) func(*HullFacts) { return func(f *HullFacts) { f.Inspections[0].At = t0.Add(-day(d)) } }
	runRuleCases(t, "inspection-due-by-days", []ruleCase{
		{"291 days", ago(291), "", false, 0},
		{"292 days: 80 %", ago(292), LevelWatch, false, 292},
		{"364 days", ago(364), LevelWatch, false, 364},
		{"365 days", ago(365), LevelHold, false, 365},
		{"400 days", ago(400), LevelHold, false, 400},
		{"the latest passing one counts", func(f *HullFacts) {
			f.Inspections = append(f.Inspections, Inspection{At: t0.Add(-day(500)), Result: ResultPass})
		}, "", false, 0},
		{"a later failed one does not reset", func(f *HullFacts) {
			f.Inspections = []Inspection{{At: t0.Add(-day(400)), Result: ResultPass}, {At: t0.Add(-day(1)), Result: ResultFail}}
		}, LevelHold, false, 400},
		{"no inspection", func(f *HullFacts) { f.Inspections = nil }, LevelHold, true, 0},
		{"inspected just now", ago(0), "", false, 0},
	})
	// A record without a time cannot count.
	f := goodHull()
	f.Inspections[0].At = time.Time{}
	if got := flagsOf(Evaluate(shipped(t), f), "inspection-due-by-days"); len(got) != 1 || !got[0].Missing {
		t.Fatalf("undated inspection counted: %v", got)
	}
}

func TestRuleProofTestDue(t *testing.T) {
	ago := func(d float64) func(*HullFacts) { return func(f *HullFacts) { f.ProofTests[0].At = t0.Add(-day(d)) } }
	runRuleCases(t, "proof-test-due", []ruleCase{
		{"1460 days", ago(1460), "", false, 0},
		{"1461 days: 80 %", ago(1461), LevelWatch, false, 1461},
		{"1825 days", ago(1825), LevelWatch, false, 1825},
		{"1826 days: five years", ago(1826), LevelHold, false, 1826},
		{"2000 days", ago(2000), LevelHold, false, 2000},
		{"no proof test", func(f *HullFacts) { f.ProofTests = nil }, LevelHold, true, 0},
		{"failed proof test", func(f *HullFacts) { f.ProofTests[0].Result = ResultFail }, LevelHold, true, 0},
		{"result not recorded", func(f *HullFacts) { f.ProofTests[0].Result = "" }, LevelHold, true, 0},
	})
}

func TestRuleMissingEvidence(t *testing.T) {
	runRuleCases(t, "missing-evidence", []ruleCase{
		{"everything present", func(f *HullFacts) {}, "", false, 0},
		{"nothing configured", func(f *HullFacts) {
			d := &f.Dives[0]
			d.Gauges, d.GaugesPresent, d.Channels, d.ChannelsPresent = nil, nil, nil, nil
			d.ComplianceChange, d.ResidualStrain = nil, nil
		}, "", false, 0},
		{"one gauge missing", func(f *HullFacts) { f.Dives[0].GaugesPresent = []string{"g1"} }, LevelWatch, false, 1},
		{"no AE data", func(f *HullFacts) { f.Dives[0].ChannelsPresent = nil }, LevelWatch, false, 1},
		{"no evidence at all", func(f *HullFacts) {
			f.Dives[0].GaugesPresent, f.Dives[0].ChannelsPresent = nil, nil
		}, LevelWatch, false, 3},
		{"unconfigured extra data does not hide a gap", func(f *HullFacts) {
			f.Dives[0].GaugesPresent = []string{"g1", "g9"}
		}, LevelWatch, false, 1},
	})
}

func TestMissingEvidenceLevelConfigurable(t *testing.T) {
	data := strings.Replace(shippedText(t), "watch: {when: at_or_above, at: 1}\n    basis: >-\n      Number of configured",
		"hold: {when: at_or_above, at: 1}\n    basis: >-\n      Number of configured", 1)
	rs, err := ParseRules([]byte(data))
	if err != nil {
		t.Fatal(err)
	}
	f := goodHull()
	f.Dives[0].GaugesPresent = nil
	got := flagsOf(Evaluate(rs, f), "missing-evidence")
	if len(got) != 1 || got[0].Level != LevelHold {
		t.Fatalf("configured hold: %v", got)
	}
}

func TestEvidenceFlagsStayOnEarlierDives(t *testing.T) {
	f := goodHull()
	bad := goodDive("d0", t0.Add(-day(5)))
	bad.FelicityRatio = fp(0.9)
	f.Dives = append([]DiveFacts{bad}, goodDive("d1", t0.Add(-day(3))), goodDive("d2", t0.Add(-day(1))))
	got := flagsOf(Evaluate(shipped(t), f), "felicity-below-limit")
	if len(got) != 1 || got[0].Dive != "d0" || !got[0].At.Equal(bad.Start) || got[0].Level != LevelHold {
		t.Fatalf("flag of the earlier dive: %v", got)
	}
}

func TestFlagString(t *testing.T) {
	f := goodHull()
	f.Dives[0].MaxDepthM = 1100
	got := flagsOf(Evaluate(shipped(t), f), "beyond-rated-depth")
	if len(got) != 1 {
		t.Fatal(got)
	}
	s := got[0].String()
	for _, want := range []string{"hold", "dive d1", "1.1 > 1", "1100.0 m", "rule beyond-rated-depth", "source:"} {
		if !strings.Contains(s, want) {
			t.Errorf("%q lacks %q", s, want)
		}
	}
}
