package logfile

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"hash"
	"math"
	"sort"

	"hulltally/ledger/blocks"
)

// Fingerprint is a SHA-256 over a file's samples in a normal form, so that
// the same samples under a second file are recognised whatever the file's
// comments, blank lines, line ends, byte-order mark, spacing, column order
// or the way a number is written ("1.50", "1.5", "1.5e0" and "+1.5" are
// one value).
//
// The normal form, version 1:
//
//	"hulltally samples fingerprint v1\n"
//	uvarint column count, then each column name as uvarint length and
//	bytes: "time" first (for a time or a t_s column alike), then the other
//	columns by name in byte order
//	per row: the time in nanoseconds since 1970 (8 bytes, big-endian),
//	then each other column in that name order as the IEEE-754 bits of its
//	float64 value (8 bytes, big-endian; -0 written as 0)
//
// A value's canonical form is its float64, the number every computation of
// the ledger uses: it is the same whether the block kept the value as a
// decimal (mantissa and scale) or as binary, in memory or decoded from
// storage, and the same for every decimal text of one number. Two texts
// that differ only beyond double precision (16 or more significant digits)
// give the same fingerprint; they give the same ledger results too.
// Differently named columns (depth_m against pressure_bar) never match.
type Fingerprint struct {
	h     hash.Hash
	time  int   // file column of the time
	order []int // file columns other than the time, by name
	buf   []byte
	rows  int64
}

// NewFingerprint starts a fingerprint of a file with header h.
func NewFingerprint(h Header) *Fingerprint {
	f := &Fingerprint{h: sha256.New(), time: h.Time}
	for i := range h.Columns {
		if i != h.Time {
			f.order = append(f.order, i)
		}
	}
	sort.Slice(f.order, func(a, b int) bool { return h.Columns[f.order[a]].Name < h.Columns[f.order[b]].Name })
	buf := []byte("hulltally samples fingerprint v1\n")
	buf = binary.AppendUvarint(buf, uint64(len(h.Columns)))
	buf = appendName(buf, "time")
	for _, i := range f.order {
		buf = appendName(buf, h.Columns[i].Name)
	}
	f.h.Write(buf)
	return f
}

func appendName(dst []byte, name string) []byte {
	dst = binary.AppendUvarint(dst, uint64(len(name)))
	return append(dst, name...)
}

func canonBits(v float64) uint64 {
	if v == 0 {
		return 0 // -0 and 0 are one reading
	}
	return math.Float64bits(v)
}

// AddBlock adds the rows of a block filled by a SampleReader of this file,
// in order.
func (f *Fingerprint) AddBlock(b *blocks.Block) {
	f.buf = f.buf[:0]
	for r, t := range b.TimeNS {
		f.buf = binary.BigEndian.AppendUint64(f.buf, uint64(t))
		for _, c := range f.order {
			f.buf = binary.BigEndian.AppendUint64(f.buf, canonBits(b.Cols[c].Value[r]))
		}
	}
	f.h.Write(f.buf)
	f.rows += int64(b.Len())
}

// AddDecoded adds the rows of a stored block of this file (decoded), in
// order; it gives the same fingerprint as AddBlock on the block that was
// stored. A block whose columns do not fit the header is refused and adds
// nothing.
func (f *Fingerprint) AddDecoded(d *blocks.Decoded) error {
	for _, c := range f.order {
		if c >= len(d.Values) || len(d.Values[c]) != len(d.TimeNS) {
			return fmt.Errorf("fingerprint: stored block has %d columns, column %d missing or short: %w", len(d.Values), c+1, blocks.ErrCorrupt)
		}
	}
	f.buf = f.buf[:0]
	for r, t := range d.TimeNS {
		f.buf = binary.BigEndian.AppendUint64(f.buf, uint64(t))
		for _, c := range f.order {
			f.buf = binary.BigEndian.AppendUint64(f.buf, canonBits(d.Values[c][r]))
		}
	}
	f.h.Write(f.buf)
	f.rows += int64(len(d.TimeNS))
	return nil
}

// Rows is the number of rows added.
func (f *Fingerprint) Rows() int64 { return f.rows }

// Sum is the SHA-256 of the rows added so far (32 bytes). More rows may
// be added after it.
func (f *Fingerprint) Sum() []byte { return f.h.Sum(nil) }
