package fitness

import (
	"os"
	"testing"
	"time"
)

// shipped parses the rule set shipped in configs/rules.yaml.
func shipped(t testing.TB) *Rules {
	t.Helper()
	data, err := os.ReadFile("../../configs/rules.yaml")
	if err != nil {
		t.Fatal(err)
	}
	r, err := ParseRules(data)
	if err != nil {
		t.Fatalf("shipped rules: %v", err)
	}
	return r
}

var t0 = time.Date(2025, 6, 1, 12, 0, 0, 0, time.UTC)

func day(n float64) time.Duration { return time.Duration(n * 24 * float64(time.Hour)) }

func fp(x float64) *float64 { return &x }
func bp(x bool) *bool       { return &x }
func ip(x int) *int         { return &x }

// goodChannel is a channel's evidence, present and healthy.
func goodChannel() ChannelFacts {
	return ChannelFacts{Present: true, Checked: true, HistoricIndex: fp(1.0), Severity: fp(800), HighAmplitudeHits: 0, TotalCounts: 300}
}

// goodDive is a dive with every piece of evidence present and healthy,
// recorded two hours after it began.
func goodDive(id string, start time.Time) DiveFacts {
	return DiveFacts{
		ID: id, Start: start, RecordedAt: start.Add(2 * time.Hour), MaxDepthM: 800, RatedDepthM: 1000,
		FelicityRatio:           fp(1.05),
		HoldDecays:              bp(true),
		HoldEmissionSignificant: bp(false),
		HoldHitsAfterSettle:     ip(0),
		ChannelFacts:            map[string]ChannelFacts{"ae1": goodChannel()},
		ComplianceChange:        map[string]float64{"g1": 0.004, "g2": -0.002},
		ResidualStrain:          map[string]float64{"g1": 3, "g2": -2},
		Creep:                   map[string]float64{"g1": 4, "g2": -3},
		Hysteresis:              map[string]float64{"g1": 0.01, "g2": 0.02},
		DataQualityChecked:      true,
		PeakMPa:                 8.1,
		Gauges:                  []string{"g1", "g2"}, GaugesPresent: []string{"g1", "g2"},
		Channels: []string{"ae1"}, ChannelsPresent: []string{"ae1"},
	}
}

// goodHull is a hull that raises no flag at t0: moderate damage, a recent
// passing inspection and proof test, and one healthy dive.
func goodHull() HullFacts {
	return HullFacts{
		Hull: "HX-01", Now: t0,
		DamageRatio: fp(0.2), GoverningComponent: "cylinder",
		RatedDepthM:    1000,
		MaxPressureMPa: 12.5, CollapsePressureMPa: 20,
		QualifiedCycles: fp(10000), CyclesUsed: 110,
		Dives:       []DiveFacts{goodDive("d1", t0.Add(-day(1)))},
		DiveCount:   110,
		Inspections: []Inspection{{At: t0.Add(-day(10)), Method: "visual", Result: ResultPass, Actor: "A. Inspector", DiveCount: 100}},
		ProofTests:  []ProofTest{{At: t0.Add(-day(200)), PressureMPa: 12.5, Result: ResultPass, Actor: "B. Tester", DiveCount: 0}},
	}
}

func flagsOf(fs []Flag, rule string) []Flag {
	var out []Flag
	for _, f := range fs {
		if f.Rule == rule {
			out = append(out, f)
		}
	}
	return out
}

// ruleCase is one row of a rule's table: a change to the good hull and the
// flag the rule should raise ("" level: none).
type ruleCase struct {
	name    string
	mod     func(*HullFacts)
	want    Level
	missing bool
	value   float64 // checked when the flag is not missing
}

func runRuleCases(t *testing.T, rule string, cases []ruleCase) {
	t.Helper()
	rs := shipped(t)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f := goodHull()
			c.mod(&f)
			// The flags of the hull and of the latest dive.
			var got []Flag
			for _, g := range flagsOf(Evaluate(rs, f), rule) {
				if g.Dive == "" || len(f.Dives) > 0 && g.Dive == f.Dives[len(f.Dives)-1].ID {
					got = append(got, g)
				}
			}
			if c.want == "" {
				if len(got) != 0 {
					t.Fatalf("want no %s flag, got %v", rule, got)
				}
				return
			}
			if len(got) != 1 {
				t.Fatalf("want one %s flag, got %d: %v", rule, len(got), got)
			}
			g := got[0]
			if g.Level != c.want || g.Missing != c.missing {
				t.Fatalf("got level %s missing %v, want %s missing %v: %v", g.Level, g.Missing, c.want, c.missing, g)
			}
			if !c.missing && !near(g.Value, c.value) {
				t.Fatalf("value %v, want %v", g.Value, c.value)
			}
			if g.Basis == "" || g.Source == "" || g.Title == "" {
				t.Fatalf("flag without basis, source or title: %+v", g)
			}
		})
	}
}

func near(a, b float64) bool {
	if a == b {
		return true
	}
	d := a - b
	return d < 1e-9 && d > -1e-9
}

func shippedText(t testing.TB) string {
	t.Helper()
	data, err := os.ReadFile("../../configs/rules.yaml")
	if err != nil {
		t.Fatal(err)
	}
	return string(data)
}
