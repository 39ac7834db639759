package ledger_test

import (
	"context"
	"crypto/ed25519"
	"crypto/sha256"
	"encoding/base64"
	"encoding/hex"
	"errors"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/tern/v2/migrate"

	"hulltally/ledger"
	"hulltally/ledger/ledgertest"
	"hulltally/migrations"
)

const zeros64 = "0000000000000000000000000000000000000000000000000000000000000000"

func fileSum(s string) []byte { b := sha256.Sum256([]byte(s)); return b[:] }

func issue(t *testing.T, l *ledger.Ledger, name, fp string) []byte {
	t.Helper()
	sum := fileSum(name)
	err := l.RegisterReport(context.Background(), ledger.IssuedReport{FileSHA256: sum, Kind: "hull", Subject: serial,
		Fingerprint: fp, GeneratedAt: mustTime("2026-05-02T10:00:00Z"), Pages: 3})
	if err != nil {
		t.Fatal(err)
	}
	return sum
}

func verifyRegister(t *testing.T, l *ledger.Ledger) (bool, string, string, int64) {
	t.Helper()
	ok, why, head, n, err := l.VerifyRegister(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return ok, why, head, n
}

func TestRegisterChained(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	if ok, why, head, n := verifyRegister(t, l); !ok || head != zeros64 || n != 0 {
		t.Fatalf("empty register: %v %q %s %d", ok, why, head, n)
	}
	a := issue(t, l, "report A", "fp-a")
	b := issue(t, l, "report B", "fp-b")
	issue(t, l, "report A", "fp-a") // idempotent: no new entry
	ok, why, head, n := verifyRegister(t, l)
	if !ok || n != 2 {
		t.Fatalf("register: %v %q length %d, want 2", ok, why, n)
	}
	var stored, prev []byte
	if err := l.Pool().QueryRow(ctx, "SELECT hash, prev_hash FROM issued_reports WHERE seq = 2").Scan(&stored, &prev); err != nil {
		t.Fatal(err)
	}
	if head != hex.EncodeToString(stored) {
		t.Errorf("head %s, stored hash of entry 2 %x", head, stored)
	}
	var first []byte
	if err := l.Pool().QueryRow(ctx, "SELECT hash FROM issued_reports WHERE seq = 1").Scan(&first); err != nil || string(first) != string(prev) {
		t.Errorf("entry 2's prev %x, entry 1's hash %x (%v)", prev, first, err)
	}
	for i, sum := range [][]byte{a, b} {
		r, err := l.IssuedReportOf(ctx, sum)
		if err != nil || r == nil {
			t.Fatalf("entry %d: %+v %v", i+1, r, err)
		}
		if !r.Chained || r.Seq != int64(i+1) || r.Note != "" {
			t.Errorf("entry %d: chained %v seq %d note %q", i+1, r.Chained, r.Seq, r.Note)
		}
	}
	if r, err := l.IssuedReportOf(ctx, fileSum("never issued")); r != nil || err != nil {
		t.Errorf("unissued file: %+v %v", r, err)
	}
}

// The issue's case: a PDF edited to read STATUS: FIT, and one row
// inserted into the register for its bytes. Each way of inserting it must
// leave the register refusing, so report verify never says "as issued".
func TestRegisterRowBehindChain(t *testing.T) {
	ctx := context.Background()
	at := mustTime("2026-05-02T10:00:00Z")
	rnd := sha256.Sum256([]byte("made up"))
	cases := []struct {
		name string
		ins  func(head []byte) (string, []any)
	}{
		{"no hash (posing as issued before the chain)", func([]byte) (string, []any) {
			return "", nil
		}},
		{"next seq, made-up hash", func(head []byte) (string, []any) {
			return ", seq, prev_hash, hash", []any{int64(3), head, rnd[:]}
		}},
		{"seq out of line, made-up hash", func(head []byte) (string, []any) {
			return ", seq, prev_hash, hash", []any{int64(7), head, rnd[:]}
		}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			l := newLedger(t, 0)
			good := issue(t, l, "report A", "fp-a")
			issue(t, l, "report B", "fp-b")
			var head []byte
			if err := l.Pool().QueryRow(ctx, "SELECT hash FROM issued_reports WHERE seq = 2").Scan(&head); err != nil {
				t.Fatal(err)
			}
			forged := fileSum("edited: STATUS: FIT")
			cols, extra := c.ins(head)
			args := append([]any{forged, "hull", serial, "fp-fit", at, 3, at}, extra...)
			ph := ""
			for i := 8; i <= len(args); i++ {
				ph += fmt.Sprintf(",$%d", i)
			}
			// A plain INSERT: the append-only guard does not stop it.
			if _, err := l.Pool().Exec(ctx, "INSERT INTO issued_reports (file_sha256, kind, subject, fingerprint, generated_at, pages, recorded_at"+cols+") VALUES ($1,$2,$3,$4,$5,$6,$7"+ph+")", args...); err != nil {
				t.Fatal(err)
			}
			if ok, why, _, _ := verifyRegister(t, l); ok || why == "" {
				t.Errorf("register with a row behind the chain verifies: %v %q", ok, why)
			}
			r, err := l.IssuedReportOf(ctx, forged)
			if r != nil || !errors.Is(err, ledger.ErrRegisterBroken) {
				t.Errorf("forged entry: %+v, %v; want refused with ErrRegisterBroken", r, err)
			}
			// Nor is a genuine entry vouched for by a broken register.
			if r, err := l.IssuedReportOf(ctx, good); r != nil || !errors.Is(err, ledger.ErrRegisterBroken) {
				t.Errorf("genuine entry in a broken register: %+v, %v", r, err)
			}
			// And no checkpoint vouches for it.
			_, priv := genKey(t)
			if _, err := l.Checkpoint(ctx, priv); !errors.Is(err, ledger.ErrRegisterBroken) {
				t.Errorf("checkpoint of a broken register: %v", err)
			}
		})
	}
}

func TestRegisterRewrittenEntry(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	issue(t, l, "report A", "fp-a")
	b := issue(t, l, "report B", "fp-b")
	rogue(t, l, func(tx pgx.Tx) error {
		_, err := tx.Exec(ctx, "UPDATE issued_reports SET fingerprint = 'fp-fit' WHERE file_sha256 = $1", b)
		return err
	})
	ok, why, _, _ := verifyRegister(t, l)
	if ok || !strings.Contains(why, "entry 2") || !strings.Contains(why, "rewritten") {
		t.Errorf("rewritten entry: %v %q", ok, why)
	}
}

func TestCheckpointCoversRegister(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	issue(t, l, "report A", "fp-a")
	b := issue(t, l, "report B", "fp-b")
	_, _, head, _ := verifyRegister(t, l)
	pub, priv := genKey(t)
	cp, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	if cp.Register == nil || cp.Register.Length != 2 || cp.Register.Head != head || cp.Register.LegacyCount != 0 {
		t.Fatalf("checkpoint register: %+v, head %s", cp.Register, head)
	}
	if !strings.HasPrefix(cp.Statement, "hulltally checkpoint v2\n") || !strings.HasSuffix(cp.Statement, "\nregister 2 "+head+"\nlegacy 0 "+cp.Register.LegacyDigest+"\n") {
		t.Errorf("statement:\n%s", cp.Statement)
	}
	// A later report extends the register.
	issue(t, l, "report C", "fp-c")
	r := verifyCP(t, l, cp, pub)
	if !r.OK || r.Register == nil || r.Register.State != ledger.CheckpointExtends || r.Register.LengthNow != 3 {
		t.Fatalf("extended register: %+v %+v", r, r.Register)
	}
	// Delete the checkpointed newest entry (B) and the one after it: the
	// register still walks cleanly, but the checkpoint finds it cut short.
	rogue(t, l, func(tx pgx.Tx) error {
		_, err := tx.Exec(ctx, "DELETE FROM issued_reports WHERE seq >= 2")
		return err
	})
	if ok, why, _, n := verifyRegister(t, l); !ok || n != 1 {
		t.Fatalf("truncated register walks: %v %q %d (the walk alone cannot see a cut at the end)", ok, why, n)
	}
	r = verifyCP(t, l, cp, pub)
	if r.OK || r.Register == nil || r.Register.State != ledger.CheckpointTruncated || !strings.Contains(r.Reason, "removed") {
		t.Fatalf("truncated register: ok %v %q %+v", r.OK, r.Reason, r.Register)
	}
	if got, err := l.IssuedReportOf(ctx, b); got != nil || err != nil {
		t.Errorf("deleted entry: %+v %v", got, err)
	}
}

func TestCheckpointRegisterRewritten(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	issue(t, l, "report A", "fp-a")
	issue(t, l, "report B", "fp-b")
	pub, priv := genKey(t)
	cp, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	// The register rebuilt with entry 1 changed and every hash
	// recomputed: the walk holds, the checkpoint does not.
	rogue(t, l, func(tx pgx.Tx) error {
		_, err := tx.Exec(ctx, "DELETE FROM issued_reports")
		return err
	})
	issue(t, l, "report A", "fp-fit")
	issue(t, l, "report B", "fp-b")
	if ok, why, _, n := verifyRegister(t, l); !ok || n != 2 {
		t.Fatalf("rebuilt register: %v %q %d", ok, why, n)
	}
	r := verifyCP(t, l, cp, pub)
	if r.OK || r.Register.State != ledger.CheckpointRewritten {
		t.Fatalf("rebuilt register: ok %v %q %+v", r.OK, r.Reason, r.Register)
	}
}

// A checkpoint made before the register was chained (statement v1) still
// verifies: written here literally as such a checkpoint was made.
func TestCheckpointV1StillVerifies(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	logDive(t, l, serial, "2026-05-01")
	id := hullID(t, l, serial)
	head, n, err := l.ChainHead(ctx, id)
	if err != nil {
		t.Fatal(err)
	}
	pub, priv := genKey(t)
	// The root by RFC 6962 §2.1 over one leaf: SHA-256(0x00 ‖ leaf); the
	// leaf is taken from a v2 checkpoint of the same ledger.
	cp2, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	at := time.Now().UTC().Truncate(time.Microsecond)
	cp := &ledger.Checkpoint{Seq: 2, Time: at, Prev: cp2.Hash, Root: cp2.Root, Hulls: cp2.Hulls}
	cp.Statement = fmt.Sprintf("hulltally checkpoint v1\nseq 2\ntime %s\nprev %s\nroot %s\nhulls 1\nhull %s %s %d %s\n",
		at.Format("2006-01-02T15:04:05.000000Z"), cp.Prev, cp.Root, id, serial, n, hexs(head))
	sig := ed25519.Sign(priv, []byte(cp.Statement))
	sum := sha256.Sum256([]byte(cp.Statement))
	cp.Signature, cp.PublicKey, cp.Hash = base64.StdEncoding.EncodeToString(sig), base64.StdEncoding.EncodeToString(pub), hex.EncodeToString(sum[:])
	root, _ := hex.DecodeString(cp.Root)
	prev, _ := hex.DecodeString(cp.Prev)
	if _, err := l.Pool().Exec(ctx, `INSERT INTO checkpoints (id, statement, root, prev_hash, hash, signature, public_key, recorded_at)
		VALUES (2, $1, $2, $3, $4, $5, $6, $7)`, cp.Statement, root, prev, sum[:], sig, []byte(pub), at); err != nil {
		t.Fatal(err)
	}
	r := verifyCP(t, l, cp, pub)
	if !r.OK || !r.SignatureOK || !r.Recorded || r.Register != nil {
		t.Fatalf("v1 checkpoint: %+v", r)
	}
	// A v2 checkpoint stripped of its register lines is refused: the
	// signed statement says otherwise.
	stripped := *cp2
	stripped.Register = nil
	if r := verifyCP(t, l, &stripped, pub); r.OK || r.SignatureOK {
		t.Errorf("v2 checkpoint without its register: %+v", r)
	}
	// A dive logged after the v1 checkpoint: it still extends.
	logDive(t, l, serial, "2026-05-03")
	if r := verifyCP(t, l, cp, pub); !r.OK {
		t.Errorf("v1 checkpoint after a dive: %q", r.Reason)
	}
}

// A ledger whose register held entries before migration 007: they stay
// legacy (not chained, said so), the seal vouches for them as a set, and a
// row posing as one of them is refused.
func TestRegisterLegacyRows(t *testing.T) {
	ctx := context.Background()
	url := srv.NewDatabase(t, false)
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	m, err := migrate.NewMigrator(ctx, conn, "public.hulltally_schema_version")
	if err != nil {
		t.Fatal(err)
	}
	if err := m.LoadMigrations(migrations.FS); err != nil {
		t.Fatal(err)
	}
	if err := m.MigrateTo(ctx, 6); err != nil {
		t.Fatal(err)
	}
	old := []struct {
		name, fp string
		at       time.Time
	}{
		{"legacy one", "fp-l1", mustTime("2026-04-01T08:00:00.123456Z")},
		{"legacy two ünïcode", "fp-l2", mustTime("2026-04-02T09:30:00Z")},
	}
	for _, o := range old {
		if _, err := conn.Exec(ctx, `INSERT INTO issued_reports (file_sha256, kind, subject, fingerprint, generated_at, pages, recorded_at)
			VALUES ($1, 'hull', $2, $3, $4, 2, $5)`, fileSum(o.name), "EX-ü "+o.name, o.fp, o.at, o.at.Add(time.Second)); err != nil {
			t.Fatal(err)
		}
	}
	conn.Close(ctx)
	l, err := ledger.Open(ctx, ledgertest.Config(t, url)) // applies 007
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(l.Close)
	if ok, why, head, n := verifyRegister(t, l); !ok || n != 0 || head != zeros64 {
		t.Fatalf("register after migration: %v %q %s %d", ok, why, head, n)
	}
	r, err := l.IssuedReportOf(ctx, fileSum("legacy one"))
	if err != nil || r == nil || r.Chained || r.Seq != 0 || r.Note != ledger.LegacyReportNote || r.Fingerprint != "fp-l1" {
		t.Fatalf("legacy entry: %+v %v", r, err)
	}
	c := issue(t, l, "new report", "fp-new")
	if r, err := l.IssuedReportOf(ctx, c); err != nil || r == nil || !r.Chained || r.Seq != 1 {
		t.Fatalf("first chained entry after legacy ones: %+v %v", r, err)
	}
	_, priv := genKey(t)
	cp, err := l.Checkpoint(ctx, priv)
	if err != nil {
		t.Fatal(err)
	}
	if cp.Register.LegacyCount != 2 || cp.Register.Length != 1 {
		t.Errorf("checkpoint register: %+v", cp.Register)
	}
	t.Run("row posing as legacy", func(t *testing.T) {
		forged := fileSum("edited: STATUS: FIT")
		at := mustTime("2026-04-01T08:00:00Z") // dated before the migration
		if _, err := l.Pool().Exec(ctx, `INSERT INTO issued_reports (file_sha256, kind, subject, fingerprint, generated_at, pages, recorded_at)
			VALUES ($1, 'hull', 'x', 'fp-fit', $2, 2, $2)`, forged, at); err != nil {
			t.Fatal(err)
		}
		ok, why, _, _ := verifyRegister(t, l)
		if ok || !strings.Contains(why, "legacy seal") {
			t.Errorf("row posing as legacy: %v %q", ok, why)
		}
		if r, err := l.IssuedReportOf(ctx, forged); r != nil || !errors.Is(err, ledger.ErrRegisterBroken) {
			t.Errorf("row posing as legacy: %+v %v", r, err)
		}
		rogue(t, l, func(tx pgx.Tx) error {
			_, err := tx.Exec(ctx, "DELETE FROM issued_reports WHERE file_sha256 = $1", forged)
			return err
		})
		if ok, why, _, _ := verifyRegister(t, l); !ok {
			t.Fatalf("after removing it: %q", why)
		}
	})
	t.Run("legacy entry rewritten", func(t *testing.T) {
		rogue(t, l, func(tx pgx.Tx) error {
			_, err := tx.Exec(ctx, "UPDATE issued_reports SET fingerprint = 'fp-fit' WHERE file_sha256 = $1", fileSum("legacy two ünïcode"))
			return err
		})
		if ok, why, _, _ := verifyRegister(t, l); ok || !strings.Contains(why, "legacy seal") {
			t.Errorf("legacy entry rewritten: %v %q", ok, why)
		}
	})
}
