package ledger

import (
	"bytes"
	"context"
	"crypto"
	"crypto/ecdsa"
	"crypto/ed25519"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/sha256"
	"crypto/x509"
	"encoding/base64"
	"encoding/hex"
	"errors"
	"fmt"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/ledger/merkle"
)

// A signed checkpoint states, at one snapshot, every hull's chain head
// and length, with a Merkle root (RFC 6962 §2.1) over the hulls, signed
// by the operator's Ed25519 key. Kept outside the database, it anchors
// the chains: a later VerifyCheckpoint finds a chain cut short, a hull
// removed, or records rewritten with every later hash recomputed (which
// plain Verify cannot see) — as long as the change touches a record the
// checkpoint covers. A rewrite of records appended after the newest
// checkpoint is beyond it: only a later checkpoint, or the report
// fingerprints, can show it.

// CheckpointVersion is the first line of every checkpoint statement
// made now. A v2 statement adds, after the hull lines, the register of
// issued reports: "register <length> <head hex>" and "legacy <count>
// <digest hex>" (the legacy seal, see migration 007).
const CheckpointVersion = "hulltally checkpoint v2"

// CheckpointVersionV1 is the first line of a checkpoint statement made
// before the register was chained: it covers the hulls' chains only, and
// still verifies.
const CheckpointVersionV1 = "hulltally checkpoint v1"

// lockCheckpoint is the pg_advisory_xact_lock class that keeps the
// checkpoints table's own chain linear (key 0).
const lockCheckpoint = 40

// ErrChainBroken is returned by Checkpoint when the ledger does not
// verify: a checkpoint would vouch for a broken chain.
var ErrChainBroken = errors.New("the ledger's audit chain does not verify")

// CheckpointHull is one hull's entry in a checkpoint.
type CheckpointHull struct {
	// Hull is the hull's id.
	Hull uuid.UUID `json:"hull"`
	// Serial is the hull's serial.
	Serial string `json:"serial"`
	// Length is the number of records in the hull's chain (the seq of
	// its newest link; 0 for an empty chain).
	Length int64 `json:"length"`
	// Head is the hex SHA-256 of the newest link (64 zeros when empty).
	Head string `json:"head"`
}

// Checkpoint is a signed statement of every hull's chain head. Statement
// holds the exact signed text; the other fields are what it says, and a
// checkpoint whose fields and statement disagree is refused.
type Checkpoint struct {
	// Seq numbers the checkpoints of a ledger from 1.
	Seq int64 `json:"seq"`
	// Time is taken before the snapshot is opened: every record committed
	// before Time is covered.
	Time time.Time `json:"time"`
	// Prev is the hex hash of the previous checkpoint (64 zeros first).
	Prev string `json:"prev"`
	// Root is the hex Merkle root over the hulls' canonical entries, in
	// hull id order.
	Root string `json:"root"`
	// Hulls are the hulls' entries, sorted by hull id.
	Hulls []CheckpointHull `json:"hulls"`
	// Register is the register of issued reports as checkpointed; nil in
	// a v1 checkpoint (which does not cover the register).
	Register *CheckpointRegister `json:"register,omitempty"`
	// Statement is the signed text.
	Statement string `json:"statement"`
	// Signature is the standard base64 Ed25519 signature of Statement.
	Signature string `json:"signature"`
	// PublicKey is the standard base64 Ed25519 public key that signed.
	PublicKey string `json:"public_key"`
	// Hash is the hex SHA-256 of Statement: the next checkpoint's Prev.
	Hash string `json:"hash"`
}

// CheckpointRegister is the register of issued reports in a checkpoint.
type CheckpointRegister struct {
	// Length is the number of chained entries (the seq of the newest).
	Length int64 `json:"length"`
	// Head is the hex hash of the newest chained entry (64 zeros when
	// none).
	Head string `json:"head"`
	// LegacyCount and LegacyDigest are the legacy seal: the number of
	// entries issued before the register was chained, and the hex digest
	// over them.
	LegacyCount  int64  `json:"legacy_count"`
	LegacyDigest string `json:"legacy_digest"`
}

// checkpointLeaf is the canonical bytes of one hull's entry: a Merkle
// leaf.
func checkpointLeaf(h CheckpointHull) ([]byte, error) {
	head, err := hex.DecodeString(h.Head)
	if err != nil || len(head) != sha256.Size {
		return nil, fmt.Errorf("hull %s: head %q is not a hex SHA-256", h.Hull, h.Head)
	}
	c := newCanon("checkpoint_hull")
	c.uuid(h.Hull)
	c.str(h.Serial)
	c.i64(h.Length)
	c.bytes(head)
	return c.b, nil
}

// checkpointRoot is the Merkle root over the hulls, which must be sorted
// by id without repeats.
func checkpointRoot(hulls []CheckpointHull) (merkle.Hash, error) {
	leaves := make([][]byte, len(hulls))
	for i, h := range hulls {
		if i > 0 && bytes.Compare(hulls[i-1].Hull[:], h.Hull[:]) >= 0 {
			return merkle.Hash{}, fmt.Errorf("hulls not in strict id order at %s", h.Hull)
		}
		b, err := checkpointLeaf(h)
		if err != nil {
			return merkle.Hash{}, err
		}
		leaves[i] = b
	}
	return merkle.Root(leaves), nil
}

// statement renders the text that is signed: one field a line, then one
// line per hull ("hull <id> <serial> <length> <head>"), each line ending
// in a newline. Serials hold no spaces (the hulls table's check).
func (cp *Checkpoint) statement() string {
	var b strings.Builder
	if cp.Register == nil {
		b.WriteString(CheckpointVersionV1 + "\n")
	} else {
		b.WriteString(CheckpointVersion + "\n")
	}
	fmt.Fprintf(&b, "seq %d\n", cp.Seq)
	fmt.Fprintf(&b, "time %s\n", cp.Time.UTC().Format("2006-01-02T15:04:05.000000Z"))
	fmt.Fprintf(&b, "prev %s\n", cp.Prev)
	fmt.Fprintf(&b, "root %s\n", cp.Root)
	fmt.Fprintf(&b, "hulls %d\n", len(cp.Hulls))
	for _, h := range cp.Hulls {
		fmt.Fprintf(&b, "hull %s %s %d %s\n", h.Hull, h.Serial, h.Length, h.Head)
	}
	if r := cp.Register; r != nil {
		fmt.Fprintf(&b, "register %d %s\n", r.Length, r.Head)
		fmt.Fprintf(&b, "legacy %d %s\n", r.LegacyCount, r.LegacyDigest)
	}
	return b.String()
}

// checkStatement checks a checkpoint against pub: the key it names, the
// signature over Statement, and that Statement, Root and Hash are what
// the fields say. It returns why the checkpoint is refused, or "".
func (cp *Checkpoint) checkStatement(pub crypto.PublicKey) string {
	if cp.PublicKey != "" {
		embedded, err := base64.StdEncoding.DecodeString(cp.PublicKey)
		want, kerr := publicKeyBytes(pub)
		if err != nil || kerr != nil || !bytes.Equal(embedded, want) {
			return "the checkpoint names another signing key than the one given"
		}
	}
	sig, err := base64.StdEncoding.DecodeString(cp.Signature)
	if err != nil {
		return "the checkpoint's signature is not base64"
	}
	if !verifyStatement(pub, []byte(cp.Statement), sig) {
		return "the signature does not verify under the given key (signed by another key, or the statement was altered)"
	}
	root, err := checkpointRoot(cp.Hulls)
	if err != nil {
		return "the checkpoint's hull list is malformed: " + err.Error()
	}
	if r := cp.Register; r != nil {
		if !isHexHash(r.Head) || !isHexHash(r.LegacyDigest) || r.Length < 0 || r.LegacyCount < 0 {
			return "the checkpoint's register entry is malformed"
		}
	}
	if hex.EncodeToString(root[:]) != cp.Root {
		return "the checkpoint's Merkle root is not that of its hulls"
	}
	if cp.Time.Nanosecond()%1000 != 0 || cp.statement() != cp.Statement {
		return "the checkpoint's fields differ from its signed statement"
	}
	sum := sha256.Sum256([]byte(cp.Statement))
	if hex.EncodeToString(sum[:]) != cp.Hash {
		return "the checkpoint's hash is not the SHA-256 of its statement"
	}
	return ""
}

// isHexHash: s is a lower-case hex SHA-256.
func isHexHash(s string) bool {
	b, err := hex.DecodeString(s)
	return err == nil && len(b) == sha256.Size && hex.EncodeToString(b) == s
}

// readHeads reads every hull's chain head and length in one statement
// (one snapshot), sorted by hull id.
func readHeads(ctx context.Context, q querier) ([]CheckpointHull, error) {
	rows, err := q.Query(ctx, `SELECT h.id, h.serial, coalesce(c.seq, 0), coalesce(c.hash, '\x0000000000000000000000000000000000000000000000000000000000000000'::bytea)
		FROM hulls h LEFT JOIN LATERAL (SELECT seq, hash FROM audit_chain WHERE hull_id = h.id ORDER BY seq DESC LIMIT 1) c ON true`)
	if err != nil {
		return nil, fmt.Errorf("checkpoint: reading chain heads: %w", err)
	}
	defer rows.Close()
	var out []CheckpointHull
	for rows.Next() {
		var h CheckpointHull
		var head []byte
		if err := rows.Scan(&h.Hull, &h.Serial, &h.Length, &head); err != nil {
			return nil, fmt.Errorf("checkpoint: reading chain heads: %w", err)
		}
		h.Head = hex.EncodeToString(head)
		out = append(out, h)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("checkpoint: reading chain heads: %w", err)
	}
	sort.Slice(out, func(i, j int) bool { return bytes.Compare(out[i].Hull[:], out[j].Hull[:]) < 0 })
	return out, nil
}

// Checkpoint states every hull's chain head and length, read at one
// snapshot, signs the statement with key and appends it to the ledger's
// checkpoints table (chained to the previous checkpoint). It first
// verifies the whole ledger in the same snapshot and refuses, with
// ErrChainBroken, to sign a ledger that does not verify. The caller keeps
// the returned checkpoint outside the database as well (the checkpoint
// log file): the copy in the table alone proves nothing against whoever
// can rewrite the database.
func (l *Ledger) Checkpoint(ctx context.Context, key crypto.Signer) (*Checkpoint, error) {
	if err := l.writable("Checkpoint"); err != nil {
		return nil, err
	}
	pubBytes, err := publicKeyBytes(key.Public())
	if err != nil {
		return nil, &InputError{Err: fmt.Errorf("checkpoint: %w", err)}
	}
	at := now()
	var heads []CheckpointHull
	var reg *CheckpointRegister
	err = l.Snapshot(ctx, func(s *Ledger) error {
		res, err := s.Verify(ctx)
		if err != nil {
			return err
		}
		if !res.OK {
			b := res.FirstBroken
			return fmt.Errorf("checkpoint refused: %w (hull %s, record %d, %s %s: %s); a checkpoint would vouch for it", ErrChainBroken, b.Hull, b.Seq, b.Kind, b.Key, b.Reason)
		}
		st, err := walkRegister(ctx, s.db)
		if err != nil {
			return err
		}
		if !st.ok {
			return fmt.Errorf("checkpoint refused: %w: %s; a checkpoint would vouch for it", ErrRegisterBroken, st.why)
		}
		reg = &CheckpointRegister{Length: st.length, Head: st.head, LegacyCount: st.seal.Count, LegacyDigest: st.seal.Digest}
		heads, err = readHeads(ctx, s.db)
		return err
	})
	if err != nil {
		return nil, err
	}
	root, err := checkpointRoot(heads)
	if err != nil {
		return nil, fmt.Errorf("checkpoint: %w", err)
	}
	cp := &Checkpoint{Time: at, Root: hex.EncodeToString(root[:]), Hulls: heads, Register: reg, PublicKey: base64.StdEncoding.EncodeToString(pubBytes)}
	if cp.Hulls == nil {
		cp.Hulls = []CheckpointHull{}
	}
	err = pgx.BeginFunc(ctx, l.pool, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock($1, 0)", lockCheckpoint); err != nil {
			return fmt.Errorf("checkpoint: locking the checkpoints: %w", err)
		}
		prev := make([]byte, sha256.Size)
		var last int64
		err := tx.QueryRow(ctx, "SELECT id, hash FROM checkpoints ORDER BY id DESC LIMIT 1").Scan(&last, &prev)
		if err != nil && !errors.Is(err, pgx.ErrNoRows) {
			return fmt.Errorf("checkpoint: reading the previous checkpoint: %w", err)
		}
		cp.Seq, cp.Prev = last+1, hex.EncodeToString(prev)
		cp.Statement = cp.statement()
		sig, err := signStatement(key, []byte(cp.Statement))
		if err != nil {
			return fmt.Errorf("checkpoint: signing: %w", err)
		}
		cp.Signature = base64.StdEncoding.EncodeToString(sig)
		sum := sha256.Sum256([]byte(cp.Statement))
		cp.Hash = hex.EncodeToString(sum[:])
		_, err = tx.Exec(ctx, `INSERT INTO checkpoints (id, statement, root, prev_hash, hash, signature, public_key, recorded_at)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8)`, cp.Seq, cp.Statement, root[:], prev, sum[:], sig, pubBytes, now())
		if err != nil {
			return fmt.Errorf("checkpoint: recording checkpoint %d: %w", cp.Seq, err)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return cp, nil
}

// The states of a checkpointed hull.
const (
	// CheckpointExtends: the hull's chain still holds, at the checkpointed
	// length, exactly the checkpointed head (records may follow).
	CheckpointExtends = "extends"
	// CheckpointTruncated: the chain is shorter than the checkpoint says.
	CheckpointTruncated = "truncated"
	// CheckpointRewritten: the link at the checkpointed length has another
	// hash (records before it were rewritten), or the serial changed.
	CheckpointRewritten = "rewritten"
	// CheckpointMissing: the hull is no longer in the ledger.
	CheckpointMissing = "missing"
)

// CheckpointHullResult is what became of one checkpointed hull.
type CheckpointHullResult struct {
	// Hull, Serial, Length and Head are the checkpoint's entry.
	CheckpointHull
	// LengthNow is the hull's chain length now (0 when missing).
	LengthNow int64 `json:"length_now"`
	// State is one of the Checkpoint* states.
	State string `json:"state"`
	// Reason says what differs, for any state but extends.
	Reason string `json:"reason,omitempty"`
}

// CheckpointResult is the outcome of checking a checkpoint against the
// ledger.
type CheckpointResult struct {
	// OK: the signature holds, every checkpointed hull extends its
	// checkpointed head, the whole ledger verifies (Chain), and the
	// ledger's checkpoints table holds this checkpoint in an intact chain.
	OK bool `json:"ok"`
	// Seq, Time and Root are the checkpoint's.
	Seq  int64     `json:"seq"`
	Time time.Time `json:"time"`
	Root string    `json:"root"`
	// SignatureOK: the statement is signed by the given key and its
	// fields are what it says. When false nothing else was checked.
	SignatureOK bool `json:"signature_ok"`
	// Reason says why the checkpoint failed, when it did (the first
	// reason met).
	Reason string `json:"reason,omitempty"`
	// Hulls is one entry per checkpointed hull, in the checkpoint's order.
	Hulls []CheckpointHullResult `json:"hulls"`
	// New lists the hulls added since the checkpoint (their heads now).
	New []CheckpointHull `json:"new_hulls"`
	// Chain is the full recomputation of every chain, in the same
	// snapshot.
	Chain *VerifyResult `json:"chain,omitempty"`
	// Recorded: the ledger's checkpoints table holds this checkpoint
	// (same seq, same hash) and the table's own chain holds.
	Recorded bool `json:"recorded"`
	// Register is what became of the register of issued reports; nil for
	// a v1 checkpoint, which does not cover it.
	Register *CheckpointRegisterResult `json:"register,omitempty"`
}

// CheckpointRegisterResult is what became of the checkpointed register of
// issued reports.
type CheckpointRegisterResult struct {
	// Length, Head and the legacy seal are the checkpoint's.
	CheckpointRegister
	// LengthNow is the register's chained length now.
	LengthNow int64 `json:"length_now"`
	// State is CheckpointExtends, CheckpointTruncated or
	// CheckpointRewritten (also for a changed legacy seal, or a register
	// that no longer verifies).
	State string `json:"state"`
	// Reason says what differs, for any state but extends.
	Reason string `json:"reason,omitempty"`
}

// VerifyCheckpoint checks cp against the ledger: the signature by pub
// first, then, at one snapshot, that every checkpointed hull still exists
// and its chain still extends the checkpointed head. The head is checked
// at the checkpointed length only (the link there must have exactly the
// checkpointed hash); that the chain up to it still recomputes is the
// full Verify, run in the same snapshot and reported in Chain. Together
// they find a truncation, a removed hull, and any rewrite before the
// checkpoint, even one with every later hash recomputed. A rewrite of
// records appended after the checkpoint is not within its reach: such a
// hull is reported as extending. Hulls added since are listed in New.
func (l *Ledger) VerifyCheckpoint(ctx context.Context, cp *Checkpoint, pub crypto.PublicKey) (*CheckpointResult, error) {
	res, err := l.VerifyCheckpoints(ctx, []*Checkpoint{cp}, pub)
	if err != nil {
		return nil, err
	}
	return res[0], nil
}

// VerifyCheckpoints checks several checkpoints (a checkpoint log) as
// VerifyCheckpoint does, all at one snapshot and with one full Verify.
func (l *Ledger) VerifyCheckpoints(ctx context.Context, cps []*Checkpoint, pub crypto.PublicKey) ([]*CheckpointResult, error) {
	if _, err := publicKeyBytes(pub); err != nil {
		return nil, &InputError{Err: fmt.Errorf("verify checkpoint: %w", err)}
	}
	out := make([]*CheckpointResult, len(cps))
	signed := false
	for i, cp := range cps {
		r := &CheckpointResult{Seq: cp.Seq, Time: cp.Time, Root: cp.Root, Hulls: []CheckpointHullResult{}, New: []CheckpointHull{}}
		if why := cp.checkStatement(pub); why != "" {
			r.Reason = why
		} else {
			r.SignatureOK = true
			signed = true
		}
		out[i] = r
	}
	if !signed {
		return out, nil
	}
	err := l.Snapshot(ctx, func(s *Ledger) error {
		chain, err := s.Verify(ctx)
		if err != nil {
			return err
		}
		st, err := readCheckpointState(ctx, s.db)
		if err != nil {
			return err
		}
		for i, cp := range cps {
			if !out[i].SignatureOK {
				continue
			}
			if err := st.judge(ctx, s.db, cp, out[i], chain); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// checkpointState is what checkpoints are checked against, read at one
// snapshot: every hull's chain head, the checkpoints table and the
// register of issued reports.
type checkpointState struct {
	heads    []CheckpointHull
	table    map[int64]string
	tableWhy string
	reg      *registerState
}

func readCheckpointState(ctx context.Context, q querier) (*checkpointState, error) {
	st := &checkpointState{}
	var err error
	if st.heads, err = readHeads(ctx, q); err != nil {
		return nil, err
	}
	if st.table, st.tableWhy, err = checkpointTable(ctx, q); err != nil {
		return nil, err
	}
	if st.reg, err = walkRegister(ctx, q); err != nil {
		return nil, err
	}
	return st, nil
}

// judge fills r, the result of the signed checkpoint cp, with what became
// of its hulls (against chain, the verify result of the same snapshot),
// of the register it states, and whether the checkpoints table holds it.
func (st *checkpointState) judge(ctx context.Context, q querier, cp *Checkpoint, r *CheckpointResult, chain *VerifyResult) error {
	if err := checkAgainst(ctx, q, cp, r, st.heads, chain); err != nil {
		return err
	}
	if cp.Register != nil {
		r.Register = checkRegister(cp.Register, st.reg)
		if r.Register.State != CheckpointExtends && r.OK {
			r.OK = false
			r.Reason = r.Register.Reason
		}
	}
	r.Recorded = st.tableWhy == "" && st.table[cp.Seq] == cp.Hash
	if !r.Recorded && r.OK {
		r.OK = false
		r.Reason = "the ledger's checkpoints table does not hold this checkpoint"
		if st.tableWhy != "" {
			r.Reason = "the ledger's checkpoints table is broken: " + st.tableWhy
		}
	}
	return nil
}

// checkAgainst fills r with what became of each of cp's hulls.
func checkAgainst(ctx context.Context, q querier, cp *Checkpoint, r *CheckpointResult, heads []CheckpointHull, chain *VerifyResult) error {
	r.Chain = chain
	current := map[uuid.UUID]CheckpointHull{}
	for _, h := range heads {
		current[h.Hull] = h
	}
	// The stored hash at each checkpointed length, in one query.
	ids := make([]uuid.UUID, 0, len(cp.Hulls))
	seqs := make([]int64, 0, len(cp.Hulls))
	for _, h := range cp.Hulls {
		ids = append(ids, h.Hull)
		seqs = append(seqs, h.Length)
	}
	at := map[uuid.UUID][]byte{}
	rows, err := q.Query(ctx, `SELECT c.hull_id, c.hash FROM audit_chain c
		JOIN unnest($1::uuid[], $2::bigint[]) AS k(hull, seq) ON c.hull_id = k.hull AND c.seq = k.seq`, ids, seqs)
	if err != nil {
		return fmt.Errorf("verify checkpoint: reading the checkpointed links: %w", err)
	}
	for rows.Next() {
		var id uuid.UUID
		var h []byte
		if err := rows.Scan(&id, &h); err != nil {
			rows.Close()
			return fmt.Errorf("verify checkpoint: reading the checkpointed links: %w", err)
		}
		at[id] = h
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return fmt.Errorf("verify checkpoint: reading the checkpointed links: %w", err)
	}
	r.OK = true
	seen := map[uuid.UUID]bool{}
	for _, h := range cp.Hulls {
		seen[h.Hull] = true
		hr := CheckpointHullResult{CheckpointHull: h}
		cur, exists := current[h.Hull]
		hr.LengthNow = cur.Length
		stored, has := at[h.Hull]
		switch {
		case !exists:
			hr.State = CheckpointMissing
			hr.Reason = fmt.Sprintf("hull %s (%s) is no longer in the ledger; the checkpoint holds %d records of its chain", h.Serial, h.Hull, h.Length)
		case cur.Serial != h.Serial:
			hr.State = CheckpointRewritten
			hr.Reason = fmt.Sprintf("hull %s is now recorded under serial %s", h.Serial, cur.Serial)
		case h.Length > 0 && !has:
			hr.State = CheckpointTruncated
			hr.Reason = fmt.Sprintf("hull %s's chain holds no record %d (it has %d records); the checkpoint says %d", h.Serial, h.Length, cur.Length, h.Length)
		case h.Length > 0 && hex.EncodeToString(stored) != h.Head:
			hr.State = CheckpointRewritten
			hr.Reason = fmt.Sprintf("hull %s's record %d has hash %x; the checkpoint says %s: records up to it were rewritten", h.Serial, h.Length, stored, h.Head)
		default:
			hr.State = CheckpointExtends
		}
		if hr.State != CheckpointExtends && r.OK {
			r.OK = false
			r.Reason = hr.Reason
		}
		r.Hulls = append(r.Hulls, hr)
	}
	for _, h := range heads {
		if !seen[h.Hull] {
			r.New = append(r.New, h)
		}
	}
	if !chain.OK && r.OK {
		r.OK = false
		b := chain.FirstBroken
		r.Reason = fmt.Sprintf("the ledger does not verify: hull %s, record %d (%s %s): %s", b.Hull, b.Seq, b.Kind, b.Key, b.Reason)
	}
	return nil
}

// checkRegister compares the checkpointed register with the register as
// walkRegister found it now.
func checkRegister(want *CheckpointRegister, now *registerState) *CheckpointRegisterResult {
	r := &CheckpointRegisterResult{CheckpointRegister: *want, LengthNow: now.length, State: CheckpointExtends}
	switch {
	case now.seal.Count != want.LegacyCount || now.seal.Digest != want.LegacyDigest:
		r.State = CheckpointRewritten
		r.Reason = fmt.Sprintf("the register's legacy seal is now %d entries, digest %s; the checkpoint says %d, %s: the legacy entries or their seal were rewritten", now.seal.Count, now.seal.Digest, want.LegacyCount, want.LegacyDigest)
	case !now.ok && now.length < want.Length:
		// The walk stopped at the first fault, before the checkpointed
		// entry: whatever follows cannot be vouched for.
		r.State = CheckpointRewritten
		r.Reason = fmt.Sprintf("the register of issued reports does not verify before its checkpointed entry %d: %s", want.Length, now.why)
	case want.Length > 0 && now.length < want.Length:
		r.State = CheckpointTruncated
		r.Reason = fmt.Sprintf("the register of issued reports holds %d chained entries; the checkpoint says %d: entries were removed", now.length, want.Length)
	case want.Length > 0 && now.hashes[want.Length] != want.Head:
		r.State = CheckpointRewritten
		r.Reason = fmt.Sprintf("the register's entry %d has hash %s; the checkpoint says %s: entries up to it were rewritten", want.Length, now.hashes[want.Length], want.Head)
	case !now.ok:
		r.State = CheckpointRewritten
		r.Reason = "the register of issued reports does not verify after the checkpointed entry: " + now.why
	}
	return r
}

// checkpointTable walks the ledger's checkpoints table: ids from 1 without
// gaps, each row's prev_hash the hash of the row before (zeros first), its
// hash the SHA-256 of its statement, its signature valid under its key.
// It returns each checkpoint's hex hash by id, or why the table's chain
// does not hold.
func checkpointTable(ctx context.Context, q querier) (map[int64]string, string, error) {
	rows, err := q.Query(ctx, "SELECT id, statement, prev_hash, hash, signature, public_key FROM checkpoints ORDER BY id")
	if err != nil {
		return nil, "", fmt.Errorf("verify checkpoint: reading the checkpoints table: %w", err)
	}
	defer rows.Close()
	out := map[int64]string{}
	prev := make([]byte, sha256.Size)
	var want int64 = 1
	why := ""
	for rows.Next() {
		var id int64
		var stmt string
		var p, h, sig, pub []byte
		if err := rows.Scan(&id, &stmt, &p, &h, &sig, &pub); err != nil {
			return nil, "", fmt.Errorf("verify checkpoint: reading the checkpoints table: %w", err)
		}
		sum := sha256.Sum256([]byte(stmt))
		switch {
		case why != "":
		case id != want:
			why = fmt.Sprintf("checkpoint %d is missing", want)
		case !bytes.Equal(p, prev):
			why = fmt.Sprintf("checkpoint %d does not follow checkpoint %d", id, id-1)
		case !bytes.Equal(h, sum[:]) || !strings.Contains(stmt, "\nprev "+hex.EncodeToString(p)+"\n") || !strings.Contains(stmt, "\nseq "+strconv.FormatInt(id, 10)+"\n"):
			why = fmt.Sprintf("checkpoint %d's stored hash, number or link is not that of its statement", id)
		case !verifyStatement(parsePublicKeyBytes(pub), []byte(stmt), sig):
			why = fmt.Sprintf("checkpoint %d's signature does not verify", id)
		}
		out[id] = hex.EncodeToString(h)
		prev = h
		want = id + 1
	}
	if err := rows.Err(); err != nil {
		return nil, "", fmt.Errorf("verify checkpoint: reading the checkpoints table: %w", err)
	}
	return out, why, nil
}

// The operator signs checkpoints with the key that signs the reports
// (ECDSA P-256, see reports/sign) or with an Ed25519 key.

// publicKeyBytes is a public key as a checkpoint names it: the 32 bytes of
// an Ed25519 key, or the PKIX DER of an ECDSA P-256 key.
func publicKeyBytes(pub crypto.PublicKey) ([]byte, error) {
	switch k := pub.(type) {
	case ed25519.PublicKey:
		if len(k) != ed25519.PublicKeySize {
			return nil, fmt.Errorf("an Ed25519 public key has %d bytes, not %d", len(k), ed25519.PublicKeySize)
		}
		return []byte(k), nil
	case *ecdsa.PublicKey:
		if k.Curve != elliptic.P256() {
			return nil, errors.New("an ECDSA key must be on the P-256 curve")
		}
		return x509.MarshalPKIXPublicKey(k)
	}
	return nil, fmt.Errorf("a %T is not a checkpoint signing key (Ed25519 or ECDSA P-256)", pub)
}

// signStatement signs a checkpoint statement: Ed25519 over the text, or
// ECDSA P-256 (ASN.1) over its SHA-256.
func signStatement(key crypto.Signer, msg []byte) ([]byte, error) {
	switch key.Public().(type) {
	case ed25519.PublicKey:
		return key.Sign(rand.Reader, msg, crypto.Hash(0))
	case *ecdsa.PublicKey:
		d := sha256.Sum256(msg)
		return key.Sign(rand.Reader, d[:], crypto.SHA256)
	}
	return nil, fmt.Errorf("a %T is not a checkpoint signing key", key.Public())
}

// verifyStatement checks a checkpoint statement's signature.
func verifyStatement(pub crypto.PublicKey, msg, sig []byte) bool {
	switch k := pub.(type) {
	case ed25519.PublicKey:
		return len(k) == ed25519.PublicKeySize && len(sig) == ed25519.SignatureSize && ed25519.Verify(k, msg, sig)
	case *ecdsa.PublicKey:
		d := sha256.Sum256(msg)
		return ecdsa.VerifyASN1(k, d[:], sig)
	}
	return false
}

// parsePublicKeyBytes reads a public key as a checkpoint row stores it
// (publicKeyBytes); nil when it is neither form.
func parsePublicKeyBytes(b []byte) crypto.PublicKey {
	if len(b) == ed25519.PublicKeySize {
		return ed25519.PublicKey(b)
	}
	k, err := x509.ParsePKIXPublicKey(b)
	if err != nil {
		return nil
	}
	return k
}

// LatestCheckpoint names the newest checkpoint in the ledger as
// "seq:hash" (hex), "" when there is none: what a report carries so that
// an inspector knows which checkpoint covers it.
func (l *Ledger) LatestCheckpoint(ctx context.Context) (string, error) {
	var id int64
	var h []byte
	err := l.db.QueryRow(ctx, "SELECT id, hash FROM checkpoints ORDER BY id DESC LIMIT 1").Scan(&id, &h)
	if errors.Is(err, pgx.ErrNoRows) {
		return "", nil
	}
	if err != nil {
		return "", fmt.Errorf("latest checkpoint: %w", err)
	}
	return fmt.Sprintf("%d:%s", id, hex.EncodeToString(h)), nil
}
