package fitness

import (
	"math"
	"strings"
	"testing"
)

func TestClear(t *testing.T) {
	rs := shipped(t)
	plan := Plan{DepthM: 900, BottomTimeMin: 60, PredictedDamageRatio: 0.01}
	cases := []struct {
		name   string
		state  State
		mod    func(*HullFacts, *Plan)
		rules  *Rules
		want   bool
		nogoBy string // the check code that must say no-go
	}{
		{"fit hull, plan within limits", Fit, func(*HullFacts, *Plan) {}, rs, true, ""},
		{"watch is go", Watch, func(*HullFacts, *Plan) {}, rs, true, ""},
		{"hold", Hold, func(*HullFacts, *Plan) {}, rs, false, "status"},
		{"withdrawn", Withdrawn, func(*HullFacts, *Plan) {}, rs, false, "status"},
		{"unknown status", "", func(*HullFacts, *Plan) {}, rs, false, "status"},
		{"at the rated depth", Fit, func(_ *HullFacts, p *Plan) { p.DepthM = 1000 }, rs, true, ""},
		{"beyond the rated depth", Fit, func(_ *HullFacts, p *Plan) { p.DepthM = 1000.1 }, rs, false, "depth"},
		{"rated depth unknown", Fit, func(f *HullFacts, _ *Plan) { f.RatedDepthM = 0; f.Dives = nil }, rs, false, "depth"},
		{"rated depth from the latest dive", Fit, func(f *HullFacts, p *Plan) { f.RatedDepthM = 0; f.Dives[0].RatedDepthM = 800 }, rs, false, "depth"},
		{"damage uses what is left", Fit, func(f *HullFacts, p *Plan) { f.DamageRatio = fp(0.95); p.PredictedDamageRatio = 0.05 }, rs, true, ""},
		{"damage exceeding what is left", Fit, func(f *HullFacts, p *Plan) { f.DamageRatio = fp(0.95); p.PredictedDamageRatio = 0.0501 }, rs, false, "damage"},
		{"caller's smaller remainder wins", Fit, func(f *HullFacts, p *Plan) { p.RemainingRatio = 0.005 }, rs, false, "damage"},
		{"caller's larger remainder is ignored", Fit, func(f *HullFacts, p *Plan) {
			f.DamageRatio = fp(0.99)
			p.RemainingRatio = 0.5
			p.PredictedDamageRatio = 0.02
		}, rs, false, "damage"},
		{"damage not assessed", Fit, func(f *HullFacts, _ *Plan) { f.DamageRatio = nil }, rs, false, "damage"},
		{"predicted damage not a number", Fit, func(_ *HullFacts, p *Plan) { p.PredictedDamageRatio = math.NaN() }, rs, false, "plan"},
		{"negative depth", Fit, func(_ *HullFacts, p *Plan) { p.DepthM = -5 }, rs, false, "plan"},
		{"proof test overdue", Fit, func(f *HullFacts, _ *Plan) { f.ProofTests[0].At = t0.Add(-day(1900)) }, rs, false, "proof-test-due"},
		{"no proof test on record", Fit, func(f *HullFacts, _ *Plan) { f.ProofTests = nil }, rs, false, "proof-test-due"},
		{"proof test due soon is go", Fit, func(f *HullFacts, _ *Plan) { f.ProofTests[0].At = t0.Add(-day(1500)) }, rs, true, ""},
		{"inspection overdue by dives", Fit, func(f *HullFacts, _ *Plan) { f.DiveCount = 150 }, rs, false, "inspection-due-by-dives"},
		{"inspection overdue by days", Fit, func(f *HullFacts, _ *Plan) { f.Inspections[0].At = t0.Add(-day(400)) }, rs, false, "inspection-due-by-days"},
		{"no rules", Fit, func(*HullFacts, *Plan) {}, nil, false, "rules"},
		// Collapse: 900 m at latitude 90° is about 9.1 MPa.
		{"well below the collapse fraction", Fit, func(f *HullFacts, _ *Plan) { f.CollapsePressureMPa = 11 }, rs, true, ""},
		{"depth at the collapse fraction", Fit, func(f *HullFacts, _ *Plan) { f.CollapsePressureMPa = 10 }, rs, false, "collapse"},
		{"given pressure beyond the depth's", Fit, func(_ *HullFacts, p *Plan) { p.PressureMPa = 18.5 }, rs, false, "collapse"},
		{"given pressure just below the hold fraction", Fit, func(_ *HullFacts, p *Plan) { p.PressureMPa = 17.99 }, rs, true, ""},
		{"a smaller given pressure does not beat the depth's", Fit, func(f *HullFacts, p *Plan) { f.CollapsePressureMPa, p.PressureMPa = 10, 1 }, rs, false, "collapse"},
		{"collapse pressure not known", Fit, func(f *HullFacts, _ *Plan) { f.CollapsePressureMPa = 0 }, rs, false, "collapse"},
		{"planned pressure negative", Fit, func(_ *HullFacts, p *Plan) { p.PressureMPa = -1 }, rs, false, "plan"},
		{"collapse rule without a hold", Fit, func(*HullFacts, *Plan) {}, &Rules{Rules: withoutCollapseHold(rs)}, false, "collapse"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f, p := goodHull(), plan
			c.mod(&f, &p)
			v := Verdict{State: c.state, Reasons: []Reason{{Kind: "status", State: c.state, Text: "as given"}}}
			got := Clear(v, f, p, c.rules)
			if got.Go != c.want {
				t.Fatalf("go %v, want %v: %+v", got.Go, c.want, got.Reasons)
			}
			if len(got.Reasons) == 0 {
				t.Fatal("no reasons")
			}
			var nogo []string
			for _, r := range got.Reasons {
				if r.NoGo {
					nogo = append(nogo, r.Code)
				}
				if strings.TrimSpace(r.Text) == "" {
					t.Fatalf("reason without words: %+v", r)
				}
			}
			if c.nogoBy != "" && !contains(nogo, c.nogoBy) {
				t.Fatalf("no-go by %v, want %s", nogo, c.nogoBy)
			}
			if c.want && len(nogo) > 0 {
				t.Fatalf("go with no-go reasons %v", nogo)
			}
			if !c.want && !got.Reasons[0].NoGo {
				t.Fatalf("no-go reasons are not listed first: %+v", got.Reasons)
			}
		})
	}
}

func TestClearListsPassedChecks(t *testing.T) {
	got := Clear(Verdict{State: Watch, Reasons: []Reason{{Kind: "flag", State: Watch, Text: "residual 60 µε"}}}, goodHull(),
		Plan{DepthM: 500, BottomTimeMin: 30, PredictedDamageRatio: 0.001}, shipped(t))
	if !got.Go {
		t.Fatalf("watch hull not cleared: %+v", got.Reasons)
	}
	var codes []string
	for _, r := range got.Reasons {
		codes = append(codes, r.Code)
	}
	for _, want := range []string{"status", "plan", "depth", "damage", "collapse", "inspection-due-by-dives", "inspection-due-by-days", "proof-test-due"} {
		if !contains(codes, want) {
			t.Errorf("check %s not listed: %v", want, codes)
		}
	}
	if !strings.Contains(got.Reasons[0].Text, "watch") {
		t.Errorf("status reason %q does not say watch", got.Reasons[0].Text)
	}
}

// TestClearFromStatus runs the whole chain: a dive beyond the rating puts
// the hull on hold and the next dive is not cleared.
func TestClearFromStatus(t *testing.T) {
	rs := shipped(t)
	f := goodHull()
	f.Dives[0].MaxDepthM = 1050
	v := Status(Evaluate(rs, f), nil, Records{Inspections: f.Inspections, ProofTests: f.ProofTests}, f.Now)
	c := Clear(v, f, Plan{DepthM: 100, PredictedDamageRatio: 0.001}, rs)
	if v.State != Hold || c.Go {
		t.Fatalf("state %s, go %v", v.State, c.Go)
	}
	found := false
	for _, r := range c.Reasons {
		found = found || (r.Code == "beyond-rated-depth" && r.NoGo)
	}
	if !found {
		t.Fatalf("the flag is not among the no-go reasons: %+v", c.Reasons)
	}
}

func withoutCollapseHold(rs *Rules) []Rule {
	out := append([]Rule(nil), rs.Rules...)
	for i := range out {
		if out[i].Measure == MeasureCollapseFraction {
			out[i].Hold = nil
		}
	}
	return out
}

// TestClearNamesCollapsePressure: the no-go names the collapse pressure and
// the fraction.
func TestClearNamesCollapsePressure(t *testing.T) {
	f := goodHull()
	c := Clear(Verdict{State: Fit}, f, Plan{DepthM: 500, PressureMPa: 19, PredictedDamageRatio: 0.001}, shipped(t))
	if c.Go || c.Reasons[0].Code != "collapse" {
		t.Fatalf("%+v", c.Reasons)
	}
	for _, want := range []string{"19.000 MPa", "0.95 of the collapse pressure 20.000 MPa", "collapse-fraction"} {
		if !strings.Contains(c.Reasons[0].Text, want) {
			t.Errorf("%q lacks %q", c.Reasons[0].Text, want)
		}
	}
}

// TestClearPredictedDamageInReason: the plan's predicted damage is the
// figure the damage check speaks of, passed or not.
func TestClearPredictedDamageInReason(t *testing.T) {
	rs := shipped(t)
	for _, c := range []struct {
		pred float64
		want string
		nogo bool
	}{
		{0.0123, "predicted damage 0.0123 within what is left of the allowable, 0.8", false},
		{0.8123, "predicted damage 0.8123 exceeds what is left of the allowable, 0.8", true},
	} {
		got := Clear(Verdict{State: Fit}, goodHull(), Plan{DepthM: 500, PredictedDamageRatio: c.pred}, rs)
		found := false
		for _, r := range got.Reasons {
			if r.Code == "damage" {
				found = true
				if !strings.Contains(r.Text, c.want) || r.NoGo != c.nogo {
					t.Errorf("damage reason %q (no-go %v), want %q (no-go %v)", r.Text, r.NoGo, c.want, c.nogo)
				}
			}
		}
		if !found || got.Go == c.nogo {
			t.Errorf("prediction %v: go %v, reasons %+v", c.pred, got.Go, got.Reasons)
		}
	}
}
