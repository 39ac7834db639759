package ledger_test

import (
	"context"
	"encoding/hex"
	"errors"
	"testing"
	"time"

	"github.com/google/uuid"

	"hulltally/fatigue/seawater"
	"hulltally/ledger"
	"hulltally/ledger/spec"
)

// snapshotView is everything the reports read of one hull, read through
// one Ledger.
type snapshotView struct {
	head     string
	seq      int64
	dives    int
	damage   int
	summary  int64
	hulls    int
	evidence int
	status   int
	fitness  string
}

func readView(t *testing.T, ctx context.Context, l *ledger.Ledger, old uuid.UUID) snapshotView {
	t.Helper()
	var v snapshotView
	h, err := l.Hull(ctx, serial)
	if err != nil {
		t.Fatal(err)
	}
	head, seq, err := l.ChainHead(ctx, h.ID)
	if err != nil {
		t.Fatal(err)
	}
	v.head, v.seq = hex.EncodeToString(head), seq
	ds, err := l.Dives(ctx, serial)
	if err != nil {
		t.Fatal(err)
	}
	v.dives = len(ds)
	dmg, err := l.HullDamage(ctx, h)
	if err != nil {
		t.Fatal(err)
	}
	v.damage = dmg.DiveCount
	hs, err := l.Hulls(ctx)
	if err != nil {
		t.Fatal(err)
	}
	v.hulls = len(hs)
	sum, err := l.HullSummary(ctx, h.ID)
	if err != nil {
		t.Fatal(err)
	}
	v.summary = sum.DiveCount
	ev, err := l.HullEvidence(ctx, h.ID)
	if err != nil {
		t.Fatal(err)
	}
	v.evidence = len(ev)
	st, err := l.StatusHistory(ctx, h)
	if err != nil {
		t.Fatal(err)
	}
	v.status = len(st)
	f, err := l.FitnessAt(ctx, h, time.Date(2026, 7, 1, 0, 0, 0, 0, time.UTC))
	if err != nil {
		t.Fatal(err)
	}
	v.fitness = string(f.Status)
	if _, err := l.MaintenanceOf(ctx, h); err != nil {
		t.Fatal(err)
	}
	// The reads of one old dive: each must work inside the transaction
	// (one connection: no query may be left open under another).
	if _, err := l.Dive(ctx, old.String()); err != nil {
		t.Fatal(err)
	}
	if _, err := l.EvidenceOf(ctx, old); err != nil {
		t.Fatal(err)
	}
	if _, _, err := l.HitsOf(ctx, old); err != nil {
		t.Fatal(err)
	}
	if p, err := l.ProfileOf(ctx, old); err != nil || p == nil {
		t.Fatalf("profile of an old dive: %v, %v", p, err)
	}
	if _, err := l.LoadOf(ctx, old); err != nil {
		t.Fatal(err)
	}
	if _, _, err := l.HullCycles(ctx, h.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := l.VoidOf(ctx, old); err != nil {
		t.Fatal(err)
	}
	if _, err := l.Clear(ctx, serial, 200, 30, time.Date(2026, 7, 1, 0, 0, 0, 0, time.UTC)); err != nil {
		t.Fatal(err)
	}
	if _, err := l.ReportBasis([]*spec.Hull{h.Spec}); err != nil {
		t.Fatal(err)
	}
	return v
}

// TestSnapshotSeesOneMoment: a dive logged and committed after a
// snapshot began is seen by none of the snapshot's reads, the chain head
// and the damage read inside agree with each other (and with the state
// before the dive), a write inside is refused, and after the snapshot the
// dive is there.
func TestSnapshotSeesOneMoment(t *testing.T) {
	l := judgedLedger(t)
	ctx := context.Background()
	ds, err := l.Dives(ctx, serial)
	if err != nil || len(ds) == 0 {
		t.Fatalf("dives %v, %v", ds, err)
	}
	old := ds[0].ID
	before := readView(t, ctx, l, old)
	if int64(before.damage) != before.summary || before.damage == 0 {
		t.Fatalf("before: %d dives (void ones too), damage over %d, summary %d", before.dives, before.damage, before.summary)
	}
	lat := 45.0
	sp, hp := writeSynth(t, t.TempDir(), "late", shortDive(time.Date(2026, 6, 20, 8, 0, 0, 0, time.UTC), seawater.MPaToDepth(25, lat)), 9)
	var late *ledger.Dive
	err = l.Snapshot(ctx, func(s *ledger.Ledger) error {
		h, err := s.Hull(ctx, serial) // the snapshot is taken at this first read
		if err != nil {
			return err
		}
		// Logged through the outer ledger: its own transaction, committed
		// before LogDive returns.
		if late, err = l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: sp, AE: hp, Latitude: &lat}); err != nil {
			return err
		}
		in := readView(t, ctx, s, old)
		if in != before {
			t.Errorf("inside the snapshot %+v, want the state before the late dive %+v", in, before)
		}
		if int64(in.damage) != in.summary || in.seq != before.seq || in.head != before.head {
			t.Errorf("chain head seq %d and damage over %d dives disagree (summary %d)", in.seq, in.damage, in.summary)
		}
		if _, err := s.Dive(ctx, late.ID.String()); !errors.Is(err, ledger.ErrUnknownDive) {
			t.Errorf("late dive seen inside the snapshot: %v", err)
		}
		if p, err := s.ProfileOf(ctx, late.ID); err != nil || p != nil {
			t.Errorf("late dive's profile inside the snapshot: %v, %v", p, err)
		}
		if c, err := s.DiveCycles(ctx, late.ID); err != nil || len(c) != 0 {
			t.Errorf("late dive's cycles inside the snapshot: %v, %v", c, err)
		}
		if d, err := s.DiveDamageOf(ctx, late.ID); err != nil || len(d) != 0 {
			t.Errorf("late dive's damage inside the snapshot: %v, %v", d, err)
		}
		if hits, _, err := s.HitsOf(ctx, late.ID); err == nil && len(hits) != 0 {
			t.Errorf("late dive's hits inside the snapshot: %d, %v", len(hits), err)
		}
		if e, err := s.EvidenceOf(ctx, late.ID); err == nil && e != nil {
			t.Errorf("late dive's evidence inside the snapshot: %+v", e)
		}
		if _, err := s.FitnessOf(ctx, h, time.Now()); !errors.Is(err, ledger.ErrSnapshotWrite) {
			t.Errorf("FitnessOf (records the status) inside a snapshot: %v, want ErrSnapshotWrite", err)
		}
		if _, err := s.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: sp, AE: hp, Latitude: &lat}); !errors.Is(err, ledger.ErrSnapshotWrite) {
			t.Errorf("LogDive inside a snapshot: %v, want ErrSnapshotWrite", err)
		}
		if v, err := s.Verify(ctx); err != nil || !v.OK {
			t.Errorf("verify inside the snapshot: %+v, %v", v, err)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	after := readView(t, ctx, l, old)
	if after.dives != before.dives+1 || int64(after.damage) != after.summary || after.damage != before.damage+1 || after.seq <= before.seq {
		t.Fatalf("after the snapshot %+v, want the late dive counted (before %+v)", after, before)
	}
	if _, err := l.Dive(ctx, late.ID.String()); err != nil {
		t.Fatal(err)
	}
}

// TestSnapshotReturnsFnError: fn's error comes back as it is.
func TestSnapshotReturnsFnError(t *testing.T) {
	l := newLedger(t, 0)
	want := errors.New("report failed")
	if err := l.Snapshot(context.Background(), func(*ledger.Ledger) error { return want }); err != want {
		t.Fatalf("got %v, want fn's own error", err)
	}
}
