package fitness

import (
	"time"
)

// StableUntil says how long the verdict of Evaluate and Status on these
// facts and decisions holds as time passes with nothing new recorded. The
// verdict can change with the time alone in three ways: a record, dive or
// decision dated or recorded after f.Now comes into force; a days-since
// rule (days since the last passing inspection or proof test) crosses one
// of its levels; a days-since flag already raised carries a value that
// grows. The first two give a moment; the third gives none (the verdict
// holds only at f.Now).
//
// It returns bounded false when nothing in the facts depends on the time
// (the verdict holds until the facts change), else the first moment at
// which the verdict may differ: a derived copy of the verdict holds for
// times before it and must be evaluated afresh at or after it. A moment at
// or before f.Now means the verdict holds at f.Now only. When f.Now is not
// known the verdict is never stable. The moments are conservative: a level
// crossing is taken a millisecond early.
func StableUntil(r *Rules, f HullFacts, decisions []Decision) (until time.Time, bounded bool) {
	if f.Now.IsZero() {
		return time.Time{}, true
	}
	earliest := func(t time.Time) {
		if !bounded || t.Before(until) {
			until, bounded = t, true
		}
	}
	later := func(ts ...time.Time) {
		for _, t := range ts {
			if t.After(f.Now) {
				earliest(t)
			}
		}
	}
	for _, d := range f.Dives {
		later(d.Start, d.RecordedAt)
	}
	for _, in := range f.Inspections {
		later(in.At, in.RecordedAt)
	}
	for _, p := range f.ProofTests {
		later(p.At, p.RecordedAt)
	}
	for _, d := range decisions {
		later(d.At, d.RecordedAt)
	}
	if r == nil {
		return until, bounded
	}
	for _, rule := range r.Rules {
		var at time.Time
		var found bool
		switch rule.Measure {
		case MeasureDaysSinceInspection:
			var in Inspection
			in, found = lastPassingInspection(f.Inspections, f.Now)
			at = in.At
		case MeasureDaysSinceProofTest:
			var p ProofTest
			p, found = lastPassingProofTest(f.ProofTests, f.Now)
			at = p.At
		default:
			continue
		}
		if !found {
			// Missing until a record comes into force (a moment above).
			continue
		}
		days := f.Now.Sub(at).Hours() / 24
		if _, _, raised := rule.Level(days); raised {
			// The flag's value grows with the time: no copy holds.
			return f.Now, true
		}
		for _, th := range []*Threshold{rule.Watch, rule.Hold} {
			if th == nil {
				continue
			}
			switch th.When {
			case AtOrAbove, Above:
				// The value rises: it trips at the threshold, taken a
				// millisecond early.
				earliest(at.Add(daysDuration(th.At) - time.Millisecond))
			case AtOrBelow, Below:
				// A rising value that does not trip now never will.
			default:
				// A comparison not known here: no copy holds.
				return f.Now, true
			}
		}
	}
	return until, bounded
}

// daysDuration is a number of days as a duration, capped at a century (a
// duration cannot hold much more than 290 years).
func daysDuration(days float64) time.Duration {
	const century = 100 * 365.25 * 24 * float64(time.Hour)
	d := days * 24 * float64(time.Hour)
	if d > century {
		d = century
	}
	return time.Duration(d)
}
