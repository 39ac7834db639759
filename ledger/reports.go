package ledger

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
)

// The register of issued reports is a chain of its own (migration 007):
// every row issued since carries seq, prev_hash and hash =
// SHA-256(prev_hash ‖ registerCanon(row)); the rows issued before are
// legacy rows (no hash), protected only as a set by the legacy seal the
// migration computed. Checkpoints (v2) state the register's length and
// head and the legacy seal.

// lockRegister is the pg_advisory_xact_lock class that keeps the
// register's chain linear (key 0).
const lockRegister = 41

// LegacyReportNote is IssuedReport.Note for a row issued before the
// register was chained: report verify must print it beside its verdict.
const LegacyReportNote = "issued before the register of issued reports was chained: its entry is not protected by the register's chain (only the register's legacy seal, which covers all such entries together, vouches for it); re-issue the report to have it protected"

// ErrRegisterBroken is returned (wrapped, with the reason) by
// IssuedReportOf and Checkpoint when the register of issued reports does
// not verify: no entry of it can then be trusted.
var ErrRegisterBroken = errors.New("the register of issued reports does not verify")

// IssuedReport is an entry of the register of issued reports.
type IssuedReport struct {
	FileSHA256  []byte
	Kind        string
	Subject     string
	Fingerprint string
	GeneratedAt time.Time
	Pages       int
	// Seq is the entry's place in the register's chain (from 1); 0 for a
	// legacy entry. Set by IssuedReportOf; ignored by RegisterReport.
	Seq int64
	// Chained: the entry is on the register's chain, which verified when
	// it was read. False for a legacy entry (issued before the register
	// was chained). Set by IssuedReportOf.
	Chained bool
	// Note says what the entry's protection is when it is not chained
	// (LegacyReportNote); "" for a chained entry.
	Note string
}

// registerCanon is the canonical bytes of a chained register row.
func registerCanon(r IssuedReport, recordedAt time.Time, seq int64) []byte {
	c := newCanon("issued_report")
	c.bytes(r.FileSHA256)
	c.str(r.Kind)
	c.str(r.Subject)
	c.str(r.Fingerprint)
	c.time(r.GeneratedAt)
	c.i64(int64(r.Pages))
	c.time(recordedAt)
	c.i64(seq)
	return c.b
}

// RegisterReport records an issued report (idempotent for the same file),
// appending it to the register's chain under the register's lock.
func (l *Ledger) RegisterReport(ctx context.Context, r IssuedReport) error {
	if err := l.writable("RegisterReport"); err != nil {
		return err
	}
	r.GeneratedAt = r.GeneratedAt.UTC().Truncate(time.Microsecond)
	err := pgx.BeginFunc(ctx, l.pool, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock($1, 0)", lockRegister); err != nil {
			return fmt.Errorf("locking the register: %w", err)
		}
		var seq int64
		prev := make([]byte, sha256.Size)
		err := tx.QueryRow(ctx, "SELECT seq, hash FROM issued_reports WHERE seq IS NOT NULL ORDER BY seq DESC LIMIT 1").Scan(&seq, &prev)
		if err != nil && !errors.Is(err, pgx.ErrNoRows) {
			return fmt.Errorf("reading the register's head: %w", err)
		}
		seq++
		at := now()
		h := chainHash(prev, registerCanon(r, at, seq))
		_, err = tx.Exec(ctx, `INSERT INTO issued_reports (file_sha256, kind, subject, fingerprint, generated_at, pages, recorded_at, seq, prev_hash, hash)
			VALUES ($1,$2,$3,$4,$5,$6,$7,$8,$9,$10) ON CONFLICT (file_sha256) DO NOTHING`,
			r.FileSHA256, r.Kind, r.Subject, r.Fingerprint, r.GeneratedAt, r.Pages, at, seq, prev, h)
		return err
	})
	if err != nil {
		return fmt.Errorf("registering the report: %w", err)
	}
	return nil
}

// IssuedReportOf looks a file up in the register by its SHA-256; nil when
// it was not issued by this ledger. An entry is returned only when the
// whole register verifies (VerifyRegister); otherwise the error wraps
// ErrRegisterBroken and says why — a register with a row inserted behind
// its chain, or rewritten, vouches for nothing. A legacy entry comes back
// with Chained false and Note set.
func (l *Ledger) IssuedReportOf(ctx context.Context, sha []byte) (*IssuedReport, error) {
	var out *IssuedReport
	err := l.Snapshot(ctx, func(s *Ledger) error {
		r := &IssuedReport{FileSHA256: sha}
		var seq *int64
		err := s.db.QueryRow(ctx, "SELECT kind, subject, fingerprint, generated_at, pages, seq FROM issued_reports WHERE file_sha256 = $1", sha).
			Scan(&r.Kind, &r.Subject, &r.Fingerprint, &r.GeneratedAt, &r.Pages, &seq)
		if errors.Is(err, pgx.ErrNoRows) {
			return nil
		}
		if err != nil {
			return fmt.Errorf("reading the register: %w", err)
		}
		ok, why, _, _, err := s.VerifyRegister(ctx)
		if err != nil {
			return err
		}
		if !ok {
			return fmt.Errorf("%w: %s; the entry for this file cannot be trusted", ErrRegisterBroken, why)
		}
		if seq != nil {
			r.Seq, r.Chained = *seq, true
		} else {
			r.Note = LegacyReportNote
		}
		out = r
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// RegisterSeal is the legacy seal: the number of legacy rows and the hex
// digest over them (migration 007).
type RegisterSeal struct {
	Count  int64
	Digest string
}

// registerState is the register as VerifyRegister found it.
type registerState struct {
	ok     bool
	why    string
	head   string
	length int64
	seal   RegisterSeal // as the migration recorded it
	hashes map[int64]string
}

// VerifyRegister walks the register of issued reports: the chained rows
// in seq order (seq 1, 2, … without gaps, each prev_hash the hash of the
// row before, 32 zero bytes first, each hash recomputed), and the legacy
// rows (no hash) against the legacy seal. It returns whether it holds,
// why not (the first fault met), and the chain's head (hex; 64 zeros when
// empty) and length. A row inserted behind the chain — without a hash,
// with a seq out of line, or with a hash that does not recompute — is a
// fault. A row appended with a correctly recomputed hash after the
// newest checkpoint is not: only a checkpoint or a signature can show it.
func (l *Ledger) VerifyRegister(ctx context.Context) (ok bool, why string, head string, length int64, err error) {
	var st *registerState
	err = l.Snapshot(ctx, func(s *Ledger) error {
		var e error
		st, e = walkRegister(ctx, s.db)
		return e
	})
	if err != nil {
		return false, "", "", 0, err
	}
	return st.ok, st.why, st.head, st.length, nil
}

// walkRegister is VerifyRegister on q (one snapshot).
func walkRegister(ctx context.Context, q querier) (*registerState, error) {
	st := &registerState{head: hex.EncodeToString(make([]byte, sha256.Size)), hashes: map[int64]string{}}
	var has bool
	if err := q.QueryRow(ctx, "SELECT to_regprocedure('issued_reports_legacy_seal()') IS NOT NULL").Scan(&has); err != nil {
		return nil, fmt.Errorf("verify register: %w", err)
	}
	if !has {
		st.why = "the register's legacy seal (issued_reports_legacy_seal) is missing"
		return st, nil
	}
	var sealDigest []byte
	if err := q.QueryRow(ctx, "SELECT legacy_count, legacy_digest FROM issued_reports_legacy_seal()").Scan(&st.seal.Count, &sealDigest); err != nil {
		return nil, fmt.Errorf("verify register: reading the legacy seal: %w", err)
	}
	st.seal.Digest = hex.EncodeToString(sealDigest)
	rows, err := q.Query(ctx, `SELECT file_sha256, kind, subject, fingerprint, generated_at, pages, recorded_at, seq, prev_hash, hash
		FROM issued_reports ORDER BY seq NULLS FIRST, file_sha256`)
	if err != nil {
		return nil, fmt.Errorf("verify register: %w", err)
	}
	defer rows.Close()
	legacy := sha256.New()
	var legacyN int64
	prev := make([]byte, sha256.Size)
	for rows.Next() {
		var r IssuedReport
		var at time.Time
		var seq *int64
		var p, h []byte
		if err := rows.Scan(&r.FileSHA256, &r.Kind, &r.Subject, &r.Fingerprint, &r.GeneratedAt, &r.Pages, &at, &seq, &p, &h); err != nil {
			return nil, fmt.Errorf("verify register: %w", err)
		}
		if seq == nil {
			legacyN++
			d := legacyRowDigest(r, at)
			legacy.Write(d[:])
			continue
		}
		if st.why != "" {
			continue
		}
		want := st.length + 1
		switch {
		case *seq != want:
			st.why = fmt.Sprintf("entry %d of the register is missing (the next is numbered %d)", want, *seq)
		case !bytes.Equal(p, prev):
			st.why = fmt.Sprintf("entry %d of the register (file %x) does not follow entry %d", *seq, r.FileSHA256, want-1)
		case !bytes.Equal(h, chainHash(p, registerCanon(r, at, *seq))):
			st.why = fmt.Sprintf("entry %d of the register (file %x) is not what its hash says: it was rewritten", *seq, r.FileSHA256)
		default:
			st.length, prev = *seq, h
			st.head = hex.EncodeToString(h)
			st.hashes[*seq] = st.head
		}
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("verify register: %w", err)
	}
	if st.why == "" {
		if d := hex.EncodeToString(legacy.Sum(nil)); legacyN != st.seal.Count || d != st.seal.Digest {
			st.why = fmt.Sprintf("the register's entries without a chain hash (%d now) do not match the legacy seal (%d entries issued before the register was chained): an entry was inserted behind the chain, or a legacy entry rewritten or removed", legacyN, st.seal.Count)
		}
	}
	st.ok = st.why == ""
	return st, nil
}

// legacyRowDigest is the SHA-256 of a legacy row as migration 007's seal
// encodes it.
func legacyRowDigest(r IssuedReport, recordedAt time.Time) [sha256.Size]byte {
	var b []byte
	b = append(b, r.FileSHA256...)
	for _, s := range []string{r.Kind, r.Subject, r.Fingerprint} {
		b = binary.BigEndian.AppendUint32(b, uint32(len(s)))
		b = append(b, s...)
	}
	b = binary.BigEndian.AppendUint64(b, uint64(r.GeneratedAt.UnixMicro()))
	b = binary.BigEndian.AppendUint32(b, uint32(int32(r.Pages)))
	b = binary.BigEndian.AppendUint64(b, uint64(recordedAt.UnixMicro()))
	return sha256.Sum256(b)
}
