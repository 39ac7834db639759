package ledger_test

import (
	"context"
	"fmt"
	"runtime"
	"runtime/debug"
	"strings"
	"testing"
	"time"

	"hulltally/fatigue/rainflow"
	"hulltally/ledger"
)

// longDive writes a dive of n pressure cycles between 1.0 and 1.5 MPa (and
// strain between -100 and -150 µε) at 10 Hz, from and to the surface, and
// returns the file and its gauge pressures.
func longDive(t *testing.T, n int) (string, []float64) {
	t.Helper()
	var b strings.Builder
	b.WriteString("time,pressure_mpa,strain_hoop1_ue\n")
	t0 := time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC)
	var ps []float64
	row := func(p, e float64) {
		fmt.Fprintf(&b, "%s,%g,%g\n", t0.Add(time.Duration(len(ps))*100*time.Millisecond).Format(time.RFC3339Nano), p, e)
		ps = append(ps, p)
	}
	row(0, 0)
	for range n {
		row(1.0, -100)
		row(1.5, -150)
	}
	row(0, 0)
	return writeFile(t, "long.csv", b.String()), ps
}

// TestLongDiveInParts: a dive with more counted cycles per series than
// are held in memory at once (70 000 against parts of 32 768) is stored in
// parts, and everything read back from the parts is the whole series: the
// cycles are exactly those a batch count of the same samples gives (the
// expected values: fatigue/rainflow's Count, checked against ASTM E1049-85
// by its own tests), the chain verifies, and a re-assessment from the
// stored parts gives bit for bit the damage summed while the dive
// streamed. Then the adversarial cases: a part removed, renumbered, or
// carrying another gate is found by verify and refused by every reader
// that would otherwise count fewer cycles.
func TestLongDiveInParts(t *testing.T) {
	ctx := context.Background()
	const cycles = 70000
	file, ps := longDive(t, cycles)
	want := rainflow.Count(nil, ps, 0.05)

	for _, tc := range []struct{ name, sql string }{
		{"a part removed", "DELETE FROM dive_cycles WHERE series = 'pressure' AND chunk = 1"},
		{"the last part renumbered", "UPDATE dive_cycles SET chunk = chunk + 1 WHERE series = 'pressure' AND chunk = (SELECT max(chunk) FROM dive_cycles WHERE series = 'pressure')"},
		{"a part with another gate", "UPDATE dive_cycles SET gate = 1 WHERE series = 'pressure' AND chunk = 1"},
		{"the first part renumbered", "UPDATE dive_cycles SET chunk = 100 WHERE series = 'pressure' AND chunk = 0"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			l := newLedger(t, 4096)
			d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: file})
			if err != nil {
				t.Fatal(err)
			}
			var parts map[string]int
			rows, err := l.Pool().Query(ctx, "SELECT series, count(*)::int FROM dive_cycles WHERE dive_id = $1 GROUP BY series", d.ID)
			if err != nil {
				t.Fatal(err)
			}
			parts = map[string]int{}
			for rows.Next() {
				var s string
				var n int
				if err := rows.Scan(&s, &n); err != nil {
					t.Fatal(err)
				}
				parts[s] = n
			}
			if rows.Err() != nil {
				t.Fatal(rows.Err())
			}
			if parts["pressure"] < 3 || parts["strain:hoop1"] < 3 {
				t.Fatalf("parts stored per series %v: a dive of %d cycles must be stored in at least 3 parts", parts, cycles)
			}
			got, err := l.DiveCycles(ctx, d.ID)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(want) {
				t.Fatalf("%d pressure cycles read back, a batch count gives %d", len(got), len(want))
			}
			for i, c := range want {
				if g := got[i]; g.RangeMPa != c.Range || g.MeanMPa != c.Mean || g.Count != c.Count {
					t.Fatalf("cycle %d read back %+v, batch count %+v", i, g, c)
				}
			}
			res, err := l.Verify(ctx)
			if err != nil || !res.OK {
				t.Fatalf("verify of the dive in parts: %v %+v", err, res.FirstBroken)
			}
			h, err := l.Hull(ctx, serial)
			if err != nil {
				t.Fatal(err)
			}
			atLog, err := l.HullDamage(ctx, h)
			if err != nil {
				t.Fatal(err)
			}
			again, err := l.Assess(ctx, ledger.AssessOptions{Hull: serial})
			if err != nil {
				t.Fatal(err)
			}
			if !(atLog.Components[0].CyclicDamage > 0) {
				t.Fatalf("the dive did no damage (%v): it would not tell the sums apart", atLog.Components[0].CyclicDamage)
			}
			for i, c := range again[0].Current.Components {
				if c.CyclicDamage != atLog.Components[i].CyclicDamage || c.SustainedDamage != atLog.Components[i].SustainedDamage {
					t.Fatalf("%s: re-assessed from the parts %v / %v, summed while streaming %v / %v", c.Name,
						c.CyclicDamage, c.SustainedDamage, atLog.Components[i].CyclicDamage, atLog.Components[i].SustainedDamage)
				}
			}
			if _, err := l.Clear(ctx, serial, 100, 30, time.Now()); err != nil {
				t.Fatalf("clearance on the dive in parts: %v", err)
			}

			tamper(t, l, tc.sql)
			res, err = l.Verify(ctx)
			if err != nil {
				t.Fatal(err)
			}
			if res.OK || res.FirstBroken == nil || res.FirstBroken.Kind != "dive_cycles" {
				t.Fatalf("verify after %s: %+v, want the counted cycles broken", tc.name, res.FirstBroken)
			}
			if tc.name == "a part with another gate" {
				return // the cycles themselves are whole
			}
			if c, err := l.DiveCycles(ctx, d.ID); err == nil {
				t.Fatalf("the dive's cycles were read with %s: %d cycles", tc.name, len(c))
			}
			// The sums over every part: the cycles used toward the
			// qualification (in the hull's status) and the load histogram.
			if f, err := l.FitnessAt(ctx, h, time.Now()); err == nil {
				t.Fatalf("the hull's status was evaluated with %s: %s", tc.name, f.Status)
			}
			if r, _, err := l.HullCycles(ctx, h.ID); err == nil {
				t.Fatalf("the load histogram was read with %s: %d ranges", tc.name, len(r))
			}
			if _, err := l.Assess(ctx, ledger.AssessOptions{Hull: serial}); err == nil {
				t.Fatalf("assess counted the dive with %s", tc.name)
			}
			if _, err := l.Clear(ctx, serial, 100, 30, time.Now()); err == nil {
				t.Fatalf("clearance predicted from the dive with %s", tc.name)
			}
		})
	}
}

// TestLogDiveMemoryBounded: the memory of logging a dive does not grow
// with its counted cycles. Two dives, one with 8 times the cycles of the
// other (2 × 320 000 against 2 × 40 000), are logged with the Go heap
// watched every 5 ms; the larger may use at most 12 MB more at its peak.
// Holding every cycle until the commit, as before, costs 24 bytes a cycle
// for the cycles alone and again for each of the stored arrays, the
// canonical bytes and the COPY encoding: about 60 MB more here.
func TestLogDiveMemoryBounded(t *testing.T) {
	if testing.Short() {
		t.Skip("logs a dive of 640 000 rows")
	}
	old := debug.SetGCPercent(20)
	defer debug.SetGCPercent(old)
	peak := func(cycles int) uint64 {
		l := newLedger(t, 4096)
		file, _ := longDive(t, cycles)
		runtime.GC()
		stop := watchHeap()
		if _, err := l.LogDive(context.Background(), ledger.LogRequest{Hull: serial, Samples: file}); err != nil {
			t.Fatal(err)
		}
		return stop()
	}
	small, big := peak(40000), peak(320000)
	t.Logf("peak heap in use: %.1f MB for 2 × 40 000 cycles, %.1f MB for 2 × 320 000", float64(small)/(1<<20), float64(big)/(1<<20))
	if big > small+12<<20 {
		t.Fatalf("the heap grew with the dive's cycles: %.1f MB against %.1f MB", float64(big)/(1<<20), float64(small)/(1<<20))
	}
}

// TestClearWithoutHistoryHoldsDesignBottomTime: a hull with no dives on
// record, asked for clearance without a bottom time, is predicted with
// the design dive's bottom time at the planned depth (configured
// fatigue.design_bottom_time_min, 60 min by default), not as a bounce:
// the predicted damage is that of a plan of 60 minutes, and a plan of
// 600 minutes is held as given.
func TestClearWithoutHistoryHoldsDesignBottomTime(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	now := time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC)
	none, err := l.Clear(ctx, serial, 2000, 0, now)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(none.PredictionBasis, "held for 60 min (the design dive's bottom time") {
		t.Fatalf("basis %q, want the design dive's 60 min", none.PredictionBasis)
	}
	hour, err := l.Clear(ctx, serial, 2000, 60, now)
	if err != nil {
		t.Fatal(err)
	}
	if none.PredictedDamageRatio != hour.PredictedDamageRatio || !(hour.PredictedDamageRatio > 0) {
		t.Fatalf("no bottom time predicted %v, 60 min %v: want the same", none.PredictedDamageRatio, hour.PredictedDamageRatio)
	}
	long, err := l.Clear(ctx, serial, 2000, 600, now)
	if err != nil {
		t.Fatal(err)
	}
	if !(long.PredictedDamageRatio >= hour.PredictedDamageRatio) || !strings.Contains(long.PredictionBasis, "held for 600 min") {
		t.Fatalf("600 min: %v (%q), want at least the 60 min's %v", long.PredictedDamageRatio, long.PredictionBasis, hour.PredictedDamageRatio)
	}
}
