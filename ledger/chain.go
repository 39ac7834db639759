package ledger

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"slices"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// canon builds the canonical bytes of a ledger record: each field in a
// fixed order, tagged and length-prefixed, so that two different records
// can never encode to the same bytes.
type canon struct{ b []byte }

func newCanon(kind string) *canon {
	c := &canon{b: make([]byte, 0, 256)}
	c.str(kind)
	return c
}

func (c *canon) tag(t byte) { c.b = append(c.b, t) }

// growF64 makes room for n more f64 values (a tag and 8 bytes each), so
// that a record of long arrays is not copied as it grows.
func (c *canon) growF64(n int) { c.b = slices.Grow(c.b, 9*n) }
func (c *canon) str(s string) {
	c.tag('s')
	c.b = binary.AppendUvarint(c.b, uint64(len(s)))
	c.b = append(c.b, s...)
}
func (c *canon) bytes(p []byte) {
	c.tag('b')
	c.b = binary.AppendUvarint(c.b, uint64(len(p)))
	c.b = append(c.b, p...)
}
func (c *canon) i64(v int64) { c.tag('i'); c.b = binary.BigEndian.AppendUint64(c.b, uint64(v)) }
func (c *canon) f64(v float64) {
	c.tag('f')
	c.b = binary.BigEndian.AppendUint64(c.b, math.Float64bits(v))
}
func (c *canon) optF64(v *float64) {
	if v == nil {
		c.tag('n')
		return
	}
	c.f64(*v)
}
func (c *canon) optInt(v *int32) {
	if v == nil {
		c.tag('n')
		return
	}
	c.i64(int64(*v))
}
func (c *canon) boolean(v bool) {
	if v {
		c.tag('T')
	} else {
		c.tag('F')
	}
}
func (c *canon) uuid(u uuid.UUID) { c.tag('u'); c.b = append(c.b, u[:]...) }
func (c *canon) time(t time.Time) {
	c.tag('t')
	c.b = binary.BigEndian.AppendUint64(c.b, uint64(t.UnixMicro()))
}
func (c *canon) strs(ss []string) {
	c.tag('l')
	c.b = binary.AppendUvarint(c.b, uint64(len(ss)))
	for _, s := range ss {
		c.str(s)
	}
}

// chainRec is a record to append to a hull's chain: its canonical bytes,
// or, for a record too large to hold (a long dive's counted cycles), a
// function that writes them.
type chainRec struct {
	kind, key string
	canon     []byte
	write     func(io.Writer) error
}

// hash is the record's chain hash after prev.
func (r chainRec) hash(prev []byte) ([]byte, error) {
	if r.write == nil {
		return chainHash(prev, r.canon), nil
	}
	h := sha256.New()
	h.Write(prev)
	if err := r.write(h); err != nil {
		return nil, fmt.Errorf("audit chain: %s %s: %w", r.kind, r.key, err)
	}
	return h.Sum(nil), nil
}

// lock classes for pg_advisory_xact_lock(class, key).
const (
	lockChain = 1 // one hull's audit chain
	lockDive  = 2 // one hull's dives being judged (logging, voiding, proof tests)
	lockHull  = 3 // creating or revising one hull serial
)

// appendChain appends records to the hull's chain inside tx. It holds the
// hull's chain lock until tx ends, so chains stay linear under concurrency.
func appendChain(ctx context.Context, tx pgx.Tx, hull uuid.UUID, recs []chainRec, now time.Time) ([]byte, error) {
	if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock($1, hashtext($2))", lockChain, hull.String()); err != nil {
		return nil, fmt.Errorf("audit chain: locking hull %s: %w", hull, err)
	}
	var seq int64
	prev := make([]byte, 32)
	err := tx.QueryRow(ctx, "SELECT seq, hash FROM audit_chain WHERE hull_id = $1 ORDER BY seq DESC LIMIT 1", hull).Scan(&seq, &prev)
	if err != nil && err != pgx.ErrNoRows {
		return nil, fmt.Errorf("audit chain: reading head of hull %s: %w", hull, err)
	}
	rows := make([][]any, len(recs))
	for i, r := range recs {
		seq++
		h, err := r.hash(prev)
		if err != nil {
			return nil, err
		}
		rows[i] = []any{[16]byte(hull), seq, r.kind, r.key, prev, h, now}
		prev = h
	}
	_, err = tx.CopyFrom(ctx, pgx.Identifier{"audit_chain"}, []string{"hull_id", "seq", "kind", "record_key", "prev_hash", "hash", "recorded_at"}, pgx.CopyFromRows(rows))
	if err != nil {
		return nil, fmt.Errorf("audit chain: appending %d records for hull %s: %w", len(recs), hull, err)
	}
	return prev, nil
}

func chainHash(prev, canon []byte) []byte {
	h := sha256.New()
	h.Write(prev)
	h.Write(canon)
	return h.Sum(nil)
}

func now() time.Time { return time.Now().UTC().Truncate(time.Microsecond) }
