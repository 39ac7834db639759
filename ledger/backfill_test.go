package ledger_test

import (
	"context"
	"math"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
)

// storedSeries is one row of dive_cycles as stored.
type storedSeries struct {
	series, unit        string
	gate                float64
	ranges, means, cnts []float64
}

// storedHolds is the dive_holds row as stored.
type storedHolds struct {
	bin             float64
	levels, seconds []float64
}

func readStored(t *testing.T, l *ledger.Ledger, dive uuid.UUID) ([]storedSeries, storedHolds) {
	t.Helper()
	ctx := context.Background()
	rows, err := l.Pool().Query(ctx, "SELECT series, unit, gate, ranges, means, counts FROM dive_cycles WHERE dive_id = $1 ORDER BY series", dive)
	if err != nil {
		t.Fatal(err)
	}
	var ss []storedSeries
	for rows.Next() {
		var s storedSeries
		if err := rows.Scan(&s.series, &s.unit, &s.gate, &s.ranges, &s.means, &s.cnts); err != nil {
			t.Fatal(err)
		}
		ss = append(ss, s)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	var h storedHolds
	n := 0
	rows, err = l.Pool().Query(ctx, "SELECT bin_mpa, levels, seconds FROM dive_holds WHERE dive_id = $1", dive)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		n++
		if err := rows.Scan(&h.bin, &h.levels, &h.seconds); err != nil {
			t.Fatal(err)
		}
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	if n != 1 {
		t.Fatalf("dive %s: %d rows of time at pressure, want 1", dive, n)
	}
	return ss, h
}

func sameFloats(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// forgetCounts makes dive look as if it was logged before cycles were
// kept: as an administrator would, it switches the append-only guard off
// and removes the dive's stored cycles, its time at pressure and their
// chain records. The chain is broken by this (verify would say so); this
// test is about the values counted again.
func forgetCounts(t *testing.T, l *ledger.Ledger, dive uuid.UUID) {
	t.Helper()
	ctx := context.Background()
	err := pgx.BeginFunc(ctx, l.Pool(), func(tx pgx.Tx) error {
		tables := []string{"dive_cycles", "dive_holds", "audit_chain"}
		for _, tb := range tables {
			if _, err := tx.Exec(ctx, "ALTER TABLE "+tb+" DISABLE TRIGGER USER"); err != nil {
				return err
			}
		}
		for _, sql := range []string{
			"DELETE FROM audit_chain WHERE kind IN ('dive_cycles', 'dive_holds') AND record_key = $1",
			"DELETE FROM dive_cycles WHERE dive_id = $1",
			"DELETE FROM dive_holds WHERE dive_id = $1",
		} {
			tag, err := tx.Exec(ctx, sql, dive.String())
			if err != nil {
				return err
			}
			if tag.RowsAffected() == 0 {
				t.Errorf("%s: nothing removed", sql)
			}
		}
		for _, tb := range tables {
			if _, err := tx.Exec(ctx, "ALTER TABLE "+tb+" ENABLE TRIGGER USER"); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if c, err := l.DiveCycles(ctx, dive); err != nil || len(c) != 0 {
		t.Fatalf("after removal: cycles %v, %v", c, err)
	}
}

// TestBackfillEqualsLogging: a dive whose cycles were never stored is
// counted again from its raw readings by Assess, and the cycles, the time
// at pressure and the damage equal, value for value, what logging stored
// for the same readings. A backfill that read the readings back with less
// precision, or on another pressure basis (depth table, latitude), would
// make an old dive cost the hull less than it did.
func TestBackfillEqualsLogging(t *testing.T) {
	l := newLedger(t, 0)
	ctx := context.Background()
	lat := 30.0
	// A depth log with a strain gauge (depth table at 30°, strain series),
	// a pressure log of two peaks, and 0 → 15 MPa → 0.
	logged := []ledger.LogRequest{
		{Hull: serial, Samples: writeFile(t, "d.csv", goodDive), Latitude: &lat},
		{Hull: serial, Samples: writeFile(t, "p.csv", twoPeaks), Start: ptr(start0.Add(24 * time.Hour))},
		{Hull: serial, Samples: writeFile(t, "q.csv", "t_s,pressure_mpa\n0,0\n900,15\n1800,0\n"), Start: ptr(start0.Add(48 * time.Hour))},
	}
	var ids []uuid.UUID
	for _, r := range logged {
		d, err := l.LogDive(ctx, r)
		if err != nil {
			t.Fatal(err)
		}
		ids = append(ids, d.ID)
	}
	type atLogging struct {
		series []storedSeries
		holds  storedHolds
		cycles []ledger.Cycle
		damage map[string]ledger.DiveComponentDamage
	}
	before := map[uuid.UUID]atLogging{}
	for _, id := range ids {
		var a atLogging
		a.series, a.holds = readStored(t, l, id)
		var err error
		if a.cycles, err = l.DiveCycles(ctx, id); err != nil {
			t.Fatal(err)
		}
		if a.damage, err = l.DiveDamageOf(ctx, id); err != nil {
			t.Fatal(err)
		}
		if len(a.cycles) == 0 || len(a.damage) == 0 {
			t.Fatalf("dive %s at logging: cycles %v damage %v", id, a.cycles, a.damage)
		}
		before[id] = a
	}
	if len(before[ids[0]].series) < 2 {
		t.Fatalf("depth dive stored %d series, want pressure and the strain gauge", len(before[ids[0]].series))
	}
	// The depth dive and the 15 MPa dive lose their counts; the two-peak
	// dive keeps them.
	forgetCounts(t, l, ids[0])
	forgetCounts(t, l, ids[2])

	res, err := l.Assess(ctx, ledger.AssessOptions{Reason: "count old dives"})
	if err != nil {
		t.Fatal(err)
	}
	if len(res) != 1 || res[0].Dives != 3 || res[0].CountedFromRaw != 2 {
		t.Fatalf("assess: %+v, want 3 dives of which 2 counted from raw", res)
	}

	for _, id := range ids {
		b := before[id]
		ss, hs := readStored(t, l, id)
		if len(ss) != len(b.series) {
			t.Fatalf("dive %s: %d series after backfill, %d at logging", id, len(ss), len(b.series))
		}
		for i := range ss {
			g, w := ss[i], b.series[i]
			if g.series != w.series || g.unit != w.unit || g.gate != w.gate ||
				!sameFloats(g.ranges, w.ranges) || !sameFloats(g.means, w.means) || !sameFloats(g.cnts, w.cnts) {
				t.Errorf("dive %s series %s: backfilled %+v, at logging %+v", id, w.series, g, w)
			}
		}
		if hs.bin != b.holds.bin || !sameFloats(hs.levels, b.holds.levels) || !sameFloats(hs.seconds, b.holds.seconds) {
			t.Errorf("dive %s: time at pressure backfilled %+v, at logging %+v", id, hs, b.holds)
		}
		cyc, err := l.DiveCycles(ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		if len(cyc) != len(b.cycles) {
			t.Fatalf("dive %s: %d cycles after backfill, %d at logging", id, len(cyc), len(b.cycles))
		}
		for i := range cyc {
			if cyc[i] != b.cycles[i] {
				t.Errorf("dive %s cycle %d: backfilled %+v, at logging %+v", id, i, cyc[i], b.cycles[i])
			}
		}
		dmg, err := l.DiveDamageOf(ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		if len(dmg) != len(b.damage) {
			t.Fatalf("dive %s: damage of %d components after, %d at logging", id, len(dmg), len(b.damage))
		}
		for name, w := range b.damage {
			g, ok := dmg[name]
			if !ok {
				t.Errorf("dive %s: %s has no damage after re-assessment", id, name)
				continue
			}
			for _, p := range [][3]any{{"cyclic", float64(g.Cyclic), float64(w.Cyclic)}, {"sustained", float64(g.Sustained), float64(w.Sustained)}} {
				gv, wv := p[1].(float64), p[2].(float64)
				if math.IsNaN(gv) || math.Abs(gv-wv) > 1e-12*math.Abs(wv) {
					t.Errorf("dive %s %s %s damage: %g after re-assessment, %g at logging", id, name, p[0], gv, wv)
				}
			}
			if g.Basis != w.Basis || g.Curve != w.Curve || g.Factor != w.Factor {
				t.Errorf("dive %s %s: %+v after, %+v at logging", id, name, g, w)
			}
		}
	}

	// One figure by hand, ASTM E1049-85 §5.4.4: the turning points 0, 15,
	// 0 leave a residue of two half cycles of range 15 MPa, mean 7.5 MPa:
	// one cycle in all, its range the peak gauge pressure.
	cyc, err := l.DiveCycles(ctx, ids[2])
	if err != nil {
		t.Fatal(err)
	}
	total := 0.0
	for _, c := range cyc {
		if c.RangeMPa != 15 || c.MeanMPa != 7.5 {
			t.Errorf("0 → 15 → 0 dive backfilled cycle %+v, want range 15 MPa, mean 7.5 MPa", c)
		}
		total += c.Count
	}
	if total != 1 {
		t.Errorf("0 → 15 → 0 dive: %g cycles backfilled, want 1 (two halves)", total)
	}
	// End ring by hand (designer's factor −9.5 MPa/MPa): one stress cycle
	// of range 142.5 MPa, mean −71.25 MPa; Goodman against 895 MPa
	// compressive strength, S_a,eq = S_a / (1 − |S_m|/895), the corrected
	// range 2·S_a,eq = 154.8 MPa below the knee (200 MPa at 1e7 cycles,
	// configs/curves.yaml), so N = 10^(18.50515 − 5·log10 S) as in
	// TestDiveCyclesAndDamage.
	sEq := 142.5 / (1 - 71.25/895)
	wantRing := 1 / math.Pow(10, 18.50515-5*math.Log10(sEq)) // ≈ 2.780e-8
	dmg, err := l.DiveDamageOf(ctx, ids[2])
	if err != nil {
		t.Fatal(err)
	}
	if ring := float64(dmg["end-ring-fwd"].Cyclic); math.Abs(ring-wantRing) > 1e-9*wantRing || wantRing < 2.77e-8 || wantRing > 2.79e-8 {
		t.Errorf("end ring cyclic damage of the backfilled 0 → 15 → 0 dive %g, want %g", ring, wantRing)
	}

	// A second assessment finds nothing left to count.
	res, err = l.Assess(ctx, ledger.AssessOptions{Reason: "again"})
	if err != nil {
		t.Fatal(err)
	}
	if res[0].CountedFromRaw != 0 {
		t.Errorf("second assessment counted %d dives again", res[0].CountedFromRaw)
	}
}

func ptr[T any](v T) *T { return &v }
