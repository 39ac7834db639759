package fitness

import (
	"fmt"
	"sort"
	"strings"
	"time"
)

// Result is the outcome of an inspection or a proof test. Only ResultPass
// clears anything; any other value, including an empty or unknown one,
// does not.
type Result string

// The results an inspection or proof test may record.
const (
	// ResultPass: the hull passed; the record can clear flags raised
	// before it.
	ResultPass Result = "pass"
	// ResultFail: the hull failed; the record puts the hull on hold until
	// a later passing inspection or proof test and a later decision to
	// return to service.
	ResultFail Result = "fail"
	// ResultIncomplete: the inspection or test was not finished; it
	// neither clears nor condemns, and puts the hull on watch until a later
	// passing record.
	ResultIncomplete Result = "incomplete"
)

// Inspection is a recorded inspection of the hull.
type Inspection struct {
	// At is when the inspection was made.
	At time.Time
	// Method says how (visual, ultrasonic, tap test, …).
	Method string
	// Result is the outcome.
	Result Result
	// Findings are the inspector's words.
	Findings string
	// Actor is who inspected.
	Actor string
	// DiveCount is the hull's dive count when it was inspected.
	DiveCount int
	// RecordedAt is when the ledger recorded the inspection; zero means
	// not known, and At stands in for it.
	RecordedAt time.Time
}

// ProofTest is a recorded proof test of the hull.
type ProofTest struct {
	// At is when the test was made.
	At time.Time
	// PressureMPa is the test pressure (gauge), MPa.
	PressureMPa float64
	// Result is the outcome.
	Result Result
	// Actor is who ran or witnessed the test.
	Actor string
	// DiveCount is the hull's dive count when it was tested.
	DiveCount int
	// RecordedAt is when the ledger recorded the proof test; zero means
	// not known, and At stands in for it.
	RecordedAt time.Time
}

// Records are a hull's inspections and proof tests.
type Records struct {
	// Inspections are the hull's recorded inspections, in any order.
	Inspections []Inspection
	// ProofTests are the hull's recorded proof tests, in any order.
	ProofTests []ProofTest
}

// DecisionKind is what a maintenance decision decides.
type DecisionKind string

// The decisions Status understands.
const (
	// ReturnToService returns the hull to service: it clears holds that a
	// passing inspection or proof test before it (and after the flag)
	// supports, and lifts a withdrawal before it.
	ReturnToService DecisionKind = "return_to_service"
	// Withdraw withdraws the hull from service until a later decision to
	// return it.
	Withdraw DecisionKind = "withdraw"
)

// Decision is a recorded maintenance decision about the hull.
type Decision struct {
	// At is when the decision was made.
	At time.Time
	// Kind is what was decided.
	Kind DecisionKind
	// Actor is the named person who decided.
	Actor string
	// Reason is why, in their words.
	Reason string
	// RecordedAt is when the ledger recorded the decision; zero means not
	// known, and At stands in for it.
	RecordedAt time.Time
}

// State is a hull's fitness status.
type State string

// The four states, from the best to the worst.
const (
	// Fit: no open flag.
	Fit State = "fit"
	// Watch: open watch flags, no open hold.
	Watch State = "watch"
	// Hold: at least one open hold; the hull does not dive.
	Hold State = "hold"
	// Withdrawn: withdrawn from service by a recorded decision.
	Withdrawn State = "withdrawn"
)

// Reason is one reason behind a status or a clearance, in words.
type Reason struct {
	// Kind says where the reason comes from: "flag", "decision",
	// "inspection", "proof test", "status" or "check".
	Kind string
	// Code is the rule id for a flag, the check name for a clearance
	// reason, "" otherwise.
	Code string
	// State is the state the reason stands for: Fit for an informational
	// reason (a closed flag, a passed check).
	State State
	// NoGo is true when the reason stops the planned dive (Clear only).
	NoGo bool
	// Text says the reason in words.
	Text string
	// At is when the flag, record or decision happened, if it has a time.
	At time.Time
}

// Verdict is a hull's status with every reason.
type Verdict struct {
	// State is fit, watch, hold or withdrawn.
	State State
	// Reasons lists the withdrawal first, then the open holds, the open
	// watches and the informational reasons.
	Reasons []Reason
}

// String says the status and its reasons, one a line.
func (v Verdict) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "status: %s", v.State)
	for _, r := range v.Reasons {
		fmt.Fprintf(&b, "\n- [%s] %s", r.State, r.Text)
	}
	return b.String()
}

// stamp is when something happened and when the ledger learned of it.
type stamp struct{ at, rec time.Time }

func stampOf(at, rec time.Time) stamp { return stamp{at, recorded(at, rec)} }

// after reports whether s is later than o both in time and in recording:
// a record backdated before a flag, or a flag whose clock is behind but
// that was recorded later, is not "after".
func (s stamp) after(o stamp) bool { return s.at.After(o.at) && s.rec.After(o.rec) }

// Status gives the hull's state from its flags (every flag raised since the
// last clearing event: the output of Evaluate, plus flags stored earlier),
// its recorded decisions, inspections and proof tests, at time now:
//
//   - a watch flag stays open until a passing inspection or proof test
//     later than the flag;
//   - a hold flag stays open until both a passing inspection or proof test
//     later than the flag and, later than that record, a decision to
//     return to service by a named person with a reason; later dives that
//     look fine change nothing;
//   - a failed inspection or proof test counts as a hold raised at its
//     time, an incomplete one as a watch, one with any other result as a
//     hold (the result is doubtful);
//   - withdrawn holds from a decision to withdraw until a later decision to
//     return to service; open flags are listed with it.
//
// "Later" is in both orders: by the time of the event (At) and by the
// time the ledger recorded it (RecordedAt, or At when not known). A dive
// whose logger clock is behind but that the ledger recorded after an
// inspection is not cleared by it; an inspection backdated before a dive
// already recorded does not clear the dive either.
//
// Then: withdrawn if withdrawn, else hold if any hold is open, else watch
// if any watch is open, else fit. Records and decisions dated or recorded
// after now, or without a time, clear nothing; a flag without a time is
// never cleared. A return-to-service decision without a named person or a
// reason is ignored (and said so).
func Status(flags []Flag, decisions []Decision, records Records, now time.Time) Verdict {
	var withdrawals, holds, watches, info []Reason

	// Passing records that may clear, and the valid returns to service.
	var passes []stamp
	add := func(kind string, at, rec time.Time, res Result, text string) {
		st := stampOf(at, rec)
		switch {
		case res == ResultPass && !at.IsZero() && !at.After(now) && !st.rec.After(now):
			passes = append(passes, st)
		case res == ResultPass:
			info = append(info, Reason{Kind: kind, State: Fit, At: at,
				Text: fmt.Sprintf("%s ignored for clearing: dated %s, recorded %s, not before now", text, when(at), when(st.rec))})
		}
	}
	for _, in := range records.Inspections {
		add("inspection", in.At, in.RecordedAt, in.Result, "passing inspection by "+nameOr(in.Actor))
	}
	for _, p := range records.ProofTests {
		add("proof test", p.At, p.RecordedAt, p.Result, "passing proof test by "+nameOr(p.Actor))
	}
	sort.Slice(passes, func(i, j int) bool { return passes[i].at.Before(passes[j].at) })

	var rts []Decision
	ds := append([]Decision(nil), decisions...)
	sort.SliceStable(ds, func(i, j int) bool { return ds[i].At.Before(ds[j].At) })
	for _, d := range ds {
		switch d.Kind {
		case ReturnToService:
			if problem := rtsProblem(d, now); problem != "" {
				info = append(info, Reason{Kind: "decision", State: Fit, At: d.At,
					Text: fmt.Sprintf("decision to return to service on %s ignored: %s", when(d.At), problem)})
				continue
			}
			rts = append(rts, d)
		case Withdraw:
		default:
			info = append(info, Reason{Kind: "decision", State: Fit, At: d.At,
				Text: fmt.Sprintf("decision %q on %s by %s ignored: unknown kind", d.Kind, when(d.At), nameOr(d.Actor))})
		}
	}
	rtsAfter := func(s stamp) (Decision, bool) {
		for _, d := range rts {
			if stampOf(d.At, d.RecordedAt).after(s) {
				return d, true
			}
		}
		return Decision{}, false
	}
	// passAfter returns the first passing record later than s, and for a
	// hold the first one followed by a return to service, with that
	// decision.
	passAfter := func(s stamp, needDecision bool) (stamp, Decision, bool) {
		if s.at.IsZero() {
			return stamp{}, Decision{}, false
		}
		for _, p := range passes {
			if !p.after(s) {
				continue
			}
			if !needDecision {
				return p, Decision{}, true
			}
			if d, ok := rtsAfter(p); ok {
				return p, d, true
			}
		}
		return stamp{}, Decision{}, false
	}

	for _, f := range flags {
		hold := f.Level != LevelWatch // an unknown level counts as hold
		text := f.String()
		if p, d, ok := passAfter(stampOf(f.At, f.RecordedAt), hold); ok {
			closed := fmt.Sprintf("closed by the passing record of %s", when(p.at))
			if hold {
				closed += fmt.Sprintf(" and the return to service by %s on %s (%s)", d.Actor, when(d.At), d.Reason)
			}
			info = append(info, Reason{Kind: "flag", Code: f.Rule, State: Fit, At: f.At, Text: closed + ": " + text})
			continue
		}
		r := Reason{Kind: "flag", Code: f.Rule, State: Watch, At: f.At, Text: text}
		if hold {
			r.State = Hold
			if f.At.IsZero() {
				r.Text += " (the flag has no time: it cannot be cleared)"
			}
			holds = append(holds, r)
		} else {
			watches = append(watches, r)
		}
	}

	// Records that did not pass.
	notPassed := func(kind string, at, rec time.Time, res Result, actor, what string) {
		if res == ResultPass {
			return
		}
		level, text := Hold, fmt.Sprintf("%s on %s by %s %s", kind, when(at), nameOr(actor), describe(res))
		if res == ResultIncomplete {
			level = Watch
		}
		if p, _, ok := passAfter(stampOf(at, rec), level == Hold); ok {
			info = append(info, Reason{Kind: kind, State: Fit, At: at,
				Text: fmt.Sprintf("closed by the passing record of %s: %s", when(p.at), text)})
			return
		}
		if what != "" {
			text += ": " + what
		}
		r := Reason{Kind: kind, State: level, At: at, Text: text}
		if level == Hold {
			holds = append(holds, r)
		} else {
			watches = append(watches, r)
		}
	}
	for _, in := range records.Inspections {
		notPassed("inspection", in.At, in.RecordedAt, in.Result, in.Actor, in.Findings)
	}
	for _, p := range records.ProofTests {
		notPassed("proof test", p.At, p.RecordedAt, p.Result, p.Actor, fmt.Sprintf("at %g MPa", p.PressureMPa))
	}

	// Withdrawal: every decision to withdraw stands unless a valid return
	// to service is later in both orders (a withdrawal backdated before a
	// return already recorded still stands).
	for i := len(ds) - 1; i >= 0; i-- {
		d := ds[i]
		if d.Kind != Withdraw {
			continue
		}
		text := fmt.Sprintf("withdrawn from service on %s by %s: %s", when(d.At), nameOr(d.Actor), orNone(d.Reason))
		if back, ok := rtsAfter(stampOf(d.At, d.RecordedAt)); ok {
			info = append(info, Reason{Kind: "decision", State: Fit, At: d.At,
				Text: fmt.Sprintf("%s; returned to service on %s by %s: %s", text, when(back.At), back.Actor, back.Reason)})
		} else {
			withdrawals = append(withdrawals, Reason{Kind: "decision", State: Withdrawn, At: d.At, Text: text})
		}
	}
	for _, d := range rts {
		info = append(info, Reason{Kind: "decision", State: Fit, At: d.At,
			Text: fmt.Sprintf("returned to service on %s by %s: %s", when(d.At), d.Actor, d.Reason)})
	}

	v := Verdict{State: Fit}
	switch {
	case len(withdrawals) > 0:
		v.State = Withdrawn
	case len(holds) > 0:
		v.State = Hold
	case len(watches) > 0:
		v.State = Watch
	default:
		info = append([]Reason{{Kind: "status", State: Fit, Text: "no open flag"}}, info...)
	}
	v.Reasons = append(append(append(append(v.Reasons, withdrawals...), holds...), watches...), info...)
	return v
}

func rtsProblem(d Decision, now time.Time) string {
	switch {
	case strings.TrimSpace(d.Actor) == "":
		return "no named person"
	case strings.TrimSpace(d.Reason) == "":
		return "no reason given"
	case d.At.IsZero():
		return "no time"
	case d.At.After(now):
		return "dated after now"
	case d.RecordedAt.After(now):
		return "recorded after now"
	}
	return ""
}

func describe(r Result) string {
	switch r {
	case ResultFail:
		return "failed"
	case ResultIncomplete:
		return "was not completed"
	case "":
		return "has no recorded result (taken as a failure)"
	}
	return fmt.Sprintf("has result %q (not a pass; taken as a failure)", string(r))
}

func when(t time.Time) string {
	if t.IsZero() {
		return "an unknown date"
	}
	return t.UTC().Format("2006-01-02 15:04 UTC")
}

func nameOr(s string) string {
	if strings.TrimSpace(s) == "" {
		return "an unnamed person"
	}
	return s
}

func orNone(s string) string {
	if strings.TrimSpace(s) == "" {
		return "no reason given"
	}
	return s
}

// lastPassingInspection returns the latest passing inspection dated and
// recorded no later than now.
func lastPassingInspection(ins []Inspection, now time.Time) (Inspection, bool) {
	var best Inspection
	found := false
	for _, in := range ins {
		if in.Result != ResultPass || in.At.IsZero() || in.At.After(now) || in.RecordedAt.After(now) {
			continue
		}
		if !found || in.At.After(best.At) {
			best, found = in, true
		}
	}
	return best, found
}

// lastPassingProofTest returns the latest passing proof test dated and
// recorded no later than now.
func lastPassingProofTest(ps []ProofTest, now time.Time) (ProofTest, bool) {
	var best ProofTest
	found := false
	for _, p := range ps {
		if p.Result != ResultPass || p.At.IsZero() || p.At.After(now) || p.RecordedAt.After(now) {
			continue
		}
		if !found || p.At.After(best.At) {
			best, found = p, true
		}
	}
	return best, found
}
