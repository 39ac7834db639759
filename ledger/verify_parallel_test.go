package ledger_test

import (
	"context"
	"fmt"
	"reflect"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/google/uuid"

	"hulltally/fatigue/seawater"
	"hulltally/ledger"
)

// fleetLedger is a ledger of the example hull and four more, each with
// two dives (readings, hits, cycles, assessment).
func fleetLedger(t *testing.T) *ledger.Ledger {
	t.Helper()
	l := newLedger(t, 0)
	ctx := context.Background()
	dir := t.TempDir()
	lat := 45.0
	serials := []string{serial}
	for h := 1; h <= 4; h++ {
		sp := exampleSpec(t)
		sp.Serial = fmt.Sprintf("PAR-%02d", h)
		if _, err := l.AddHull(ctx, sp, ledger.AddHullOptions{}); err != nil {
			t.Fatal(err)
		}
		serials = append(serials, sp.Serial)
	}
	t0 := time.Date(2026, 3, 1, 8, 0, 0, 0, time.UTC)
	for h, s := range serials {
		for d := 0; d < 2; d++ {
			smp, hits := writeSynth(t, dir, fmt.Sprintf("h%d-d%d", h, d), shortDive(t0.Add(time.Duration(d)*24*time.Hour), seawater.MPaToDepth(15+float64(5*d), lat)), uint64(10*h+d+1))
			if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: s, Samples: smp, AE: hits, Latitude: &lat}); err != nil {
				t.Fatal(err)
			}
		}
	}
	return l
}

// verifyBoth runs Verify one hull after another and in parallel and fails
// the test unless both give the identical result.
func verifyBoth(t *testing.T, l *ledger.Ledger) *ledger.VerifyResult {
	t.Helper()
	ctx := context.Background()
	seq, err := l.VerifyWith(ctx, ledger.VerifyOptions{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range []int{0, 2, 3, 64} {
		par, err := l.VerifyWith(ctx, ledger.VerifyOptions{Workers: w})
		if err != nil {
			t.Fatalf("workers %d: %v", w, err)
		}
		if !reflect.DeepEqual(seq, par) {
			t.Fatalf("workers %d: parallel result differs:\n%+v %+v\nsequential:\n%+v %+v", w, par, par.FirstBroken, seq, seq.FirstBroken)
		}
	}
	return seq
}

// TestVerifyParallelSameResult: on a clean fleet and on one with a record
// of a middle hull and of a later hull tampered, every worker count gives
// the sequential result, the first broken link being the middle hull's.
func TestVerifyParallelSameResult(t *testing.T) {
	l := fleetLedger(t)
	res := verifyBoth(t, l)
	if !res.OK || res.Hulls != 5 || len(res.Heads) != 5 || res.Records < 5*6 {
		t.Fatalf("clean fleet: %+v", res)
	}
	clean := res.Records
	// A later hull first, then an earlier one: the first broken link is
	// the earlier hull's in serial order, whichever worker finds it.
	tamper(t, l, "UPDATE dives SET max_depth_m = max_depth_m / 2 WHERE id = (SELECT d.id FROM dives d JOIN hulls h ON h.id = d.hull_id WHERE h.serial = 'PAR-04' LIMIT 1)")
	tamper(t, l, "UPDATE dives SET max_depth_m = max_depth_m / 2 WHERE id = (SELECT d.id FROM dives d JOIN hulls h ON h.id = d.hull_id WHERE h.serial = 'PAR-02' ORDER BY d.start_time DESC LIMIT 1)")
	res = verifyBoth(t, l)
	if res.OK || res.FirstBroken == nil || res.FirstBroken.Hull != "PAR-02" || res.FirstBroken.Kind != "dive" {
		t.Fatalf("tampered fleet: %+v %+v", res, res.FirstBroken)
	}
	if res.Records >= clean || res.Hulls != 5 || len(res.Heads) != 5 {
		t.Errorf("tampered fleet: %d records (clean %d), %d hulls, %d heads", res.Records, clean, res.Hulls, len(res.Heads))
	}
	// Inside a Snapshot, Verify runs on the snapshot's transaction and
	// still agrees.
	err := l.Snapshot(context.Background(), func(s *ledger.Ledger) error {
		in, err := s.Verify(context.Background())
		if err != nil {
			return err
		}
		if !reflect.DeepEqual(in, res) {
			t.Errorf("inside Snapshot: %+v, want %+v", in, res)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

// heads returns every hull's current head, as a checkpoint would record.
func heads(t *testing.T, l *ledger.Ledger) map[uuid.UUID]ledger.SinceHead {
	t.Helper()
	ctx := context.Background()
	rows, err := l.Pool().Query(ctx, "SELECT id FROM hulls")
	if err != nil {
		t.Fatal(err)
	}
	var ids []uuid.UUID
	for rows.Next() {
		var id uuid.UUID
		if err := rows.Scan(&id); err != nil {
			t.Fatal(err)
		}
		ids = append(ids, id)
	}
	rows.Close()
	out := map[uuid.UUID]ledger.SinceHead{}
	for _, id := range ids {
		h, n, err := l.ChainHead(ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		out[id] = ledger.SinceHead{Length: n, Head: h}
	}
	return out
}

// TestVerifySince: from recorded heads, only the links added since are
// verified; a record added since and tampered is found, and so is a head
// rewritten (the chain row at the starting length no longer has its
// hash), which must never pass as an extension.
func TestVerifySince(t *testing.T) {
	ctx := context.Background()
	lat := 45.0
	logOne := func(t *testing.T, l *ledger.Ledger, hull, name string, seed uint64) uuid.UUID {
		smp, hits := writeSynth(t, t.TempDir(), name, shortDive(time.Date(2026, 4, 1, 8, 0, 0, 0, time.UTC), seawater.MPaToDepth(25, lat)), seed)
		d, err := l.LogDive(ctx, ledger.LogRequest{Hull: hull, Samples: smp, AE: hits, Latitude: &lat})
		if err != nil {
			t.Fatal(err)
		}
		return d.ID
	}
	t.Run("nothing added, then one dive added", func(t *testing.T) {
		l := fleetLedger(t)
		start := heads(t, l)
		res, err := l.VerifySince(ctx, start)
		if err != nil || !res.OK || res.Records != 0 || res.Hulls != 5 {
			t.Fatalf("nothing added: %v %+v", err, res)
		}
		logOne(t, l, "PAR-03", "new", 99)
		full, err := l.Verify(ctx)
		if err != nil || !full.OK {
			t.Fatalf("full verify: %v %+v", err, full)
		}
		res, err = l.VerifySince(ctx, start)
		if err != nil || !res.OK {
			t.Fatalf("one dive added: %v %+v", err, res)
		}
		added := full.Records
		for _, h := range start {
			added -= h.Length
		}
		if res.Records != added || added <= 0 || !reflect.DeepEqual(res.Heads, full.Heads) {
			t.Errorf("since: %d records, heads %v; want the %d added and heads %v", res.Records, res.Heads, added, full.Heads)
		}
	})
	t.Run("a record added since is tampered", func(t *testing.T) {
		l := fleetLedger(t)
		start := heads(t, l)
		id := logOne(t, l, "PAR-03", "new", 99)
		tamper(t, l, "UPDATE dives SET max_pressure_mpa = max_pressure_mpa / 2 WHERE id = $1", id)
		res, err := l.VerifySince(ctx, start)
		if err != nil {
			t.Fatal(err)
		}
		if res.OK || res.FirstBroken == nil || res.FirstBroken.Hull != "PAR-03" || res.FirstBroken.Kind != "dive" || res.FirstBroken.Key != id.String() {
			t.Fatalf("tampered new dive not found: %+v", res.FirstBroken)
		}
	})
	t.Run("a row added behind the chain since", func(t *testing.T) {
		l := fleetLedger(t)
		start := heads(t, l)
		tamper(t, l, "INSERT INTO dive_voids (id, hull_id, dive_id, reason, actor, recorded_at) SELECT gen_random_uuid(), d.hull_id, d.id, 'forged', current_user, now() FROM dives d JOIN hulls h ON h.id = d.hull_id WHERE h.serial = 'PAR-01' LIMIT 1")
		res, err := l.VerifySince(ctx, start)
		if err != nil {
			t.Fatal(err)
		}
		if res.OK || res.FirstBroken == nil || res.FirstBroken.Hull != "PAR-01" || res.FirstBroken.Kind != "dive_void" {
			t.Fatalf("forged void not found: %+v", res.FirstBroken)
		}
	})
	t.Run("the starting head rewritten", func(t *testing.T) {
		l := fleetLedger(t)
		start := heads(t, l)
		logOne(t, l, "PAR-02", "new", 99)
		var hid uuid.UUID
		if err := l.Pool().QueryRow(ctx, "SELECT id FROM hulls WHERE serial = 'PAR-02'").Scan(&hid); err != nil {
			t.Fatal(err)
		}
		n := start[hid].Length
		// Rewrite the head link and every later one consistently: only
		// the starting head can tell.
		tamper(t, l, "UPDATE audit_chain SET hash = sha256(hash) WHERE hull_id = $1 AND seq = $2", hid, n)
		res, err := l.VerifySince(ctx, start)
		if err != nil {
			t.Fatal(err)
		}
		if res.OK || res.FirstBroken == nil || res.FirstBroken.Hull != "PAR-02" || res.FirstBroken.Seq != n || !strings.Contains(res.FirstBroken.Reason, "rewritten") {
			t.Fatalf("rewritten head not found: %+v", res.FirstBroken)
		}
	})
	t.Run("the chain cut short and a hull gone", func(t *testing.T) {
		l := fleetLedger(t)
		start := heads(t, l)
		var hid uuid.UUID
		if err := l.Pool().QueryRow(ctx, "SELECT id FROM hulls WHERE serial = 'PAR-01'").Scan(&hid); err != nil {
			t.Fatal(err)
		}
		tamper(t, l, "DELETE FROM audit_chain WHERE hull_id = $1 AND seq = $2", hid, start[hid].Length)
		res, err := l.VerifySince(ctx, start)
		if err != nil {
			t.Fatal(err)
		}
		if res.OK || res.FirstBroken == nil || res.FirstBroken.Hull != "PAR-01" || !strings.Contains(res.FirstBroken.Reason, "cut short") {
			t.Fatalf("cut chain not found: %+v", res.FirstBroken)
		}
		res, err = l.VerifySince(ctx, map[uuid.UUID]ledger.SinceHead{uuid.New(): {Length: 3, Head: make([]byte, 32)}})
		if err != nil {
			t.Fatal(err)
		}
		if res.OK || res.FirstBroken == nil {
			t.Fatalf("a hull of the starting heads that is gone passed: %+v", res)
		}
	})
}

// BenchmarkVerifyWorkers compares one hull after another with the
// parallel Verify on the ledger of BenchmarkVerify (20 hulls × 50 dives):
//
//	go test -run XXX -bench VerifyWorkers -benchtime 5x ./ledger/
func BenchmarkVerifyWorkers(b *testing.B) {
	l := benchVerifyLedger(b)
	for _, w := range []int{1, 0} {
		b.Run(fmt.Sprintf("workers=%d", w), func(b *testing.B) {
			var records int64
			for i := 0; i < b.N; i++ {
				res, err := l.VerifyWith(context.Background(), ledger.VerifyOptions{Workers: w})
				if err != nil || !res.OK {
					b.Fatalf("verify: %v %+v", err, res)
				}
				records = res.Records
			}
			b.ReportMetric(float64(records)*float64(b.N)/b.Elapsed().Seconds(), "records/s")
		})
	}
}

// The size of the verify benchmarks' ledger.
const benchVerifyHulls, benchVerifyDives = 20, 50

// benchVerifyLedger builds the verify benchmarks' ledger: 20 hulls × 50
// short dives (each with its readings, hits, cycles, profile, evidence
// and assessment), logged four hulls at a time.
func benchVerifyLedger(b *testing.B) *ledger.Ledger {
	const hulls, dives = benchVerifyHulls, benchVerifyDives
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(b))
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(l.Close)
	base := exampleSpec(b)
	dir := b.TempDir()
	lat := 45.0
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	var wg sync.WaitGroup
	errs := make([]error, hulls)
	for h := 0; h < hulls; h++ {
		sp := *base
		sp.Serial = fmt.Sprintf("VER-%03d", h)
		if _, err := l.AddHull(ctx, &sp, ledger.AddHullOptions{}); err != nil {
			b.Fatal(err)
		}
		wg.Add(1)
		go func(h int, serial string) {
			defer wg.Done()
			for d := 0; d < dives; d++ {
				s, hits := writeSynth(b, dir, fmt.Sprintf("h%02d-d%02d", h, d), shortDive(t0.Add(time.Duration(d)*time.Hour), 300+float64(d*20)), uint64(h*1000+d))
				if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: s, AE: hits, Latitude: &lat}); err != nil {
					errs[h] = err
					return
				}
			}
		}(h, sp.Serial)
		if h%4 == 3 {
			wg.Wait()
		}
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			b.Fatal(err)
		}
	}
	if _, err := l.Pool().Exec(ctx, "ANALYZE"); err != nil {
		b.Fatal(err)
	}
	return l
}
