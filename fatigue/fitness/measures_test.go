package fitness

import (
	"math"
	"strings"
	"testing"
)

// detailOf returns the details of the rule's flags on the hull.
func detailOf(t *testing.T, f HullFacts, rule string) []Flag {
	t.Helper()
	return flagsOf(Evaluate(shipped(t), f), rule)
}

func TestRuleFelicityLowerBound(t *testing.T) {
	bound := func(lb float64) func(*HullFacts) {
		return func(f *HullFacts) { f.Dives[0].FelicityRatio, f.Dives[0].FelicityLowerBound = nil, fp(lb) }
	}
	runRuleCases(t, "felicity-below-limit", []ruleCase{
		// Adversarial: a dive that stayed far below the reference must
		// not count as a pass, and does not raise a flag either (it did
		// not test the reference).
		{"bound trips the rule: the dive did not test the reference", bound(0.6), "", false, 0},
		{"bound at the hold level", bound(0.95), "", false, 0},
		{"bound satisfies the rule", bound(1.02), "", false, 0},
		{"bound not a number", bound(math.NaN()), LevelWatch, true, 0},
		{"bound negative", bound(-0.2), LevelWatch, true, 0},
		{"a ratio beats the bound", func(f *HullFacts) { f.Dives[0].FelicityRatio, f.Dives[0].FelicityLowerBound = fp(0.9), fp(1.1) }, LevelHold, false, 0.9},
		{"neither ratio nor bound", func(f *HullFacts) {
			f.Dives[0].FelicityRatio, f.Dives[0].FelicityReason = nil, "onset not found: record cut off"
		}, LevelWatch, true, 0},
		{"bound on a dive without AE data", func(f *HullFacts) {
			f.Dives[0].ChannelsPresent, f.Dives[0].FelicityRatio, f.Dives[0].FelicityLowerBound = nil, nil, fp(0.5)
		}, "", false, 0},
	})
	f := goodHull()
	f.Dives[0].FelicityRatio, f.Dives[0].FelicityReason = nil, "onset not found: record cut off"
	if got := detailOf(t, f, "felicity-below-limit"); len(got) != 1 || !strings.Contains(got[0].Detail, "record cut off") {
		t.Fatalf("the reason is not in the detail: %v", got)
	}
}

func TestRuleHoldEmissionSignificant(t *testing.T) {
	set := func(sig *bool, decays *bool) func(*HullFacts) {
		return func(f *HullFacts) { f.Dives[0].HoldEmissionSignificant, f.Dives[0].HoldDecays = sig, decays }
	}
	runRuleCases(t, "hold-emission-not-decaying", []ruleCase{
		// Adversarial: emission that decays but is significant by the
		// absolute count must not pass.
		{"significant although decaying", set(bp(true), bp(true)), LevelHold, false, 1},
		{"not significant but not decaying", set(bp(false), bp(false)), LevelHold, false, 1},
		{"not significant, decay not evaluated", set(bp(false), nil), "", false, 0},
		{"significant, decay not evaluated", set(bp(true), nil), LevelHold, false, 1},
		{"neither evaluated", set(nil, nil), LevelWatch, true, 0},
	})
}

func TestRuleHoldHitsAfterSettle(t *testing.T) {
	set := func(n int) func(*HullFacts) { return func(f *HullFacts) { f.Dives[0].HoldHitsAfterSettle = ip(n) } }
	runRuleCases(t, "hold-hits-after-settle", []ruleCase{
		{"none", set(0), "", false, 0},
		{"one", set(1), "", false, 0},
		{"at watch", set(2), LevelWatch, false, 2},
		{"at the hold number, not above", set(5), LevelWatch, false, 5},
		{"above hold", set(6), LevelHold, false, 6},
		{"many", set(400), LevelHold, false, 400},
		{"not counted", func(f *HullFacts) { f.Dives[0].HoldHitsAfterSettle = nil }, LevelWatch, true, 0},
		{"negative", set(-1), LevelWatch, true, 0},
		{"no hold period", func(f *HullFacts) { f.Dives[0].HoldHitsAfterSettle, f.Dives[0].NoHoldPeriod = nil, true }, "", false, 0},
		{"no AE configured", func(f *HullFacts) { f.Dives[0].Channels, f.Dives[0].HoldHitsAfterSettle = nil, nil }, "", false, 0},
	})
}

// twoChannels gives the latest dive a second channel whose evidence mod
// sets.
func twoChannels(mod func(*ChannelFacts)) func(*HullFacts) {
	return func(f *HullFacts) {
		d := &f.Dives[0]
		d.Channels, d.ChannelsPresent = []string{"ae1", "ae2"}, []string{"ae1", "ae2"}
		c := goodChannel()
		mod(&c)
		d.ChannelFacts = map[string]ChannelFacts{"ae1": goodChannel(), "ae2": c}
	}
}

func TestRuleHistoricIndex(t *testing.T) {
	set := func(x float64) func(*HullFacts) {
		return twoChannels(func(c *ChannelFacts) { c.HistoricIndex = fp(x) })
	}
	runRuleCases(t, "historic-index", []ruleCase{
		{"below watch", set(1.49), "", false, 0},
		{"at watch", set(1.5), LevelWatch, false, 1.5},
		{"at hold", set(2.0), LevelHold, false, 2.0},
		{"above hold", set(3.1), LevelHold, false, 3.1},
		// Few hits are fine; a channel with hits and no index is not.
		{"too few hits", twoChannels(func(c *ChannelFacts) { c.HistoricIndex, c.HistoricIndexTooFewHits = nil, true }), "", false, 0},
		{"not computed", twoChannels(func(c *ChannelFacts) { c.HistoricIndex, c.Reason = nil, "energy column empty" }), LevelWatch, true, 0},
		{"not a number", set(math.NaN()), LevelWatch, true, 0},
		{"per-channel evidence not evaluated", func(f *HullFacts) { f.Dives[0].ChannelFacts = nil }, LevelWatch, true, 0},
		{"an absent channel is left to missing-evidence", twoChannels(func(c *ChannelFacts) { *c = ChannelFacts{} }), "", false, 0},
	})
	f := goodHull()
	set(2.5)(&f)
	if got := detailOf(t, f, "historic-index"); len(got) != 1 || !strings.Contains(got[0].Detail, "channel ae2") {
		t.Fatalf("the worst channel is not named: %v", got)
	}
	f = goodHull()
	twoChannels(func(c *ChannelFacts) { c.HistoricIndex, c.Reason = nil, "energy column empty" })(&f)
	if got := detailOf(t, f, "historic-index"); len(got) != 1 || !strings.Contains(got[0].Detail, "ae2: energy column empty") {
		t.Fatalf("the missing channel is not named: %v", got)
	}
}

func TestRuleSeverity(t *testing.T) {
	set := func(x float64) func(*HullFacts) { return twoChannels(func(c *ChannelFacts) { c.Severity = fp(x) }) }
	runRuleCases(t, "severity", []ruleCase{
		{"below watch", set(4999), "", false, 0},
		{"at watch", set(5000), LevelWatch, false, 5000},
		{"at hold", set(10000), LevelHold, false, 10000},
		{"too few hits", twoChannels(func(c *ChannelFacts) { c.Severity, c.SeverityTooFewHits = nil, true }), "", false, 0},
		{"not computed", twoChannels(func(c *ChannelFacts) { c.Severity = nil }), LevelWatch, true, 0},
		{"infinite", set(math.Inf(1)), LevelWatch, true, 0},
	})
}

func TestRuleHighAmplitudeHits(t *testing.T) {
	set := func(n int) func(*HullFacts) { return twoChannels(func(c *ChannelFacts) { c.HighAmplitudeHits = n }) }
	runRuleCases(t, "high-amplitude-hits", []ruleCase{
		{"none", set(0), "", false, 0},
		{"one", set(1), LevelWatch, false, 1},
		{"four", set(4), LevelWatch, false, 4},
		{"five", set(5), LevelHold, false, 5},
		{"negative", set(-3), LevelWatch, true, 0},
		{"not evaluated", func(f *HullFacts) { f.Dives[0].ChannelFacts = nil }, LevelWatch, true, 0},
	})
}

func TestRuleTotalCounts(t *testing.T) {
	set := func(x float64) func(*HullFacts) { return twoChannels(func(c *ChannelFacts) { c.TotalCounts = x }) }
	runRuleCases(t, "total-counts", []ruleCase{
		{"below watch", set(4999), "", false, 0},
		{"at watch", set(5000), LevelWatch, false, 5000},
		{"at hold", set(20000), LevelHold, false, 20000},
		{"not a number", set(math.NaN()), LevelWatch, true, 0},
	})
}

func TestRuleMissingEvidenceChannelsAndDoubtfulGauges(t *testing.T) {
	runRuleCases(t, "missing-evidence", []ruleCase{
		// Adversarial: a channel listed as reporting but with no hit and
		// no passing sensor check is missing, not quiet.
		{"channel without hit or sensor check", func(f *HullFacts) {
			f.Dives[0].ChannelFacts = map[string]ChannelFacts{"ae1": {Reason: "no hit, no pencil-lead break"}}
		}, LevelWatch, false, 1},
		{"channel absent from the per-channel evidence", func(f *HullFacts) { f.Dives[0].ChannelFacts = map[string]ChannelFacts{} }, LevelWatch, false, 1},
		{"quiet channel with a passing sensor check", func(f *HullFacts) {
			f.Dives[0].ChannelFacts = map[string]ChannelFacts{"ae1": {Present: true, Checked: true, HistoricIndexTooFewHits: true, SeverityTooFewHits: true}}
		}, "", false, 0},
		// Adversarial: a gauge that reads a constant is doubtful, not
		// healthy.
		{"doubtful gauge", func(f *HullFacts) { f.Dives[0].GaugeProblems = map[string]string{"g1": "constant reading"} }, LevelWatch, false, 1},
		{"doubtful and absent counts once", func(f *HullFacts) {
			f.Dives[0].GaugesPresent = []string{"g1"}
			f.Dives[0].GaugeProblems = map[string]string{"g2": "out of range"}
		}, LevelWatch, false, 1},
		{"doubtful unconfigured gauge counts", func(f *HullFacts) { f.Dives[0].GaugeProblems = map[string]string{"g9": "out of range"} }, LevelWatch, false, 1},
		{"everything wrong", func(f *HullFacts) {
			f.Dives[0].GaugeProblems = map[string]string{"g1": "constant", "g2": "out of range"}
			f.Dives[0].ChannelFacts = map[string]ChannelFacts{"ae1": {}}
		}, LevelWatch, false, 3},
	})
	f := goodHull()
	f.Dives[0].GaugeProblems = map[string]string{"g1": "constant reading"}
	f.Dives[0].ChannelFacts = map[string]ChannelFacts{"ae1": {Reason: "no pencil-lead break"}}
	got := detailOf(t, f, "missing-evidence")
	if len(got) != 1 || !strings.Contains(got[0].Detail, "constant reading") || !strings.Contains(got[0].Detail, "no hit and no passing sensor check: no pencil-lead break") {
		t.Fatalf("detail %v", got)
	}
}

func TestRuleCreepStrain(t *testing.T) {
	set := func(x float64) func(*HullFacts) {
		return func(f *HullFacts) { f.Dives[0].Creep = map[string]float64{"g1": 1, "g2": x} }
	}
	runRuleCases(t, "creep-strain", []ruleCase{
		{"below watch", set(49.9), "", false, 0},
		{"at watch", set(50), LevelWatch, false, 50},
		{"compressive at hold", set(-100), LevelHold, false, 100},
		{"gauge without creep", func(f *HullFacts) { f.Dives[0].Creep = map[string]float64{"g1": 1} }, LevelWatch, true, 0},
		{"not evaluated", func(f *HullFacts) { f.Dives[0].Creep = nil }, LevelWatch, true, 0},
		{"no hold period", func(f *HullFacts) { f.Dives[0].Creep, f.Dives[0].NoHoldPeriod = nil, true }, "", false, 0},
	})
}

func TestRuleStrainHysteresis(t *testing.T) {
	set := func(x float64) func(*HullFacts) {
		return func(f *HullFacts) { f.Dives[0].Hysteresis = map[string]float64{"g1": x, "g2": 0.01} }
	}
	runRuleCases(t, "strain-hysteresis", []ruleCase{
		{"below watch", set(0.0499), "", false, 0},
		{"at watch", set(0.05), LevelWatch, false, 0.05},
		{"at hold", set(0.10), LevelHold, false, 0.10},
		{"negative counts by magnitude", set(-0.2), LevelHold, false, 0.2},
		{"not evaluated", func(f *HullFacts) { f.Dives[0].Hysteresis = nil }, LevelWatch, true, 0},
		{"not a number", set(math.NaN()), LevelWatch, true, 0},
	})
}

func TestResidualNotComparable(t *testing.T) {
	// A residual that cannot be compared is missing for its gauge: a
	// watch, and it is left out of the running sum.
	runRuleCases(t, "residual-strain", []ruleCase{
		{"not comparable", func(f *HullFacts) {
			f.Dives[0].ResidualNotComparable = map[string]string{"g2": "temperature differs by 8 K"}
		}, LevelWatch, true, 0},
	})
	f := goodHull()
	f.Dives[0].ResidualStrain = map[string]float64{"g1": 120, "g2": 300}
	f.Dives[0].ResidualNotComparable = map[string]string{"g2": "temperature differs by 8 K"}
	got := detailOf(t, f, "residual-strain")
	if len(got) != 2 || got[0].Level != LevelHold || got[0].Value != 120 || !got[1].Missing || !strings.Contains(got[1].Detail, "temperature differs") {
		t.Fatalf("%v", got)
	}
	if g := detailOf(t, f, "residual-strain-growth"); len(g) != 1 || g[0].Value != 120 {
		t.Fatalf("growth should sum the comparable gauge only: %v", g)
	}
}

func TestRuleDataQuality(t *testing.T) {
	findings := func(codes ...string) func(*HullFacts) {
		return func(f *HullFacts) {
			f.Dives[0].DataQuality = nil
			for _, c := range codes {
				f.Dives[0].DataQuality = append(f.Dives[0].DataQuality, Finding{Code: c, Detail: "seen"})
			}
		}
	}
	runRuleCases(t, "data-quality", []ruleCase{
		{"checked, clean", findings(), "", false, 0},
		{"one finding", findings("gap_at_depth"), LevelWatch, false, 1},
		{"three findings", findings("record_not_at_surface_start", "coarse_sampling", "duplicate_time"), LevelWatch, false, 3},
		{"not checked", func(f *HullFacts) { f.Dives[0].DataQualityChecked = false }, LevelWatch, true, 0},
		{"findings imply a check", func(f *HullFacts) {
			f.Dives[0].DataQualityChecked = false
			f.Dives[0].DataQuality = []Finding{{Code: "record_not_at_surface_end"}}
		}, LevelWatch, false, 1},
	})
	f := goodHull()
	findings("gap_at_depth", "duplicate_time")(&f)
	if got := detailOf(t, f, "data-quality"); len(got) != 1 || !strings.Contains(got[0].Detail, "gap_at_depth (seen); duplicate_time") {
		t.Fatalf("%v", got)
	}
}

// proofDive makes the latest dive a proof test to a peak of peak MPa
// against a proof pressure of 100 MPa and a collapse pressure of 150 MPa.
func proofDive(peak float64) func(*HullFacts) {
	return func(f *HullFacts) {
		d := &f.Dives[0]
		d.ProofTest, d.PeakMPa, d.SpecProofMPa, d.CollapseMPa, d.MaxDepthM = true, peak, 100, 150, 1250
		f.CollapsePressureMPa, f.MaxPressureMPa = 150, 0
	}
}

func TestRuleProofOvershoot(t *testing.T) {
	runRuleCases(t, "proof-overshoot", []ruleCase{
		{"at the proof pressure", proofDive(100), "", false, 0},
		{"at the watch level", proofDive(101), "", false, 0},
		{"above watch", proofDive(102), LevelWatch, false, 1.02},
		{"at the hold level", proofDive(103), LevelWatch, false, 1.03},
		{"above hold", proofDive(104), LevelHold, false, 1.04},
		{"peak not known", proofDive(0), LevelHold, true, 0},
		{"peak not a number", proofDive(math.NaN()), LevelHold, true, 0},
		{"proof pressure not known", func(f *HullFacts) { proofDive(100)(f); f.Dives[0].SpecProofMPa = 0 }, LevelHold, true, 0},
		{"not a proof test", func(f *HullFacts) { f.Dives[0].PeakMPa = 500 }, "", false, 0},
	})
	f := goodHull()
	proofDive(104)(&f)
	if got := detailOf(t, f, "proof-overshoot"); len(got) != 1 || !strings.Contains(got[0].Detail, "0.693 of the collapse pressure 150.000 MPa") {
		t.Fatalf("detail %v", got)
	}
}

// TestProofDiveLeftOutOfDepthRule: a proof test goes beyond the rated
// depth on purpose and is judged by the proof rule; the same dive not
// marked as a proof test holds the hull.
func TestProofDiveLeftOutOfDepthRule(t *testing.T) {
	f := goodHull()
	proofDive(100)(&f)
	if got := detailOf(t, f, "beyond-rated-depth"); len(got) != 0 {
		t.Fatalf("proof test judged by depth: %v", got)
	}
	f.Dives[0].ProofTest = false
	if got := detailOf(t, f, "beyond-rated-depth"); len(got) != 1 || got[0].Level != LevelHold {
		t.Fatalf("%v", got)
	}
}

func TestRuleCollapseFraction(t *testing.T) {
	set := func(maxP float64) func(*HullFacts) {
		return func(f *HullFacts) { f.MaxPressureMPa, f.CollapsePressureMPa = maxP, 100 }
	}
	runRuleCases(t, "collapse-fraction", []ruleCase{
		{"below watch", set(79), "", false, 0},
		{"at watch", set(80), LevelWatch, false, 0.8},
		{"between", set(89.9), LevelWatch, false, 0.899},
		{"at hold", set(90), LevelHold, false, 0.9},
		{"beyond collapse", set(101), LevelHold, false, 1.01},
		// Adversarial: a stale hull maximum does not hide a dive's peak.
		{"a dive's peak above the hull's maximum", func(f *HullFacts) {
			set(50)(f)
			f.Dives[0].PeakMPa = 92
		}, LevelHold, false, 0.92},
		{"collapse pressure not known", func(f *HullFacts) { f.CollapsePressureMPa = 0 }, LevelHold, true, 0},
		{"collapse pressure not a number", func(f *HullFacts) { f.CollapsePressureMPa = math.NaN() }, LevelHold, true, 0},
		{"maximum not a number", set(math.NaN()), LevelHold, true, 0},
	})
}

func TestRuleDesignCyclesUsed(t *testing.T) {
	set := func(used float64) func(*HullFacts) {
		return func(f *HullFacts) { f.QualifiedCycles, f.CyclesUsed = fp(10000), used }
	}
	runRuleCases(t, "design-cycles-used", []ruleCase{
		{"below watch", set(7999), "", false, 0},
		{"at watch", set(8000), LevelWatch, false, 0.8},
		{"at the qualified number", set(10000), LevelHold, false, 1},
		{"beyond", set(12000), LevelHold, false, 1.2},
		{"not specified: the rule does not apply", func(f *HullFacts) { f.QualifiedCycles, f.CyclesUsed = nil, 1e9 }, "", false, 0},
		{"qualified zero", func(f *HullFacts) { f.QualifiedCycles = fp(0) }, LevelHold, true, 0},
		{"used not a number", set(math.NaN()), LevelHold, true, 0},
	})
}
