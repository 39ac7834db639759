package ledger_test

import (
	"context"
	"crypto/ed25519"
	"crypto/rand"
	"encoding/json"
	"errors"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
)

const serial2 = "EX-C4000-02"

func genKey(t *testing.T) (ed25519.PublicKey, ed25519.PrivateKey) {
	t.Helper()
	pub, priv, err := ed25519.GenerateKey(rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	return pub, priv
}

func hullID(t *testing.T, l *ledger.Ledger, s string) uuid.UUID {
	t.Helper()
	var id uuid.UUID
	if err := l.Pool().QueryRow(context.Background(), "SELECT id FROM hulls WHERE serial = $1", s).Scan(&id); err != nil {
		t.Fatal(err)
	}
	return id
}

func logDive(t *testing.T, l *ledger.Ledger, hull, day string) *ledger.Dive {
	t.Helper()
	d, err := l.LogDive(context.Background(), ledger.LogRequest{Hull: hull,
		Samples: writeFile(t, "d.csv", strings.ReplaceAll(goodDive, "2026-05-01", day)),
		AE:      writeFile(t, "h.csv", strings.ReplaceAll(goodHits, "2026-05-01", day))})
	if err != nil {
		t.Fatal(err)
	}
	return d
}

func addSecondHull(t *testing.T, l *ledger.Ledger) {
	t.Helper()
	h := exampleSpec(t)
	h.Serial = serial2
	if _, err := l.AddHull(context.Background(), h, ledger.AddHullOptions{}); err != nil {
		t.Fatal(err)
	}
}

// rogue runs fn as an administrator who has switched the append-only
// guard off, and switches it on again afterwards to cover the tracks
// (verify would report a guard left off).
func rogue(t *testing.T, l *ledger.Ledger, fn func(tx pgx.Tx) error) {
	t.Helper()
	ctx := context.Background()
	tables := uniqueTables(append([]string{"checkpoints"}, ledgerTables...))
	err := pgx.BeginFunc(ctx, l.Pool(), func(tx pgx.Tx) error {
		for _, tb := range tables {
			if _, err := tx.Exec(ctx, "ALTER TABLE "+tb+" DISABLE TRIGGER USER"); err != nil {
				return err
			}
		}
		return fn(tx)
	})
	if err != nil {
		t.Fatal(err)
	}
	// Guards back on, after the deferred checks of the tampering ran.
	err = pgx.BeginFunc(ctx, l.Pool(), func(tx pgx.Tx) error {
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
}

// deleteWhere deletes the rows of every ledger table whose column col
// equals v, the referring tables first.
func deleteWhere(ctx context.Context, tx pgx.Tx, col string, v any) error {
	// The derived fleet summary goes too (it references the hull).
	tables := append(slices.Clone(ledgerTables), "fleet_summary")
	for i := len(tables) - 1; i >= 0; i-- {
		tb := tables[i]
		var has bool
		if err := tx.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM information_schema.columns WHERE table_schema = current_schema() AND table_name = $1 AND column_name = $2)", tb, col).Scan(&has); err != nil {
			return err
		}
		if has {
			if _, err := tx.Exec(ctx, "DELETE FROM "+tb+" WHERE "+col+" = $1", v); err != nil {
				return err
			}
		}
	}
	return nil
}

func verifyCP(t *testing.T, l *ledger.Ledger, cp *ledger.Checkpoint, pub ed25519.PublicKey) *ledger.CheckpointResult {
	t.Helper()
	r, err := l.VerifyCheckpoint(context.Background(), cp, pub)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

func plainVerify(t *testing.T, l *ledger.Ledger) *ledger.VerifyResult {
	t.Helper()
	res, err := l.Verify(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return res
}

func TestCheckpointUntouched(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	logDive(t, l, serial, "2026-05-01")
	pub, priv := genKey(t)
	cp, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	id := hullID(t, l, serial)
	head, n, err := l.ChainHead(ctx, id)
	if err != nil {
		t.Fatal(err)
	}
	if cp.Seq != 1 || cp.Prev != strings.Repeat("0", 64) || len(cp.Hulls) != 1 {
		t.Fatalf("first checkpoint: seq %d prev %s hulls %d", cp.Seq, cp.Prev, len(cp.Hulls))
	}
	if h := cp.Hulls[0]; h.Hull != id || h.Serial != serial || h.Length != n || h.Length < 2 || h.Head != hexs(head) {
		t.Fatalf("entry %+v; chain head %x length %d", h, head, n)
	}
	if !strings.HasPrefix(cp.Statement, ledger.CheckpointVersion+"\nseq 1\n") || !strings.Contains(cp.Statement, "\nroot "+cp.Root+"\n") {
		t.Errorf("statement:\n%s", cp.Statement)
	}
	// Through the checkpoint log's JSON and back.
	line, err := json.Marshal(cp)
	if err != nil {
		t.Fatal(err)
	}
	var back ledger.Checkpoint
	if err := json.Unmarshal(line, &back); err != nil {
		t.Fatal(err)
	}
	r := verifyCP(t, l, &back, pub)
	if !r.OK || !r.SignatureOK || !r.Recorded || r.Chain == nil || !r.Chain.OK || len(r.Hulls) != 1 || r.Hulls[0].State != ledger.CheckpointExtends || len(r.New) != 0 {
		t.Fatalf("untouched ledger: %+v", r)
	}

	// The ledger grows: a dive on the hull, a new hull. The checkpoint
	// still holds; the hull extends it, the new hull is listed as new.
	logDive(t, l, serial, "2026-05-02")
	addSecondHull(t, l)
	r = verifyCP(t, l, cp, pub)
	if !r.OK || r.Hulls[0].State != ledger.CheckpointExtends || r.Hulls[0].LengthNow <= n || len(r.New) != 1 || r.New[0].Serial != serial2 {
		t.Fatalf("grown ledger: %+v", r)
	}
	// The second checkpoint follows the first.
	cp2, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	if cp2.Seq != 2 || cp2.Prev != cp.Hash || len(cp2.Hulls) != 2 {
		t.Fatalf("second checkpoint: seq %d prev %s (first %s) hulls %d", cp2.Seq, cp2.Prev, cp.Hash, len(cp2.Hulls))
	}
	rs, err := l.VerifyCheckpoints(ctx, []*ledger.Checkpoint{cp, cp2}, pub)
	if err != nil || !rs[0].OK || !rs[1].OK {
		t.Fatalf("both checkpoints: %v %+v %+v", err, rs[0], rs[1])
	}
}

func hexs(b []byte) string {
	const digits = "0123456789abcdef"
	out := make([]byte, 0, 2*len(b))
	for _, c := range b {
		out = append(out, digits[c>>4], digits[c&15])
	}
	return string(out)
}

// TestCheckpointTruncation: the hull's newest dive removed with its chain
// rows (the chain cut back to before it) is found.
func TestCheckpointTruncation(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	id := hullID(t, l, serial)
	logDive(t, l, serial, "2026-05-01")
	_, n1, _ := l.ChainHead(ctx, id)
	d2 := logDive(t, l, serial, "2026-05-02")
	pub, priv := genKey(t)
	cp, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	rogue(t, l, func(tx pgx.Tx) error {
		if err := deleteWhere(ctx, tx, "dive_id", d2.ID); err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, "DELETE FROM dives WHERE id = $1", d2.ID); err != nil {
			return err
		}
		_, err := tx.Exec(ctx, "DELETE FROM audit_chain WHERE hull_id = $1 AND seq > $2", id, n1)
		return err
	})
	r := verifyCP(t, l, cp, pub)
	if r.OK || r.Hulls[0].State != ledger.CheckpointTruncated || r.Hulls[0].LengthNow != n1 {
		t.Fatalf("truncation not found: %+v", r)
	}
}

// TestCheckpointHullRemoved: a whole hull removed with its chain, which
// plain verify cannot see, is found.
func TestCheckpointHullRemoved(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	addSecondHull(t, l)
	logDive(t, l, serial, "2026-05-01")
	logDive(t, l, serial2, "2026-05-03")
	pub, priv := genKey(t)
	cp, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	id2 := hullID(t, l, serial2)
	rogue(t, l, func(tx pgx.Tx) error {
		if err := deleteWhere(ctx, tx, "hull_id", id2); err != nil {
			return err
		}
		_, err := tx.Exec(ctx, "DELETE FROM hulls WHERE id = $1", id2)
		return err
	})
	// Plain verify sees nothing: the hull and its chain are gone together.
	if res := plainVerify(t, l); !res.OK {
		t.Fatalf("the hull's removal should be invisible to plain verify (the attack this guards against): %+v", res.FirstBroken)
	}
	r := verifyCP(t, l, cp, pub)
	if r.OK {
		t.Fatalf("removed hull not found: %+v", r)
	}
	states := map[string]string{}
	for _, h := range r.Hulls {
		states[h.Serial] = h.State
	}
	if states[serial2] != ledger.CheckpointMissing || states[serial] != ledger.CheckpointExtends {
		t.Fatalf("states %v", states)
	}
}

// rewriteDive edits the hull's first dive and recomputes every hash of
// the hull's chain, as an administrator hiding the edit would.
func rewriteDive(t *testing.T, l *ledger.Ledger, id uuid.UUID) {
	t.Helper()
	ctx := context.Background()
	rogue(t, l, func(tx pgx.Tx) error {
		tag, err := tx.Exec(ctx, "UPDATE dives SET max_depth_m = 20 WHERE hull_id = $1", id)
		if err != nil {
			return err
		}
		if tag.RowsAffected() == 0 {
			return errors.New("no dive rewritten")
		}
		return ledger.RecomputeChainForTest(ctx, tx, id)
	})
}

// TestCheckpointRewriteBefore: a dive rewritten and every later hash
// recomputed passes plain verify, and is found by a checkpoint made
// after the dive.
func TestCheckpointRewriteBefore(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	id := hullID(t, l, serial)
	logDive(t, l, serial, "2026-05-01")
	pub, priv := genKey(t)
	cp, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	rewriteDive(t, l, id)
	if res := plainVerify(t, l); !res.OK {
		t.Fatalf("the recomputed chain should pass plain verify (the attack this guards against): %+v", res.FirstBroken)
	}
	r := verifyCP(t, l, cp, pub)
	if r.OK || r.Hulls[0].State != ledger.CheckpointRewritten {
		t.Fatalf("rewrite before the checkpoint not found: %+v", r)
	}
}

// TestCheckpointRewriteAfter states the limit: a dive appended after the
// newest checkpoint, then rewritten with the chain recomputed, is beyond
// the checkpoint's reach. The hull is reported as extending it (its
// checkpointed prefix is untouched); only a later checkpoint could show
// the rewrite.
func TestCheckpointRewriteAfter(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	id := hullID(t, l, serial)
	pub, priv := genKey(t)
	cp, err := l.Checkpoint(ctx, priv) // the hull's records only, no dive yet
	if err != nil {
		t.Fatal(err)
	}
	logDive(t, l, serial, "2026-05-01")
	rewriteDive(t, l, id)
	if res := plainVerify(t, l); !res.OK {
		t.Fatalf("recomputed chain: %+v", res.FirstBroken)
	}
	r := verifyCP(t, l, cp, pub)
	if !r.OK || r.Hulls[0].State != ledger.CheckpointExtends {
		t.Fatalf("a rewrite after the checkpoint is not within its reach, and should read as extends: %+v", r)
	}
}

// TestCheckpointRefused: another key, a tampered statement, fields that
// disagree with the statement, and a ledger that does not verify.
func TestCheckpointRefused(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	logDive(t, l, serial, "2026-05-01")
	pub, priv := genKey(t)
	cp, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	otherPub, otherPriv := genKey(t)
	forged, err := l.Checkpoint(ctx, otherPriv)
	if err != nil {
		t.Fatal(err)
	}
	clone := func(f func(c *ledger.Checkpoint)) *ledger.Checkpoint {
		c := *cp
		c.Hulls = append([]ledger.CheckpointHull(nil), cp.Hulls...)
		f(&c)
		return &c
	}
	cases := []struct {
		name string
		cp   *ledger.Checkpoint
		key  ed25519.PublicKey
		why  string
	}{
		{"verified with another key", cp, otherPub, "another signing key"},
		{"signed by another key, embedded key dropped", clone(func(c *ledger.Checkpoint) { c.PublicKey = "" }), otherPub, "does not verify"},
		{"signed by another key", forged, pub, "another signing key"},
		{"statement length raised", clone(func(c *ledger.Checkpoint) {
			c.Statement = strings.Replace(c.Statement, " "+itoa(c.Hulls[0].Length)+" ", " "+itoa(c.Hulls[0].Length-1)+" ", 1)
		}), pub, "does not verify"},
		{"field changed, statement kept", clone(func(c *ledger.Checkpoint) { c.Hulls[0].Length-- }), pub, "root"},
		{"time changed, statement kept", clone(func(c *ledger.Checkpoint) { c.Time = c.Time.Add(time.Microsecond) }), pub, "differ"},
		{"time changed below the statement's microsecond", clone(func(c *ledger.Checkpoint) { c.Time = c.Time.Add(1) }), pub, "differ"},
		{"hash changed", clone(func(c *ledger.Checkpoint) { c.Hash = strings.Repeat("0", 64) }), pub, "hash"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			r := verifyCP(t, l, tc.cp, tc.key)
			if r.OK || r.SignatureOK || !strings.Contains(r.Reason, tc.why) {
				t.Fatalf("not refused as %q: %+v", tc.why, r)
			}
		})
	}
	if _, err := l.VerifyCheckpoint(ctx, cp, ed25519.PublicKey{1, 2, 3}); err == nil {
		t.Error("a 3-byte key was taken")
	}

	// A broken chain is not signed.
	rogue(t, l, func(tx pgx.Tx) error {
		_, err := tx.Exec(ctx, "UPDATE dives SET max_depth_m = 40")
		return err
	})
	if _, err := l.Checkpoint(ctx, priv); !errors.Is(err, ledger.ErrChainBroken) {
		t.Fatalf("checkpoint of a broken ledger: %v", err)
	}
	// The checkpoint table's own chain: a checkpoint row removed.
	rogue(t, l, func(tx pgx.Tx) error {
		_, err := tx.Exec(ctx, "DELETE FROM checkpoints WHERE id = 1")
		return err
	})
	r := verifyCP(t, l, forged, otherPub)
	if r.OK || r.Recorded {
		t.Fatalf("checkpoint table with its first row removed: %+v", r)
	}
}

func itoa(n int64) string { b, _ := json.Marshal(n); return string(b) }

// uniqueTables drops repeated table names, keeping the first.
func uniqueTables(ts []string) []string {
	seen := map[string]bool{}
	var out []string
	for _, t := range ts {
		if !seen[t] {
			seen[t] = true
			out = append(out, t)
		}
	}
	return out
}
