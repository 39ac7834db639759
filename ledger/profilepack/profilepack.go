// Package profilepack packs a dive profile's series of numbers for storage
// and unpacks them: every value's eight big-endian bytes, byte-shuffled
// (the first byte of every value, then the second, …) and compressed as
// one LZ4 block.
//
// A profile's values are float64s that change slowly from point to point,
// so their sign, exponent and high mantissa bytes repeat: shuffled, those
// bytes sit together and compress well, where the same values side by
// side do not. verify reads every stored profile of the fleet; packed, a
// profile is read as about a quarter of the bytes PostgreSQL would send
// for the same values as a float8[] (see DEVELOPERS.md, "Verify").
//
// The packed form is:
//
//	byte 0      format (1)
//	bytes 1–4   points n, big-endian
//	bytes 5–8   further values m (the strain, gauge after gauge), big-endian
//	bytes 9–    the LZ4 block of the 8·(2n+m) shuffled bytes of the values:
//	            the n times, the n pressures, the m further values
//
// No values, no block. Unpack refuses anything else: another format, a
// block that does not decompress to exactly 8·(2n+m) bytes, counts that no
// block of its length could hold (so a changed header cannot make it
// allocate more than a bounded multiple of the bytes it was given), counts
// Pack would not write. Header reads the counts alone, so that a reader
// can check them against what it expects before anything is allocated.
package profilepack

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"slices"

	"github.com/pierrec/lz4/v4"
)

// Format is the format byte Pack writes.
const Format = 1

// headerLen is the bytes before the LZ4 block.
const headerLen = 9

// maxCount bounds the points and the further values of a packed profile.
const maxCount = math.MaxUint32 / 8

// maxRatio bounds the decompressed bytes per byte of an LZ4 block. In the
// block format (lz4_Block_format.md of the LZ4 project, from memory) a
// sequence is a token byte, its literals (each one byte in, one out), a
// two-byte offset and a match of 4 bytes or more whose length beyond 19
// takes one more byte per 255; so a sequence of k bytes gives at most
// about 255·k bytes, and the last sequence is literals only. No block
// decompresses to 255 times its length: an all-zero profile of 240 000
// values packs at 254 to 1 (TestRoundTrip), and a review's hand-made
// block at 254.99 to 1; 256 leaves room.
const maxRatio = 256

// ErrNotPacked is a stored value Unpack cannot read as a packed profile.
var ErrNotPacked = errors.New("not a packed profile")

// Pack appends the packed form of the times, pressures (as many as times)
// and further values to dst. c is reused scratch (nil: a new one); it is
// not safe for concurrent use.
func Pack(dst []byte, c *Packer, times, press, more []float64) ([]byte, error) {
	if len(press) != len(times) {
		return dst, fmt.Errorf("profilepack: %d times and %d pressures", len(times), len(press))
	}
	if uint64(len(times)) > maxCount || uint64(len(more)) > maxCount {
		return dst, fmt.Errorf("profilepack: %d points and %d further values are too many", len(times), len(more))
	}
	if c == nil {
		c = &Packer{}
	}
	v := 2*len(times) + len(more)
	start := len(dst)
	dst = append(dst, Format)
	dst = binary.BigEndian.AppendUint32(dst, uint32(len(times)))
	dst = binary.BigEndian.AppendUint32(dst, uint32(len(more)))
	if v == 0 {
		return dst, nil
	}
	c.raw = shuffle(c.raw[:0], v, times, press, more)
	o := len(dst)
	dst = slices.Grow(dst, lz4.CompressBlockBound(len(c.raw)))
	dst = dst[:cap(dst)]
	k, err := c.lz.CompressBlock(c.raw, dst[o:])
	if err != nil {
		return dst[:start], fmt.Errorf("profilepack: %w", err)
	}
	if k == 0 {
		// The bound always holds the block; a 0 would store nothing.
		return dst[:start], errors.New("profilepack: the LZ4 block came out empty")
	}
	return dst[:o+k], nil
}

// Packer is Pack's reusable scratch.
type Packer struct {
	lz  lz4.Compressor
	raw []byte
}

// shuffle appends the v values' shuffled bytes to dst: byte k of value i
// (big-endian) at k·v + i.
func shuffle(dst []byte, v int, series ...[]float64) []byte {
	o := len(dst)
	dst = append(dst, make([]byte, 8*v)...)
	out := dst[o:]
	i := 0
	for _, s := range series {
		for _, x := range s {
			b := math.Float64bits(x)
			for k := 0; k < 8; k++ {
				out[k*v+i] = byte(b >> (56 - 8*k))
			}
			i++
		}
	}
	return dst
}

// Unpacked is a packed profile's values, unshuffled: N points (N times,
// then N pressures) and M further values, each as its eight big-endian
// bytes in Values, in that order.
type Unpacked struct {
	N, M   int
	Values []byte
}

// Float appends the values from..to (indexes into Values' order) to dst.
func (u Unpacked) Float(dst []float64, from, to int) []float64 {
	return AppendFloats(dst, u.Values[8*from:8*to])
}

// AppendFloats appends the float64s held as eight big-endian bytes each
// in be (Unpacked.Values' form) to dst.
func AppendFloats(dst []float64, be []byte) []float64 {
	dst = slices.Grow(dst, len(be)/8)
	for i := 0; i+8 <= len(be); i += 8 {
		dst = append(dst, math.Float64frombits(binary.BigEndian.Uint64(be[i:])))
	}
	return dst
}

// Header returns a packed profile's counts, points n and further values
// m, from its header alone; a header Pack would not write is ErrNotPacked.
func Header(src []byte) (n, m int, err error) {
	if len(src) < headerLen {
		return 0, 0, fmt.Errorf("%w: %d bytes of header", ErrNotPacked, len(src))
	}
	if src[0] != Format {
		return 0, 0, fmt.Errorf("%w: format %d", ErrNotPacked, src[0])
	}
	n64, m64 := uint64(binary.BigEndian.Uint32(src[1:])), uint64(binary.BigEndian.Uint32(src[5:]))
	if n64 > maxCount || m64 > maxCount {
		return 0, 0, fmt.Errorf("%w: %d points and %d further values, more than it ever holds", ErrNotPacked, n64, m64)
	}
	return int(n64), int(m64), nil
}

// Unpack reads a packed profile, unshuffling its values into scratch
// (grown as needed; the result's Values lie in it, valid until it is
// reused) and using planes as the decompression buffer (likewise). A
// value it cannot read as one is ErrNotPacked.
func Unpack(src, scratch, planes []byte) (u Unpacked, scratchOut, planesOut []byte, err error) {
	nn, mm, err := Header(src)
	if err != nil {
		return u, scratch, planes, err
	}
	n, m := uint64(nn), uint64(mm)
	block := src[headerLen:]
	raw := 8 * (2*n + m) // < 2^38: no overflow
	if raw == 0 {
		if len(block) != 0 {
			return u, scratch, planes, fmt.Errorf("%w: %d bytes after no values", ErrNotPacked, len(block))
		}
		return Unpacked{Values: scratch[:0]}, scratch, planes, nil
	}
	if raw > maxRatio*uint64(len(block)) {
		return u, scratch, planes, fmt.Errorf("%w: %d values cannot come out of %d bytes", ErrNotPacked, raw/8, len(block))
	}
	planes = grow(planes, int(raw))
	k, err := lz4.UncompressBlock(block, planes)
	if err != nil {
		return u, scratch, planes, fmt.Errorf("%w: %v", ErrNotPacked, err)
	}
	if uint64(k) != raw {
		return u, scratch, planes, fmt.Errorf("%w: %d bytes decompressed, %d expected", ErrNotPacked, k, raw)
	}
	scratch = grow(scratch, int(raw))
	unshuffle(scratch, planes, int(raw/8))
	return Unpacked{N: int(n), M: int(m), Values: scratch}, scratch, planes, nil
}

// grow returns b with length n, reusing its memory where it suffices.
func grow(b []byte, n int) []byte {
	if cap(b) < n {
		return make([]byte, n)
	}
	return b[:n]
}

// unshuffle writes the v values whose shuffled bytes are in planes to
// out, eight big-endian bytes each. Hand-written for a measured reason:
// byte by byte it took 89 % of Unpack's time (BenchmarkUnpack, pprof);
// eight values at a time, as an 8 × 8 byte transpose in eight words (three
// rounds swap blocks of 1, 2 and 4 bytes between words 1, 2 and 4 apart),
// it is several times faster.
func unshuffle(out, planes []byte, v int) {
	const m1, m2, m4 = 0x00FF00FF00FF00FF, 0x0000FFFF0000FFFF, 0x00000000FFFFFFFF
	p0, p1, p2, p3 := planes[0:v], planes[v:2*v], planes[2*v:3*v], planes[3*v:4*v]
	p4, p5, p6, p7 := planes[4*v:5*v], planes[5*v:6*v], planes[6*v:7*v], planes[7*v:8*v]
	i := 0
	for ; i+8 <= v; i += 8 {
		// rk holds byte k (plane k) of values i..i+7, value i+j in its byte j.
		r0, r1 := binary.LittleEndian.Uint64(p0[i:]), binary.LittleEndian.Uint64(p1[i:])
		r2, r3 := binary.LittleEndian.Uint64(p2[i:]), binary.LittleEndian.Uint64(p3[i:])
		r4, r5 := binary.LittleEndian.Uint64(p4[i:]), binary.LittleEndian.Uint64(p5[i:])
		r6, r7 := binary.LittleEndian.Uint64(p6[i:]), binary.LittleEndian.Uint64(p7[i:])
		var t uint64
		t = ((r0 >> 8) ^ r1) & m1
		r0, r1 = r0^t<<8, r1^t
		t = ((r2 >> 8) ^ r3) & m1
		r2, r3 = r2^t<<8, r3^t
		t = ((r4 >> 8) ^ r5) & m1
		r4, r5 = r4^t<<8, r5^t
		t = ((r6 >> 8) ^ r7) & m1
		r6, r7 = r6^t<<8, r7^t
		t = ((r0 >> 16) ^ r2) & m2
		r0, r2 = r0^t<<16, r2^t
		t = ((r1 >> 16) ^ r3) & m2
		r1, r3 = r1^t<<16, r3^t
		t = ((r4 >> 16) ^ r6) & m2
		r4, r6 = r4^t<<16, r6^t
		t = ((r5 >> 16) ^ r7) & m2
		r5, r7 = r5^t<<16, r7^t
		t = ((r0 >> 32) ^ r4) & m4
		r0, r4 = r0^t<<32, r4^t
		t = ((r1 >> 32) ^ r5) & m4
		r1, r5 = r1^t<<32, r5^t
		t = ((r2 >> 32) ^ r6) & m4
		r2, r6 = r2^t<<32, r6^t
		t = ((r3 >> 32) ^ r7) & m4
		r3, r7 = r3^t<<32, r7^t
		// Now rj holds value i+j, its byte k (big-endian order) in byte k.
		d := out[8*i : 8*i+64]
		binary.LittleEndian.PutUint64(d[0:], r0)
		binary.LittleEndian.PutUint64(d[8:], r1)
		binary.LittleEndian.PutUint64(d[16:], r2)
		binary.LittleEndian.PutUint64(d[24:], r3)
		binary.LittleEndian.PutUint64(d[32:], r4)
		binary.LittleEndian.PutUint64(d[40:], r5)
		binary.LittleEndian.PutUint64(d[48:], r6)
		binary.LittleEndian.PutUint64(d[56:], r7)
	}
	for ; i < v; i++ {
		d := out[8*i : 8*i+8]
		d[0], d[1], d[2], d[3] = p0[i], p1[i], p2[i], p3[i]
		d[4], d[5], d[6], d[7] = p4[i], p5[i], p6[i], p7[i]
	}
}
