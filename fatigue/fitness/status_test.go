package fitness

import (
	"strings"
	"testing"
	"time"
)

func hour(n int) time.Time { return t0.Add(time.Duration(n) * time.Hour) }

func TestStatusTable(t *testing.T) {
	holdAt := func(h int) Flag {
		return Flag{Rule: "beyond-rated-depth", Title: "deep", Level: LevelHold, Value: 1.2, Threshold: 1, When: Above, Dive: "d", At: hour(h)}
	}
	watchAt := func(h int) Flag {
		return Flag{Rule: "residual-strain", Title: "residual", Level: LevelWatch, Value: 60, Threshold: 50, When: AtOrAbove, Dive: "d", At: hour(h)}
	}
	pass := func(h int) Inspection {
		return Inspection{At: hour(h), Method: "ultrasonic", Result: ResultPass, Actor: "I. Nspector"}
	}
	fail := func(h int) Inspection {
		return Inspection{At: hour(h), Method: "ultrasonic", Result: ResultFail, Actor: "I. Nspector", Findings: "delamination at the end ring"}
	}
	rts := func(h int) Decision {
		return Decision{At: hour(h), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "inspection found no damage"}
	}
	withdraw := func(h int) Decision {
		return Decision{At: hour(h), Kind: Withdraw, Actor: "M. Aintainer", Reason: "end of life"}
	}
	now := hour(100)

	cases := []struct {
		name      string
		flags     []Flag
		decisions []Decision
		records   Records
		want      State
	}{
		{"no flag: fit", nil, nil, Records{}, Fit},
		{"watch flag", []Flag{watchAt(1)}, nil, Records{}, Watch},
		{"hold flag", []Flag{holdAt(1)}, nil, Records{}, Hold},
		{"hold beats watch", []Flag{watchAt(1), holdAt(2)}, nil, Records{}, Hold},
		{"watch cleared by a later passing inspection", []Flag{watchAt(1)}, nil, Records{Inspections: []Inspection{pass(2)}}, Fit},
		{"watch not cleared by an earlier inspection", []Flag{watchAt(3)}, nil, Records{Inspections: []Inspection{pass(2)}}, Watch},
		{"watch not cleared by a failed inspection", []Flag{watchAt(1)}, []Decision{rts(3)}, Records{Inspections: []Inspection{fail(2)}}, Hold},
		{"hold: inspection alone does not clear", []Flag{holdAt(1)}, nil, Records{Inspections: []Inspection{pass(2)}}, Hold},
		{"hold: decision alone does not clear", []Flag{holdAt(1)}, []Decision{rts(2)}, Records{}, Hold},
		{"hold: decision before the inspection", []Flag{holdAt(1)}, []Decision{rts(2)}, Records{Inspections: []Inspection{pass(3)}}, Hold},
		{"hold: inspection before the flag", []Flag{holdAt(2)}, []Decision{rts(3)}, Records{Inspections: []Inspection{pass(1)}}, Hold},
		{"hold: same-time inspection is not later", []Flag{holdAt(2)}, []Decision{rts(3)}, Records{Inspections: []Inspection{pass(2)}}, Hold},
		{"hold cleared by inspection then decision", []Flag{holdAt(1)}, []Decision{rts(3)}, Records{Inspections: []Inspection{pass(2)}}, Fit},
		{"hold cleared by proof test then decision", []Flag{holdAt(1)}, []Decision{rts(3)}, Records{ProofTests: []ProofTest{{At: hour(2), PressureMPa: 12, Result: ResultPass, Actor: "P. Roof"}}}, Fit},
		{"hold: failed inspection never clears", []Flag{holdAt(1)}, []Decision{rts(3)}, Records{Inspections: []Inspection{fail(2)}}, Hold},
		{"hold: failed proof test never clears", []Flag{holdAt(1)}, []Decision{rts(3)}, Records{ProofTests: []ProofTest{{At: hour(2), Result: ResultFail}}}, Hold},
		{"hold: decision without a name", []Flag{holdAt(1)}, []Decision{{At: hour(3), Kind: ReturnToService, Reason: "fine"}}, Records{Inspections: []Inspection{pass(2)}}, Hold},
		{"hold: decision without a reason", []Flag{holdAt(1)}, []Decision{{At: hour(3), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "  "}}, Records{Inspections: []Inspection{pass(2)}}, Hold},
		{"hold: decision dated after now", []Flag{holdAt(1)}, []Decision{rts(101)}, Records{Inspections: []Inspection{pass(2)}}, Hold},
		{"hold: inspection dated after now", []Flag{holdAt(1)}, []Decision{rts(102)}, Records{Inspections: []Inspection{pass(101)}}, Hold},
		{"hold: a flag without a time is never cleared", []Flag{{Rule: "x", Title: "undated", Level: LevelHold}}, []Decision{rts(3)}, Records{Inspections: []Inspection{pass(2)}}, Hold},
		{"an unknown flag level counts as hold", []Flag{{Rule: "x", Title: "odd", Level: "amber", At: hour(1)}}, nil, Records{Inspections: []Inspection{pass(2)}}, Hold},
		{"hold: a second hold after the clearing stays", []Flag{holdAt(1), holdAt(4)}, []Decision{rts(3)}, Records{Inspections: []Inspection{pass(2)}}, Hold},
		{"failed inspection holds by itself", nil, nil, Records{Inspections: []Inspection{fail(2)}}, Hold},
		{"failed inspection cleared by a later pass and decision", nil, []Decision{rts(4)}, Records{Inspections: []Inspection{fail(2), pass(3)}}, Fit},
		{"incomplete inspection is a watch", nil, nil, Records{Inspections: []Inspection{{At: hour(2), Result: ResultIncomplete}}}, Watch},
		{"incomplete inspection closed by a later pass", nil, nil, Records{Inspections: []Inspection{{At: hour(2), Result: ResultIncomplete}, pass(3)}}, Fit},
		{"unknown result is taken as a failure", nil, nil, Records{ProofTests: []ProofTest{{At: hour(2), Result: "looked ok"}}}, Hold},
		{"withdrawn", nil, []Decision{withdraw(1)}, Records{}, Withdrawn},
		{"withdrawn beats hold", []Flag{holdAt(1)}, []Decision{withdraw(2)}, Records{}, Withdrawn},
		{"withdrawn then returned", nil, []Decision{withdraw(1), rts(2)}, Records{}, Fit},
		{"returned then withdrawn", nil, []Decision{rts(1), withdraw(2)}, Records{}, Withdrawn},
		{"withdrawn, returned without a name", nil, []Decision{withdraw(1), {At: hour(2), Kind: ReturnToService, Reason: "x"}}, Records{}, Withdrawn},
		{"withdrawn without a name still withdraws", nil, []Decision{{At: hour(1), Kind: Withdraw}}, Records{}, Withdrawn},
		{"returned from withdrawal with an open hold", []Flag{holdAt(1)}, []Decision{withdraw(2), rts(3)}, Records{}, Hold},
		{"unknown decision kind is ignored", []Flag{holdAt(1)}, []Decision{{At: hour(3), Kind: "shrug", Actor: "X", Reason: "y"}}, Records{Inspections: []Inspection{pass(2)}}, Hold},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			v := Status(c.flags, c.decisions, c.records, now)
			if v.State != c.want {
				t.Fatalf("state %s, want %s\n%s", v.State, c.want, v)
			}
			if len(v.Reasons) == 0 {
				t.Fatal("no reasons")
			}
			if c.want != Fit && v.Reasons[0].State != c.want {
				t.Fatalf("first reason %+v does not say %s", v.Reasons[0], c.want)
			}
			for _, r := range v.Reasons {
				if strings.TrimSpace(r.Text) == "" {
					t.Fatalf("reason without words: %+v", r)
				}
			}
		})
	}
}

// TestStatusTransitions follows one hull through its dives: fit, watch,
// hold, a fine dive that does not clear the hold, an inspection that alone
// does not clear it, and the decision that does.
func TestStatusTransitions(t *testing.T) {
	rs := shipped(t)
	f := goodHull()
	now := t0
	step := func(name string, want State, d []Decision, recs Records) Verdict {
		t.Helper()
		f.Now = now
		f.Inspections, f.ProofTests = recs.Inspections, recs.ProofTests
		v := Status(Evaluate(rs, f), d, recs, now)
		if v.State != want {
			t.Fatalf("%s: state %s, want %s\n%s", name, v.State, want, v)
		}
		return v
	}
	recs := Records{Inspections: f.Inspections, ProofTests: f.ProofTests}
	step("good hull", Fit, nil, recs)

	now = t0.Add(day(1))
	d2 := goodDive("d2", t0.Add(day(0.5)))
	d2.ResidualStrain = map[string]float64{"g1": 60, "g2": 1}
	f.Dives = append(f.Dives, d2)
	step("residual strain", Watch, nil, recs)

	now = t0.Add(day(2))
	d3 := goodDive("d3", t0.Add(day(1.5)))
	d3.FelicityRatio = fp(0.9)
	f.Dives = append(f.Dives, d3)
	step("Felicity ratio", Hold, nil, recs)

	now = t0.Add(day(3))
	f.Dives = append(f.Dives, goodDive("d4", t0.Add(day(2.5))))
	step("a fine dive after the hold", Hold, nil, recs)

	now = t0.Add(day(5))
	recs.Inspections = append(recs.Inspections, Inspection{At: t0.Add(day(4)), Method: "ultrasonic", Result: ResultFail, Actor: "I. Nspector", Findings: "indication near the hatch seat", DiveCount: 110})
	rtsEarly := Decision{At: t0.Add(day(4.5)), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "pressure from the schedule"}
	v := step("failed inspection and a decision", Hold, []Decision{rtsEarly}, recs)
	if !strings.Contains(v.String(), "failed") {
		t.Fatalf("failed inspection not in the reasons:\n%s", v)
	}

	now = t0.Add(day(7))
	recs.Inspections = append(recs.Inspections, Inspection{At: t0.Add(day(6)), Method: "ultrasonic", Result: ResultPass, Actor: "I. Nspector", Findings: "indication was a surface scratch", DiveCount: 110})
	step("passing inspection alone", Hold, []Decision{rtsEarly}, recs)

	rts := Decision{At: t0.Add(day(6.5)), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "re-inspection passed; Felicity dive reviewed"}
	v = step("return to service", Fit, []Decision{rtsEarly, rts}, recs)
	if !strings.Contains(v.String(), "M. Aintainer") || !strings.Contains(v.String(), "closed") {
		t.Fatalf("the clearing is not in the reasons:\n%s", v)
	}

	wd := Decision{At: t0.Add(day(6.8)), Kind: Withdraw, Actor: "C. Hief", Reason: "annual overhaul"}
	step("withdrawn", Withdrawn, []Decision{rtsEarly, rts, wd}, recs)
	back := Decision{At: t0.Add(day(6.9)), Kind: ReturnToService, Actor: "C. Hief", Reason: "overhaul complete"}
	step("returned", Fit, []Decision{rtsEarly, rts, wd, back}, recs)
}
