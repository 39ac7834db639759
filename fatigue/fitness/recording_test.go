package fitness

import (
	"strings"
	"testing"
	"time"
)

// TestLateRecordedDiveWithClockBehindStaysOnHold is the adversarial case of
// the recording order: a dive beyond the rated depth whose logger clock is
// years behind, so that it looks older than the last passing inspection and
// return to service, but that the ledger recorded after both. It must leave
// the hull on hold and Clear must say no-go.
func TestLateRecordedDiveWithClockBehindStaysOnHold(t *testing.T) {
	rs := shipped(t)
	f := goodHull()
	f.Inspections = []Inspection{{At: t0.Add(-day(10)), RecordedAt: t0.Add(-day(10)).Add(time.Hour), Method: "ultrasonic",
		Result: ResultPass, Actor: "I. Nspector", DiveCount: 110}}
	rts := Decision{At: t0.Add(-day(9)), RecordedAt: t0.Add(-day(9)), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "inspection passed"}
	deep := goodDive("deep", t0.Add(-day(3*365))) // logger clock three years behind
	deep.MaxDepthM = 1200
	deep.RecordedAt = t0.Add(-time.Hour) // recorded after the inspection and the decision
	f.Dives = []DiveFacts{deep}

	flags := Evaluate(rs, f)
	got := flagsOf(flags, "beyond-rated-depth")
	if len(got) != 1 || got[0].Level != LevelHold || !got[0].At.Equal(deep.Start) || !got[0].RecordedAt.Equal(deep.RecordedAt) {
		t.Fatalf("depth flag %+v", got)
	}
	records := Records{Inspections: f.Inspections, ProofTests: f.ProofTests}
	v := Status(flags, []Decision{rts}, records, f.Now)
	if v.State != Hold {
		t.Fatalf("state %s, want hold: the inspection was recorded before the dive\n%s", v.State, v)
	}
	c := Clear(v, f, Plan{DepthM: 100, PredictedDamageRatio: 0.001}, rs)
	if c.Go {
		t.Fatalf("cleared: %+v", c.Reasons)
	}
	found := false
	for _, r := range c.Reasons {
		found = found || (r.Code == "beyond-rated-depth" && r.NoGo)
	}
	if !found {
		t.Fatalf("the depth flag is not a no-go reason: %+v", c.Reasons)
	}
	// It counts as a dive since the inspection, though its clock says
	// otherwise: the hull count is stale (110 at the inspection and now).
	if n := flagsOf(Evaluate(rs, f), "inspection-due-by-dives"); len(n) != 0 {
		t.Fatalf("one dive should not trip: %v", n)
	}
	if m := sinceValue(MeasureDivesSinceInspection, f, f.Dives, "inspection", f.Inspections[0].At, f.Inspections[0].RecordedAt, 110, true); m.v != 1 {
		t.Fatalf("dives since the inspection %v, want 1", m.v)
	}

	// A new inspection recorded after the dive, then a later decision,
	// clears it.
	records.Inspections = append(records.Inspections, Inspection{At: t0.Add(-30 * time.Minute), RecordedAt: t0.Add(-25 * time.Minute),
		Result: ResultPass, Actor: "I. Nspector", Method: "ultrasonic"})
	later := Decision{At: t0.Add(-10 * time.Minute), RecordedAt: t0.Add(-10 * time.Minute), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "deep dive reviewed"}
	if v := Status(flags, []Decision{rts, later}, records, f.Now); v.State != Fit {
		t.Fatalf("state %s after a later inspection and decision\n%s", v.State, v)
	}
	// A decision recorded before that inspection was recorded does not.
	early := Decision{At: t0.Add(-10 * time.Minute), RecordedAt: t0.Add(-28 * time.Minute), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "in a hurry"}
	if v := Status(flags, []Decision{rts, early}, records, f.Now); v.State != Hold {
		t.Fatalf("state %s with a decision recorded before the pass\n%s", v.State, v)
	}
}

// TestBackdatedInspectionDoesNotClear: an inspection recorded after a dive
// but dated before it did not look at the hull after that dive.
func TestBackdatedInspectionDoesNotClear(t *testing.T) {
	rs := shipped(t)
	f := goodHull()
	deep := goodDive("deep", t0.Add(-day(2)))
	deep.MaxDepthM = 1100
	f.Dives = []DiveFacts{deep}
	flags := Evaluate(rs, f)
	recs := Records{Inspections: []Inspection{{At: t0.Add(-day(3)), RecordedAt: t0.Add(-time.Hour), Result: ResultPass, Actor: "I. Nspector"}}}
	d := Decision{At: t0.Add(-30 * time.Minute), RecordedAt: t0.Add(-30 * time.Minute), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "paperwork"}
	if v := Status(flags, []Decision{d}, recs, f.Now); v.State != Hold {
		t.Fatalf("state %s\n%s", v.State, v)
	}
}

func TestStatusRecordingOrder(t *testing.T) {
	flag := func(lvl Level, at, rec int) Flag {
		return Flag{Rule: "r", Title: "t", Level: lvl, Value: 2, Threshold: 1, When: Above, At: hour(at), RecordedAt: hour(rec)}
	}
	pass := func(at, rec int) Inspection {
		return Inspection{At: hour(at), RecordedAt: hour(rec), Result: ResultPass, Actor: "I. Nspector"}
	}
	rts := func(at, rec int) Decision {
		return Decision{At: hour(at), RecordedAt: hour(rec), Kind: ReturnToService, Actor: "M. Aintainer", Reason: "checked"}
	}
	now := hour(100)
	cases := []struct {
		name      string
		flags     []Flag
		decisions []Decision
		records   Records
		want      State
	}{
		{"hold cleared in both orders", []Flag{flag(LevelHold, 1, 2)}, []Decision{rts(5, 6)}, Records{Inspections: []Inspection{pass(3, 4)}}, Fit},
		{"hold recorded after the pass", []Flag{flag(LevelHold, 1, 10)}, []Decision{rts(5, 11)}, Records{Inspections: []Inspection{pass(3, 4)}}, Hold},
		{"hold recorded at the same time as the pass", []Flag{flag(LevelHold, 1, 4)}, []Decision{rts(5, 6)}, Records{Inspections: []Inspection{pass(3, 4)}}, Hold},
		{"decision recorded before the pass", []Flag{flag(LevelHold, 1, 2)}, []Decision{rts(5, 3)}, Records{Inspections: []Inspection{pass(3, 4)}}, Hold},
		{"decision dated before the pass", []Flag{flag(LevelHold, 1, 2)}, []Decision{rts(2, 6)}, Records{Inspections: []Inspection{pass(3, 4)}}, Hold},
		{"pass recorded after now", []Flag{flag(LevelHold, 1, 2)}, []Decision{rts(5, 6)}, Records{Inspections: []Inspection{pass(3, 101)}}, Hold},
		{"decision recorded after now", []Flag{flag(LevelHold, 1, 2)}, []Decision{rts(5, 101)}, Records{Inspections: []Inspection{pass(3, 4)}}, Hold},
		{"watch recorded after the pass", []Flag{flag(LevelWatch, 1, 10)}, nil, Records{Inspections: []Inspection{pass(3, 4)}}, Watch},
		{"watch cleared in both orders", []Flag{flag(LevelWatch, 1, 2)}, nil, Records{Inspections: []Inspection{pass(3, 4)}}, Fit},
		{"no recording time: the event time stands in", []Flag{{Rule: "r", Title: "t", Level: LevelHold, At: hour(1)}}, []Decision{rts(5, 6)}, Records{Inspections: []Inspection{pass(3, 4)}}, Fit},
		{"proof test recorded after the flag clears", []Flag{flag(LevelHold, 1, 2)}, []Decision{rts(5, 6)}, Records{ProofTests: []ProofTest{{At: hour(3), RecordedAt: hour(4), Result: ResultPass, Actor: "P. Roof"}}}, Fit},
		{"proof test recorded before the flag does not", []Flag{flag(LevelHold, 1, 5)}, []Decision{rts(6, 7)}, Records{ProofTests: []ProofTest{{At: hour(3), RecordedAt: hour(4), Result: ResultPass, Actor: "P. Roof"}}}, Hold},
		{"failed inspection recorded after the pass stays", nil, []Decision{rts(5, 6)}, Records{Inspections: []Inspection{{At: hour(1), RecordedAt: hour(7), Result: ResultFail}, pass(3, 4)}}, Hold},
		{"backdated withdrawal after a return stands", nil, []Decision{rts(2, 2), {At: hour(1), RecordedAt: hour(3), Kind: Withdraw, Actor: "C. Hief", Reason: "found late"}}, Records{}, Withdrawn},
		{"withdrawal lifted in both orders", nil, []Decision{{At: hour(1), RecordedAt: hour(1), Kind: Withdraw, Actor: "C. Hief", Reason: "r"}, rts(2, 2)}, Records{}, Fit},
		{"an earlier withdrawal not lifted stands under a later lifted one", nil, []Decision{
			{At: hour(5), RecordedAt: hour(5), Kind: Withdraw, Actor: "C. Hief", Reason: "a"}, rts(6, 6),
			{At: hour(4), RecordedAt: hour(7), Kind: Withdraw, Actor: "C. Hief", Reason: "b"}}, Records{}, Withdrawn},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			v := Status(c.flags, c.decisions, c.records, now)
			if v.State != c.want {
				t.Fatalf("state %s, want %s\n%s", v.State, c.want, v)
			}
		})
	}
}

// TestFlagsInRecordingOrder: within a rule, flags follow the order the
// ledger recorded the dives, not the logger clocks; hull-level flags are
// recorded now.
func TestFlagsInRecordingOrder(t *testing.T) {
	f := goodHull()
	a := goodDive("a", t0.Add(-day(1)))
	a.RecordedAt = t0.Add(-2 * time.Hour)
	b := goodDive("b", t0.Add(-day(700))) // clock behind, recorded last
	b.RecordedAt = t0.Add(-time.Hour)
	a.MaxDepthM, b.MaxDepthM = 1100, 1200
	f.Dives = []DiveFacts{b, a}
	f.DamageRatio = fp(0.6)
	fs := Evaluate(shipped(t), f)
	got := flagsOf(fs, "beyond-rated-depth")
	if len(got) != 2 || got[0].Dive != "a" || got[1].Dive != "b" || !got[1].RecordedAt.Equal(b.RecordedAt) {
		t.Fatalf("order %+v", got)
	}
	h := flagsOf(fs, "damage-against-allowable")
	if len(h) != 1 || !h[0].RecordedAt.Equal(t0) || !h[0].At.Equal(t0) {
		t.Fatalf("hull flag %+v", h)
	}
}

// TestDivesSinceInspectionByRecording: dives whose clocks put them before
// the inspection but that were recorded after it count, even when the
// hull's dive count is stale.
func TestDivesSinceInspectionByRecording(t *testing.T) {
	f := goodHull()
	f.DiveCount = 100
	f.Inspections[0].RecordedAt = f.Inspections[0].At
	f.Dives = nil
	for i := range 50 {
		d := goodDive("x", t0.Add(-day(400)).Add(time.Duration(i)*time.Hour))
		d.RecordedAt = t0.Add(-day(5)).Add(time.Duration(i) * time.Minute)
		f.Dives = append(f.Dives, d)
	}
	got := flagsOf(Evaluate(shipped(t), f), "inspection-due-by-dives")
	if len(got) != 1 || got[0].Level != LevelHold || got[0].Value != 50 {
		t.Fatalf("%v", got)
	}
	if !strings.Contains(got[0].Detail, "last passing inspection") {
		t.Fatalf("detail %q", got[0].Detail)
	}
}
