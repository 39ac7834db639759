package reports_test

import (
	"context"
	"encoding/json"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/demo"
	"hulltally/reports/view"
)

// TestFleetRowsFromSummary: the fleet view read through the fleet summary
// (FleetRowsOf, what `hulltally fleet` prints; HullRowsOf, `hull list`)
// is the fleet view walked
// hull by hull from the ledger (FleetOf), row for row and in the same
// order, on the demo fleet (one hull on hold, one on watch, one fit) —
// now, where the demo's writes left a summary for each hull, and a year
// on, where the inspections have fallen due and no summary may stand.
// A hull-level flag is dated at the evaluation that raised it, so those
// dates are left out of the comparison.
func TestFleetRowsFromSummary(t *testing.T) {
	ctx := context.Background()
	l := srv.Open(t)
	if _, err := demo.Run(ctx, l, demo.Options{Dir: t.TempDir(), DivesPerHull: 4, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	undated := func(rows []view.FleetRow) string {
		for i := range rows {
			rows[i].EvaluatedAt, rows[i].FromSummary = time.Time{}, false
			for _, rs := range [][]ledger.Reason{rows[i].Reasons, rows[i].OpenFlags} {
				for k := range rs {
					if rs[k].Kind == "flag" && rs[k].Code != "" && rs[k].At != nil && !rs[k].At.Before(time.Now().Add(-time.Hour)) {
						rs[k].At = nil
					}
				}
			}
		}
		b, _ := json.Marshal(rows)
		return string(b)
	}
	for _, at := range []time.Time{time.Now().UTC(), time.Now().UTC().AddDate(1, 0, 0)} {
		es, err := l.Fleet(ctx, at)
		if err != nil {
			t.Fatal(err)
		}
		derived := 0
		for _, e := range es {
			if e.Derived {
				derived++
			}
		}
		got, err := view.FleetRowsOf(ctx, l, at)
		if err != nil {
			t.Fatal(err)
		}
		for _, r := range got {
			if want := !at.After(time.Now().Add(time.Hour)); r.FromSummary != want || (!want && !r.EvaluatedAt.Equal(at)) {
				t.Errorf("at %s: hull %s from_summary %v evaluated_at %s", at, r.Serial, r.FromSummary, r.EvaluatedAt)
			}
		}
		fv, err := view.FleetOf(ctx, l, at)
		if err != nil {
			t.Fatal(err)
		}
		want := fv.Rows()
		// hull list reads the same way.
		hr, err := view.HullRowsOf(ctx, l, at)
		if err != nil {
			t.Fatal(err)
		}
		if a, b := mustJSON(t, hr), mustJSON(t, fv.HullRows()); a != b {
			t.Fatalf("at %s: hull rows through the summary\n%s\nwalked\n%s", at, a, b)
		}
		if len(got) != 3 || undated(got) != undated(want) {
			t.Fatalf("at %s (%d hulls from the summary):\nsummary %s\nwalked  %s", at, derived, undated(got), undated(want))
		}
		if at.Before(time.Now().Add(time.Hour)) && derived != 3 {
			t.Errorf("now: %d of 3 hulls read from the summary", derived)
		}
		if at.After(time.Now().Add(time.Hour)) && derived != 0 {
			t.Errorf("a year on: %d hulls read from a summary written before their inspections fell due", derived)
		}
		t.Logf("at %s: %d hulls from the summary; order %s %s %s", at.Format(time.DateOnly), derived, got[0].Serial, got[1].Serial, got[2].Serial)
	}
}

func mustJSON(t *testing.T, v any) string {
	t.Helper()
	b, err := json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}
